"""The main window: canvas, tools, street panel, key, files, autosave.

The window holds a :class:`app.document.NetworkDocument` (the data) and the
widgets that show and edit it.  Planning (the worker, the circuit overlay,
the step list and summary) is installed by :meth:`MainWindow.install_planning`
from :mod:`app.plan`.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import (
    QAction,
    QActionGroup,
    QCloseEvent,
    QDragEnterEvent,
    QDropEvent,
    QKeySequence,
)
from PySide6.QtWidgets import (
    QApplication,
    QComboBox,
    QDockWidget,
    QFileDialog,
    QLabel,
    QMainWindow,
    QMessageBox,
    QToolBar,
)

from app.canvas.scene import StreetScene
from app.canvas.style import LOOKS
from app.canvas.tools import TOOLS, ServiceBrushTool, Tool
from app.canvas.view import CanvasView
from app.document import NetworkDocument
from app.files import (
    ALL_FILES,
    BACKGROUND_BYTES,
    GEOJSON_FILTER,
    PLAN_FILTER,
    PROJECT_FILTER,
    PROJECT_SUFFIX,
    ReadCancelled,
    RecentFiles,
    import_filters,
    open_network,
    read_off_thread,
)
from app.panels.legend import LegendPanel
from app.panels.preferences import Preferences, PreferencesDialog
from app.panels.properties import PropertiesPanel
from app.recovery import Autosaver, find_recoverable
from core import __version__
from core import edit as ed
from core.errors import NetworkError, RoundsmanError
from core.files import write_network
from core.model import Network, OneWay, Service

SAFETY_NOTE = (
    "Plans are advisory. Drivers obey traffic law and signs, check height, weight and width "
    "limits, avoid reversing and U-turns, and take care spreading or sweeping near people on "
    "foot and on bicycles; local codes, the employer's safe systems of work and licensed "
    "practice come first."
)


class MainWindow(QMainWindow):
    """Roundsman's main window.

    Parameters
    ----------
    settings
        Where layout, preferences and recent files are kept (tests pass a
        temporary file); default: the user's Roundsman settings.
    autosave_dir
        The autosave folder; default: the per-user location.
    network
        A network to show at start (not yet saved anywhere).
    """

    def __init__(
        self,
        settings: QSettings | None = None,
        autosave_dir: str | Path | None = None,
        network: Network | None = None,
    ) -> None:
        super().__init__()
        self.settings = settings if settings is not None else QSettings()
        self.background_bytes = BACKGROUND_BYTES
        """Files this large or larger are read off the window's thread."""
        self.recent = RecentFiles(self.settings)
        self.document = NetworkDocument(parent=self)
        self.scene = StreetScene(self.document, self)
        self.view = CanvasView(self.scene, self)
        self.preferences = Preferences.load(self.settings)
        self.view.snap_px = float(self.preferences.snap_px)
        self.setCentralWidget(self.view)
        self.setAcceptDrops(True)
        self.resize(1200, 800)
        self.menus: dict[str, object] = {}

        self._build_status_bar()
        self._build_tools()
        self._build_docks()
        self._build_actions()
        self._build_menus()

        self.autosaver = Autosaver(self.document, autosave_dir, self.preferences.autosave_s, self)
        self.autosaver.failed.connect(self._show_message)

        # bound methods, not lambdas: Qt drops them with the window
        self.document.pathChanged.connect(self._update_title)
        self.document.dirtyChanged.connect(self._update_title)
        self.document.undo_stack.indexChanged.connect(self._update_title)
        self.document.planChanged.connect(self._plan_changed)
        self.view.cursorMoved.connect(self._show_cursor)
        self.view.message.connect(self._show_message)

        self.install_planning()
        from app.compare import install_comparison
        from app.fleet import install_fleet
        from app.importing import install_importing

        self.comparison = install_comparison(self)
        self.fleet = install_fleet(self)
        self.importing = install_importing(self)
        self._restore_layout()
        if network is not None:
            self.document.load(network, None, dirty=True)
        self._update_title()
        self.tool_actions["pick"].trigger()
        QTimer.singleShot(0, self.view.fit_to_district)

    # -- building ---------------------------------------------------------------------
    def _build_status_bar(self) -> None:
        self.cursor_label = QLabel("")
        self.cursor_label.setMinimumWidth(220)
        self.statusBar().addPermanentWidget(self.cursor_label)
        self.statusBar().showMessage(f"Roundsman {__version__}", 4000)

    def _build_tools(self) -> None:
        self.tools: dict[str, Tool] = {cls.name: cls(self.view) for cls in TOOLS}
        self.tool_bar = QToolBar("Tools", self)
        self.tool_bar.setObjectName("tools")
        self.addToolBar(Qt.ToolBarArea.TopToolBarArea, self.tool_bar)
        group = QActionGroup(self)
        group.setExclusive(True)
        self.tool_actions: dict[str, QAction] = {}
        for name, tool in self.tools.items():
            act = QAction(tool.label, self)
            act.setCheckable(True)
            act.setShortcut(QKeySequence(tool.key))
            act.setToolTip(f"{tool.hint} ({tool.key})")
            act.triggered.connect(lambda _checked=False, t=tool: self.view.set_tool(t))
            group.addAction(act)
            self.tool_bar.addAction(act)
            self.tool_actions[name] = act
        self.brush_choice = QComboBox()
        for svc, look in LOOKS.items():
            self.brush_choice.addItem(look.label, svc)
        self.brush_choice.setCurrentIndex(self.brush_choice.findData(Service.EITHER))
        self.brush_choice.setToolTip("The requirement the Service brush gives")
        self.brush_choice.currentIndexChanged.connect(self._brush_changed)
        self.tool_bar.addWidget(self.brush_choice)
        # An empty toolbar for the planning part (install_planning fills it).
        self.plan_toolbar = QToolBar("Planning", self)
        self.plan_toolbar.setObjectName("planning")
        self.addToolBar(Qt.ToolBarArea.TopToolBarArea, self.plan_toolbar)

    def _brush_changed(self, index: int) -> None:
        brush = self.tools["service"]
        assert isinstance(brush, ServiceBrushTool)
        brush.service = Service(self.brush_choice.itemData(index))

    def _build_docks(self) -> None:
        self.properties = PropertiesPanel(self.document, self)
        self.properties_dock = QDockWidget("Street", self)
        self.properties_dock.setObjectName("street-panel")
        self.properties_dock.setWidget(self.properties)
        self.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.properties_dock)
        self.legend = LegendPanel(self)
        self.legend_dock = QDockWidget("Key", self)
        self.legend_dock.setObjectName("key-panel")
        self.legend_dock.setWidget(self.legend)
        self.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.legend_dock)

    def _action(self, text: str, slot, shortcut=None, tip: str = "") -> QAction:
        act = QAction(text, self)
        if shortcut is not None:
            act.setShortcut(QKeySequence(shortcut))
        if tip:
            act.setStatusTip(tip)
        act.triggered.connect(lambda _checked=False: slot())
        return act

    def _build_actions(self) -> None:
        K = QKeySequence.StandardKey
        self.act_new = self._action("&New", self.new_file, K.New)
        self.act_open = self._action("&Open…", self.open_dialog, K.Open)
        self.act_save = self._action("&Save", self.save, K.Save)
        self.act_save_as = self._action("Save &As…", self.save_as, K.SaveAs)
        self.act_import = self._action("&Import…", self.import_dialog, "Ctrl+I")
        self.act_export_network = self._action("Export &network…", self.export_network_dialog)
        self.act_export_plan = self._action("Export &plan…", self.export_plan_dialog)
        self.act_export_plan.setEnabled(False)
        self.act_print_card = self._action(
            "Print route &card…", self.print_route_card, K.Print, "Print the plan as a route card"
        )
        self.act_print_card.setEnabled(False)
        self.act_quit = self._action("&Quit", self.close, K.Quit)
        stack = self.document.undo_stack
        self.act_undo = stack.createUndoAction(self, "&Undo")
        self.act_undo.setShortcut(QKeySequence(K.Undo))
        self.act_redo = stack.createRedoAction(self, "&Redo")
        self.act_redo.setShortcuts([QKeySequence(K.Redo), QKeySequence("Ctrl+Y")])
        self.act_delete = self._action("&Delete picked", self.delete_selection, K.Delete)
        self.act_select_all = self._action("Pick &all streets", self.select_all, K.SelectAll)
        self.act_oneway = self._action("Make &one-way (as drawn)", self.make_oneway)
        self.act_reverse = self._action("&Turn one-way round", self.reverse_selection, "Ctrl+R")
        self.act_twoway = self._action("Make t&wo-way", self.make_twoway)
        self.act_fit = self._action("&Fit district", self.view.fit_to_district, "Ctrl+0")
        self.act_zoom_in = self._action("Zoom &in", lambda: self.view.zoom_by(1.25), K.ZoomIn)
        self.act_zoom_out = self._action("Zoom &out", lambda: self.view.zoom_by(0.8), K.ZoomOut)
        self.act_preferences = self._action("Pr&eferences…", self.edit_preferences)
        self.act_safety = self._action("&Safety note", self.show_safety)
        self.act_about = self._action("&About Roundsman", self.show_about)

    def _build_menus(self) -> None:
        bar = self.menuBar()
        file_menu = bar.addMenu("&File")
        file_menu.addActions([self.act_new, self.act_open])
        self.recent_menu = file_menu.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent_menu)
        file_menu.addSeparator()
        file_menu.addActions([self.act_save, self.act_save_as])
        file_menu.addSeparator()
        file_menu.addActions([self.act_import, self.act_export_network, self.act_export_plan])
        file_menu.addSeparator()
        file_menu.addAction(self.act_print_card)
        file_menu.addSeparator()
        file_menu.addAction(self.act_quit)
        edit_menu = bar.addMenu("&Edit")
        edit_menu.addActions([self.act_undo, self.act_redo])
        edit_menu.addSeparator()
        edit_menu.addActions([self.act_select_all, self.act_delete])
        edit_menu.addSeparator()
        edit_menu.addActions([self.act_oneway, self.act_reverse, self.act_twoway])
        service_menu = edit_menu.addMenu("Set &service")
        for svc, look in LOOKS.items():
            service_menu.addAction(
                self._action(look.label, lambda s=svc: self.set_service_of_selection(s))
            )
        edit_menu.addSeparator()
        edit_menu.addAction(self.act_preferences)
        view_menu = bar.addMenu("&View")
        view_menu.addActions([self.act_fit, self.act_zoom_in, self.act_zoom_out])
        view_menu.addSeparator()
        view_menu.addAction(self.properties_dock.toggleViewAction())
        view_menu.addAction(self.legend_dock.toggleViewAction())
        view_menu.addAction(self.tool_bar.toggleViewAction())
        tools_menu = bar.addMenu("&Tools")
        tools_menu.addActions(list(self.tool_actions.values()))
        plan_menu = bar.addMenu("&Plan")
        help_menu = bar.addMenu("&Help")
        help_menu.addActions([self.act_safety, self.act_about])
        self.menus = {
            "file": file_menu,
            "edit": edit_menu,
            "view": view_menu,
            "tools": tools_menu,
            "plan": plan_menu,
            "help": help_menu,
        }

    def install_planning(self) -> None:
        """Add the planning part (worker, overlay, step list, summary).

        Filled by the planning code in :mod:`app.plan`; it may add to
        ``self.menus["plan"]``, ``self.plan_toolbar`` and dock widgets, and
        reads ``self.document`` and ``self.scene``.
        """
        from app.plan import install_planning

        self.planning = install_planning(self)

    # -- title, status, layout ------------------------------------------------------------
    def _show_message(self, text: str) -> None:
        self.statusBar().showMessage(text, 8000)

    def _plan_changed(self, plan: object) -> None:
        self.act_export_plan.setEnabled(plan is not None)
        self.act_print_card.setEnabled(plan is not None)

    def _update_title(self, *_args: object) -> None:
        self.setWindowTitle(f"{self.document.title}[*] — Roundsman")
        self.setWindowModified(self.document.dirty)

    def _show_cursor(self, x: float, y: float) -> None:
        self.cursor_label.setText(f"x {x:,.1f} m   y {y:,.1f} m")

    def _restore_layout(self) -> None:
        geometry = self.settings.value("window/geometry")
        state = self.settings.value("window/state")
        if geometry is not None:
            self.restoreGeometry(geometry)
        if state is not None:
            self.restoreState(state)

    def save_layout(self) -> None:
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState())
        self.settings.sync()

    # -- messages (one place, so tests can patch them) ---------------------------------------
    def _warn(self, title: str, text: str) -> None:
        QMessageBox.warning(self, title, text)

    def ask_save_changes(self) -> QMessageBox.StandardButton:
        """Ask what to do with unsaved work: Save, Discard or Cancel."""
        buttons = (
            QMessageBox.StandardButton.Save
            | QMessageBox.StandardButton.Discard
            | QMessageBox.StandardButton.Cancel
        )
        return QMessageBox.question(
            self,
            "Unsaved changes",
            f"{self.document.title} has changes that are not saved. Save them first?",
            buttons,
            QMessageBox.StandardButton.Save,
        )

    def maybe_save(self) -> bool:
        """True when it is all right to drop the current drawing."""
        if not self.document.dirty:
            return True
        answer = self.ask_save_changes()
        if answer == QMessageBox.StandardButton.Save:
            return self.save()
        return answer == QMessageBox.StandardButton.Discard

    # -- files ----------------------------------------------------------------------------
    def _last_dir(self) -> str:
        return str(self.settings.value("files/last_dir", str(Path.home())))

    def _remember_dir(self, path: str | Path) -> None:
        self.settings.setValue("files/last_dir", str(Path(path).parent))

    def new_file(self) -> None:
        if self.maybe_save():
            self.document.load(Network("Untitled"))
            self.autosaver.remove_file()

    def open_dialog(self) -> None:
        if not self.maybe_save():
            return
        path, _ = QFileDialog.getOpenFileName(
            self, "Open", self._last_dir(), f"{PROJECT_FILTER};;{import_filters()}"
        )
        if path:
            self.open_path(path, ask=False)

    def import_dialog(self) -> None:
        if getattr(self, "importing", None) is not None:  # options and report: app.importing
            self.importing.import_dialog()
            return
        if not self.maybe_save():
            return
        path, _ = QFileDialog.getOpenFileName(self, "Import", self._last_dir(), import_filters())
        if path:
            self.open_path(path, ask=False)

    def open_path(self, path: str | Path, *, ask: bool = True, options: dict | None = None) -> bool:
        """Open a project, or import any other readable file (then saving asks
        where to put the project).  With ``ask``, unsaved work prompts first.
        ``options`` go to the reader (``layer``, ``highways``, ``on_error``); without them
        a GeoPackage or OpenStreetMap file goes through the import options and report."""
        if ask and not self.maybe_save():
            return False
        importing = getattr(self, "importing", None)
        if options is None and importing is not None and importing.wants_options(path):
            return importing.import_path(path)
        try:
            network, is_project = self._read(path, options or {})
        except ReadCancelled:
            self.statusBar().showMessage(
                f"Stopped reading {Path(path).name}; the drawing is unchanged.", 10000
            )
            return False
        except RoundsmanError as exc:
            self._warn("Cannot open", str(exc))
            self.recent.remove(str(Path(path).resolve()))
            return False
        self.document.load(network, path if is_project else None, dirty=not is_project)
        self.autosaver.remove_file()
        self._remember_dir(path)
        if is_project:
            self.recent.add(path)
        self.view.fit_to_district()
        how = "Opened" if is_project else "Imported"
        note = (
            ""
            if network.has_coordinates or not network.nodes
            else " — it has no coordinates, so it can be planned but not drawn"
        )
        self.statusBar().showMessage(
            f"{how} {Path(path).name}: {len(network.segments)} streets, "
            f"{len(network.nodes)} junctions{note}",
            10000,
        )
        return True

    def _read(self, path: str | Path, options: dict) -> tuple[Network, bool]:
        """Read ``path``; files of :attr:`background_bytes` or more off the window's thread
        with a progress dialog and Cancel (:func:`app.files.read_off_thread`)."""
        try:
            size = os.path.getsize(path)
        except OSError:
            size = 0  # let the reader say what is wrong with the path
        if size < self.background_bytes:
            return open_network(path, **options)
        return read_off_thread(
            self,
            lambda: open_network(path, **options),
            f"Reading {Path(path).name} ({size / 1e6:.1f} MB)…",
        )

    def save(self) -> bool:
        if self.document.path is None:
            return self.save_as()
        return self.save_to(self.document.path)

    def save_as(self) -> bool:
        start = str(Path(self._last_dir()) / f"{self.document.network.name or 'district'}")
        path, _ = QFileDialog.getSaveFileName(
            self, "Save as", start + PROJECT_SUFFIX, f"{PROJECT_FILTER};;{ALL_FILES}"
        )
        if not path:
            return False
        if not Path(path).suffix:
            path += PROJECT_SUFFIX
        return self.save_to(path)

    def save_to(self, path: str | Path) -> bool:
        """Save the project atomically to ``path``."""
        try:
            write_network(self.document.network, path, "project")
        except (RoundsmanError, OSError) as exc:
            self._warn("Cannot save", str(getattr(exc, "message", exc)))
            return False
        self.document.mark_saved(path)
        self.autosaver.remove_file()
        self.recent.add(path)
        self._remember_dir(path)
        self.statusBar().showMessage(f"Saved {Path(path).name}", 4000)
        return True

    def export_network_dialog(self) -> None:
        path, chosen = QFileDialog.getSaveFileName(
            self,
            "Export network",
            self._last_dir(),
            f"{GEOJSON_FILTER};;{PROJECT_FILTER}",
        )
        if path:
            fmt = "project" if chosen.startswith("Roundsman") else "geojson"
            self.export_network(path, fmt)

    def export_network(self, path: str | Path, fmt: str) -> bool:
        try:
            write_network(self.document.network, path, fmt)
        except (RoundsmanError, OSError) as exc:
            self._warn("Cannot export", str(getattr(exc, "message", exc)))
            return False
        self.statusBar().showMessage(f"Exported {Path(path).name}", 4000)
        return True

    def export_plan_dialog(self) -> None:
        if self.document.plan is None:
            return
        path, _ = QFileDialog.getSaveFileName(self, "Export plan", self._last_dir(), PLAN_FILTER)
        if path:
            self.export_plan(path)

    def export_plan(self, path: str | Path) -> bool:
        from core.files.plan_json import write_plan

        if self.document.plan is None:
            return False
        try:
            write_plan(self.document.plan, path)
        except (RoundsmanError, OSError) as exc:
            self._warn("Cannot export", str(getattr(exc, "message", exc)))
            return False
        self.statusBar().showMessage(f"Exported the plan to {Path(path).name}", 4000)
        return True

    def route_card_content(self):
        """The route card for the current plan (:func:`core.card.build_card`), with
        the activity chosen in the planning panel when there is one."""
        from core.activity import SWEEPING
        from core.card import build_card
        from core.directions import build_directions

        plan = self.document.plan
        if plan is None:
            return None
        fleet = getattr(self, "fleet", None)
        if fleet is not None and (card := fleet.shown_route_card()) is not None:
            return card  # a fleet route: its own card, reload stops included
        panel = getattr(getattr(self, "planning", None), "panel", None)
        chooser = getattr(panel, "current_activity", None)
        activity = chooser() if callable(chooser) else SWEEPING
        network = self.document.network
        directions = build_directions(
            network, plan.steps, activity=activity, depot_label=f"the depot ({plan.depot})"
        )
        return build_card(network, directions, depot=plan.depot)

    def print_route_card(self) -> bool:
        """Print the current plan as a route card (the printer dialog asks where)."""
        from app.card.render import print_card

        try:
            content = self.route_card_content()
        except RoundsmanError as exc:
            self._warn("Cannot print", str(exc))
            return False
        if content is None:
            self.statusBar().showMessage("Plan a circuit first.", 4000)
            return False
        return bool(print_card(self, content))

    def _fill_recent_menu(self) -> None:
        self.recent_menu.clear()
        paths = self.recent.paths()
        for p in paths:
            self.recent_menu.addAction(
                self._action(Path(p).name, lambda p=p: self.open_path(p), tip=p)
            )
        if paths:
            self.recent_menu.addSeparator()
            self.recent_menu.addAction(self._action("Clear list", self.recent.clear))
        else:
            self.recent_menu.addAction("(none)").setEnabled(False)

    # -- recovery ---------------------------------------------------------------------------
    def ask_recover(self, count: int, when: str) -> bool:
        answer = QMessageBox.question(
            self,
            "Recover unsaved work",
            f"Roundsman did not close properly last time. Open the drawing autosaved at "
            f"{when}?"
            + (f" ({count} autosaves found; the newest is offered.)" if count > 1 else ""),
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No,
            QMessageBox.StandardButton.Yes,
        )
        return answer == QMessageBox.StandardButton.Yes

    def offer_recovery(self) -> bool:
        """Offer to reopen the newest autosave left by a window that crashed."""
        found = [
            r for r in find_recoverable(self.autosaver.folder) if r.file != self.autosaver.file
        ]
        if not found:
            return False
        newest = found[0]
        if not self.ask_recover(len(found), newest.saved_at):
            for r in found:
                r.discard()
            return False
        try:
            network = newest.load()
        except (RoundsmanError, OSError, ValueError, KeyError) as exc:
            self._warn("Cannot recover", str(getattr(exc, "message", exc)))
            return False
        self.document.load(network, newest.original_path, dirty=True)
        for r in found:
            r.discard()
        self.autosaver.save_now()
        self.view.fit_to_district()
        return True

    # -- editing the selection ------------------------------------------------------------
    def _edit_selection(self, make) -> None:
        ids = list(self.document.selection)
        if not ids:
            self.statusBar().showMessage("Pick streets first.", 4000)
            return
        try:
            edit = make(self.document.network, ids)
        except (NetworkError, ValueError) as exc:
            self.statusBar().showMessage(str(getattr(exc, "message", exc)), 8000)
            return
        self.document.apply_edit(edit)

    def delete_selection(self) -> None:
        doc = self.document
        if not doc.selection and not doc.node_selection:
            return
        doc.apply_edit(ed.delete(doc.network, doc.selection, doc.node_selection))

    def select_all(self) -> None:
        self.document.set_selection(list(self.document.network.segments))

    def make_oneway(self) -> None:
        self._edit_selection(lambda net, ids: ed.set_oneway(net, ids, OneWay.FORWARD))

    def make_twoway(self) -> None:
        self._edit_selection(lambda net, ids: ed.set_oneway(net, ids, OneWay.NO))

    def reverse_selection(self) -> None:
        self._edit_selection(ed.reverse_oneway)

    def set_service_of_selection(self, service: Service) -> None:
        self._edit_selection(lambda net, ids: ed.set_service(net, ids, service))

    # -- preferences ----------------------------------------------------------------------
    def edit_preferences(self) -> None:
        dialog = PreferencesDialog(self.preferences, self)
        if dialog.exec() == PreferencesDialog.DialogCode.Accepted:
            self.apply_preferences(dialog.chosen())

    def apply_preferences(self, preferences: Preferences) -> None:
        """Use and keep new preferences."""
        self.preferences = preferences
        preferences.save(self.settings)
        self.view.snap_px = float(preferences.snap_px)
        self.autosaver.set_interval(preferences.autosave_s)

    # -- help -----------------------------------------------------------------------------
    def show_safety(self) -> None:
        QMessageBox.information(self, "Safety", SAFETY_NOTE)

    def show_about(self) -> None:
        QMessageBox.about(
            self,
            "About Roundsman",
            f"Roundsman {__version__}: shortest covering circuits for street service crews."
            f"\n\n{SAFETY_NOTE}",
        )

    # -- window events ----------------------------------------------------------------------
    def dragEnterEvent(self, event: QDragEnterEvent) -> None:
        urls = event.mimeData().urls()
        if urls and all(u.isLocalFile() for u in urls):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dropEvent(self, event: QDropEvent) -> None:
        urls = [u for u in event.mimeData().urls() if u.isLocalFile()]
        if urls:
            event.acceptProposedAction()
            self.open_path(urls[0].toLocalFile())

    def closeEvent(self, event: QCloseEvent) -> None:
        if not self.maybe_save():
            event.ignore()
            return
        self.save_layout()
        self.autosaver.close()
        event.accept()


def run_window(argv: list[str] | None = None) -> int:
    """Open the window and run Qt's event loop until it closes."""
    app = QApplication.instance() or QApplication(argv or sys.argv[:1])
    app.setApplicationName("Roundsman")
    app.setOrganizationName("Roundsman")
    window = MainWindow()
    window.show()
    args = (argv or sys.argv)[1:]
    if args and Path(args[0]).is_file():
        QTimer.singleShot(0, lambda: window.open_path(args[0], ask=False))
    else:
        QTimer.singleShot(0, window.offer_recovery)
    return int(app.exec())
