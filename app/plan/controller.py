"""Planning in the window: the run, the overlay, the panels and their links.

:class:`PlanningController` observes the :class:`app.document.NetworkDocument`
(``planChanged``, ``changed``, ``reset``) and never owns the network or the
plan: a run starts on a copy of ``document.network``
(:class:`app.plan.worker.PlanRunner`), and a finished plan goes back through
``document.set_plan``, which the overlay, the step list and the summary
listen to.  A cancelled or failed run never touches the document; a plan
that finishes after the drawing was edited is not shown (it no longer fits
the drawing) and the message says so.

:func:`install_planning` puts the planning into a main window: the Plan menu
and toolbar entries, the "Circuit" and "Planning problems" docks and a
progress bar in the status bar.
"""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import (
    QEvent,
    QItemSelection,
    QItemSelectionModel,
    QObject,
    QPointF,
    QSettings,
    Qt,
    QTimer,
    Signal,
)
from PySide6.QtGui import QAction, QKeySequence, QMouseEvent
from PySide6.QtWidgets import (
    QApplication,
    QDockWidget,
    QGraphicsScene,
    QGraphicsView,
    QMainWindow,
    QProgressBar,
    QStatusBar,
)

from app.plan.faults import FaultOverlay, FaultsPanel, fault_rect
from app.plan.overlay import CircuitOverlay
from app.plan.panel import PlanPanel
from app.plan.summary import summary_rows
from app.plan.worker import PlanRunner
from app.worker import RunControls
from core.errors import DepotError, NetworkError, RoundsmanError

__all__ = ["PlanningController", "install_planning"]

PICK_PX = 7.0
"""A click this close (screen pixels) to a drawn pass selects its step."""
CLICK_SLOP_PX = 4.0
"""A press and release further apart than this is a drag, not a click."""
SEARCH_END = 0.9
"""The engine's progress fraction when its search has ended ("walking the circuit")."""
CANCELLED_TEXT = "Planning was cancelled. The drawing is unchanged."
STALE_TEXT = (
    "The drawing was changed while the engine was planning, so the circuit no longer "
    "fits it and was not shown. Plan again to include the changes."
)


NO_DEPOT_TEXT = (
    "Planning needs a depot: place it on a junction with the Depot tool, then plan again."
)
NO_STREETS_TEXT = "There are no streets to plan yet: draw or open a district first."


def failure_text(
    exc: object, network: Any = None, what: str = "Planning", no_depot: str = NO_DEPOT_TEXT
) -> str:
    """The message for a failed run (``what``: "Planning", "Route planning"): the
    engine's own words for its errors (they name the vehicle, junction or street at
    fault), ``no_depot`` when the drawing has no depot, the type and text for anything
    unexpected."""
    if network is not None and len(network) == 0:
        return NO_STREETS_TEXT
    if isinstance(exc, DepotError) and network is not None and network.depot is None:
        return no_depot
    if isinstance(exc, RoundsmanError):
        return f"{what} failed: {exc}"
    return f"{what} failed with an unexpected error ({type(exc).__name__}: {exc})."


class PlanningController(RunControls, QObject):
    """Runs the engine for the document and shows the result on the canvas."""

    CANCEL_IN_STATUS_BAR = True

    stepPicked = Signal(int)
    """A pass was clicked on the canvas (0-based step index)."""
    message = Signal(str)
    """The latest planning message (also shown in the panel and status bar)."""

    def __init__(
        self,
        document: Any,
        scene: QGraphicsScene,
        view: QGraphicsView | None = None,
        status_bar: QStatusBar | None = None,
        parent: QObject | None = None,
    ) -> None:
        super().__init__(parent)
        self.document = document
        self.scene = scene
        self.view = view
        self.status_bar = status_bar
        self.runner = PlanRunner(self)
        self.overlay = CircuitOverlay(scene, self)
        self.faults = FaultOverlay(scene)
        self.last_message = ""
        self._edited_during_run = False
        self._press: QPointF | None = None
        self._make_actions()
        self.panel = PlanPanel(self.plan_action, self.cancel_action)
        self.faults_panel = FaultsPanel()
        self.status_progress = QProgressBar()
        self.status_progress.setRange(0, 100)
        self.status_progress.setMaximumWidth(160)
        self.status_progress.setVisible(False)
        if status_bar is not None:
            status_bar.addPermanentWidget(self.status_progress)
        self._ticker = QTimer(self)
        self._ticker.setInterval(250)
        self._ticker.timeout.connect(self._tick)
        self._phase = ""
        self._fraction = self._phase_t0 = 0.0
        self._time_limit = 30.0
        self._cancelling = False
        self._connect()
        if view is not None:
            view.viewport().installEventFilter(self)
        self._show_plan(getattr(document, "plan", None))

    # -- set-up ----------------------------------------------------------------------
    def _make_actions(self) -> None:
        self.plan_action = QAction("Plan circuit", self)
        self.plan_action.setShortcut(QKeySequence(Qt.Key.Key_F5))
        self.plan_action.setToolTip(
            "Plan the shortest circuit from the depot over every street that needs service (F5)"
        )
        self.cancel_action = QAction("Cancel planning", self)
        self.cancel_action.setShortcut(QKeySequence("Shift+F5"))
        self.cancel_action.setToolTip("Stop the engine; the drawing stays as it is (Shift+F5)")
        self.cancel_action.setEnabled(False)
        self.clear_action = QAction("Clear circuit", self)
        self.clear_action.setToolTip("Remove the circuit from the map")
        self.clear_action.setEnabled(False)
        self.show_action = QAction("Show circuit", self)
        self.show_action.setCheckable(True)
        self.show_action.setChecked(True)

    def _connect(self) -> None:
        doc = self.document
        self.plan_action.triggered.connect(self.start)
        self.cancel_action.triggered.connect(self.cancel)
        self.clear_action.triggered.connect(lambda: doc.set_plan(None))
        self.show_action.toggled.connect(self._set_visible)
        self.runner.started.connect(self._on_started)
        self.runner.progress.connect(self._on_progress)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        doc.planChanged.connect(self._show_plan)
        doc.changed.connect(self._on_edited)
        doc.reset.connect(self._on_reset)
        self.panel.settingsChanged.connect(self._refresh_summary)
        self.panel.table.selectionModel().selectionChanged.connect(self._on_rows_selected)
        self.faults_panel.streetPicked.connect(self.centre_street)
        self.faults_panel.nodePicked.connect(self.centre_node)

    # -- running ---------------------------------------------------------------------
    def start(self) -> bool:
        """Plan the document's network in the worker; False if a run is going on."""
        if self.runner.running:
            return False
        self._edited_during_run = False
        self._cancelling = False
        options = self.panel.engine_options()
        self._time_limit = float(options.get("time_limit", 30.0))  # type: ignore[arg-type]
        return self.runner.start(self.document.network, self.document.depot, **options)

    def _running(self, on: bool) -> None:
        self.plan_action.setEnabled(not on)
        self.cancel_action.setEnabled(on)
        self.panel.progress.setVisible(on)
        self.status_progress.setVisible(on)
        if on:
            self._ticker.start()
        else:
            self._ticker.stop()

    def _on_started(self) -> None:
        self._phase = "starting the engine"
        self._fraction, self._phase_t0 = 0.0, 0.0
        self._set_progress(0.0)
        self._running(True)
        self._say("Planning: starting the engine…", status=False)

    def _on_progress(self, what: str, fraction: float) -> None:
        self._phase = what
        self._fraction = fraction
        self._phase_t0 = self.runner.seconds_running()
        self._set_progress(fraction)
        self._tick()

    def _tick(self) -> None:
        if self._cancelling:
            return  # "Cancelling…" stays until the engine has stopped
        secs = self.runner.seconds_running()
        # The engine reports phases, not progress within its search, which runs up to the
        # time budget; between its reports the bar moves with the time used of the budget.
        if self._fraction < SEARCH_END:
            used = min((secs - self._phase_t0) / max(self._time_limit, 1e-9), 1.0)
            self._set_progress(self._fraction + (SEARCH_END - self._fraction) * used * 0.95)
        self._say(
            f"Planning: {self._phase}… {secs:.0f} s (time budget {self._time_limit:.0f} s)",
            status=False,
        )

    def _set_progress(self, fraction: float) -> None:
        value = round(100 * min(max(fraction, 0.0), 1.0))
        self.panel.progress.setValue(value)
        self.status_progress.setValue(value)

    def _on_finished(self, plan: object) -> None:
        self._running(False)
        if self._edited_during_run:
            self._say(STALE_TEXT)
            return
        self.faults.clear()
        self.faults_panel.clear_problem()
        self.document.set_plan(plan)
        self._say(
            f"Planned in {self.runner.elapsed_s:.1f} s: {len(plan.steps)} steps."  # type: ignore[attr-defined]
        )

    def _on_failed(self, exc: object) -> None:
        self._running(False)
        text = failure_text(exc, self.document.network)
        segments = tuple(getattr(exc, "segments", ()) or ())
        nodes = tuple(getattr(exc, "nodes", ()) or ())
        network = self.document.network
        if isinstance(exc, NetworkError):
            mpp = self._metres_per_pixel()
            self.faults.show(network, segments, nodes, metres_per_pixel=mpp)
        self.faults_panel.show_problem(text, network, segments, nodes)
        dock = self.faults_panel.parentWidget()
        if isinstance(dock, QDockWidget):
            dock.show()
            dock.raise_()
        self._say(text)

    def _on_cancelled(self) -> None:
        self._running(False)
        self._say(CANCELLED_TEXT)

    # -- the document's side -----------------------------------------------------------
    def _on_edited(self, *_: object) -> None:
        if self.runner.running:
            self._edited_during_run = True
        if self.faults.visible:
            self.faults.clear()  # drawn for the network as it was

    def _on_reset(self) -> None:
        self._on_edited()
        self.faults_panel.clear_problem()

    def _show_plan(self, plan: object) -> None:
        network = self.document.network
        self.overlay.show_plan(
            network,
            plan,  # type: ignore[arg-type]
            left_hand=self.panel.left_hand,
            pixels_per_metre=1.0 / self._metres_per_pixel(),
        )
        self.overlay_visible(self.show_action.isChecked())
        self.panel.model.set_plan(network if plan is not None else None, plan)  # type: ignore[arg-type]
        self.clear_action.setEnabled(plan is not None)
        self._refresh_summary()

    def _refresh_summary(self) -> None:
        plan = self.document.plan
        if plan is None:
            self.panel.show_summary([])
            return
        rows = summary_rows(self.document.network, plan, self.panel.current_activity())
        self.panel.show_summary(rows, plan.notes)

    def _set_visible(self, on: bool) -> None:
        self.overlay_visible(on)

    def overlay_visible(self, on: bool) -> None:
        has = self.overlay.n_steps > 0
        for item in self.overlay.items:
            item.setVisible(on)
        self.overlay._veil.setVisible(on and has)
        self.overlay._marks.setVisible(on and has)
        self.overlay._glow.setVisible(on and bool(self.overlay.highlight_path().elementCount()))

    def _metres_per_pixel(self) -> float:
        if self.view is None:
            return 1.0
        scale = abs(self.view.transform().m11())
        return 1.0 / scale if scale > 0 else 1.0

    # -- steps: list <-> canvas ----------------------------------------------------------
    def selected_steps(self) -> list[int]:
        rows = self.panel.table.selectionModel().selectedRows()
        return sorted(r.row() for r in rows)

    def _on_rows_selected(self, *_: object) -> None:
        rows = self.selected_steps()
        self.overlay.set_highlight(rows)
        if rows:
            self._bring_into_view(self.overlay.step_rect(rows[0]))

    def select_step(self, index: int) -> None:
        """Select one step in the list (which highlights it on the canvas)."""
        model = self.panel.model
        if not (0 <= index < model.rowCount()):
            return
        sel = QItemSelection(model.index(index, 0), model.index(index, model.columnCount() - 1))
        self.panel.table.selectionModel().select(
            sel, QItemSelectionModel.SelectionFlag.ClearAndSelect
        )
        self.panel.table.scrollTo(model.index(index, 0))

    def _bring_into_view(self, rect: Any) -> None:
        if self.view is None or rect.isNull():
            return
        visible = self.view.mapToScene(self.view.viewport().rect()).boundingRect()
        if not visible.contains(rect):
            self.view.centerOn(rect.center())

    def centre_street(self, segment_id: str) -> None:
        """Centre the view on a street and select it in the drawing."""
        rect = fault_rect(self.document.network, segment=segment_id)
        if self.view is not None and not rect.isNull():
            self.view.centerOn(rect.center())
        if hasattr(self.document, "set_selection"):
            self.document.set_selection([segment_id])

    def centre_node(self, node_id: str) -> None:
        rect = fault_rect(self.document.network, node=node_id)
        if self.view is not None and not rect.isNull():
            self.view.centerOn(rect.center())
        if hasattr(self.document, "set_node_selection"):
            self.document.set_node_selection([node_id])

    def pick_at(self, scene_point: QPointF) -> int | None:
        """Select the step whose pass is drawn nearest ``scene_point`` (within
        :data:`PICK_PX` screen pixels); returns its index or ``None``."""
        if self.overlay.n_steps == 0 or not self.show_action.isChecked():
            return None
        self.overlay.sync_zoom(1.0 / self._metres_per_pixel())
        index = self.overlay.step_at(scene_point, PICK_PX * self._metres_per_pixel())
        if index is not None:
            self.select_step(index)
            self.stepPicked.emit(index)
        return index

    def _picking_allowed(self) -> bool:
        tool = getattr(self.view, "tool", None)
        if tool is None:
            return True
        name = str(getattr(tool, "name", "") or type(tool).__name__).lower()
        return name in ("pick", "select")  # the canvas's selection tool

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        """Clicks on the canvas select the pass under them; the event goes on to the
        canvas's own tools untouched."""
        if not isinstance(event, QMouseEvent) or event.button() != Qt.MouseButton.LeftButton:
            return False
        if event.type() == QEvent.Type.MouseButtonPress:
            self._press = event.position()
        elif event.type() == QEvent.Type.MouseButtonRelease and self._press is not None:
            pos = event.position()
            moved = (pos - self._press).manhattanLength()
            self._press = None
            if moved <= CLICK_SLOP_PX and self.view is not None and self._picking_allowed():
                self.pick_at(self.view.mapToScene(pos.toPoint()))
        return False


def dock_beside_circuit(
    window: QMainWindow, title: str, object_name: str, widget: Any
) -> QDockWidget:
    """A hidden dock for ``widget`` on the right, tabbed with the Circuit dock when the
    window has one (the Depots and Routes panels sit there)."""
    dock = QDockWidget(title, window)
    dock.setObjectName(object_name)
    dock.setWidget(widget)
    window.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, dock)
    circuit_dock = getattr(getattr(window, "planning", None), "circuit_dock", None)
    if isinstance(circuit_dock, QDockWidget):
        window.tabifyDockWidget(circuit_dock, dock)
    dock.hide()
    return dock


def install_planning(window: QMainWindow) -> PlanningController:
    """Add planning to Roundsman's main window (``window.document``, ``window.scene``,
    ``window.view``, ``window.menus["plan"]``, ``window.plan_toolbar``)."""
    ctl = PlanningController(
        window.document,  # type: ignore[attr-defined]
        window.scene,  # type: ignore[attr-defined]
        window.view,  # type: ignore[attr-defined]
        window.statusBar(),
        parent=window,
    )
    app = QApplication.instance()
    if app is not None:  # stop a run before Qt goes away (the thread would abort the exit)
        app.aboutToQuit.connect(ctl.shutdown)
    settings = getattr(window, "settings", None)
    if isinstance(settings, QSettings):
        ctl.panel.restore(settings)
    dock = QDockWidget("Circuit", window)
    dock.setObjectName("circuitDock")
    dock.setWidget(ctl.panel)
    window.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, dock)
    problems = QDockWidget("Planning problems", window)
    problems.setObjectName("planningProblemsDock")
    problems.setWidget(ctl.faults_panel)
    window.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, problems)
    street_panel = getattr(window, "properties_dock", None)
    if isinstance(street_panel, QDockWidget):  # share the street panel's place; shown on a run
        window.tabifyDockWidget(street_panel, dock)
        street_panel.raise_()
    window.tabifyDockWidget(dock, problems)
    problems.hide()
    ctl.runner.started.connect(lambda: (dock.show(), dock.raise_()))
    ctl.circuit_dock, ctl.problems_dock = dock, problems
    menus = getattr(window, "menus", {})
    menu = menus.get("plan")
    if menu is not None:
        for action in (ctl.plan_action, ctl.cancel_action):
            menu.addAction(action)
        menu.addSeparator()
        for action in (ctl.show_action, ctl.clear_action):
            menu.addAction(action)
    view_menu = menus.get("view")
    if view_menu is not None:
        view_menu.addSeparator()
        view_menu.addAction(dock.toggleViewAction())
        view_menu.addAction(problems.toggleViewAction())
    toolbar = getattr(window, "plan_toolbar", None)
    if toolbar is not None:
        toolbar.addAction(ctl.plan_action)
        toolbar.addAction(ctl.cancel_action)
    return ctl
