"""Depot comparison in the window: the panel, the runner and their links.

:class:`ComparisonController` observes the document (node selection, depot)
and never owns the network: a run starts on a copy
(:class:`app.compare.runner.CompareRunner`).  Clicking a result row picks that
depot's junction on the canvas and brings it into view.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QPointF, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QApplication, QDockWidget, QFileDialog, QMainWindow

from app.compare.panel import ComparePanel, parse_ids
from app.compare.runner import CompareRunner
from app.plan.controller import dock_beside_circuit
from app.worker import RunControls
from core.errors import RoundsmanError
from core.files.atomic import atomic_write_text

__all__ = ["ComparisonController", "install_comparison"]

CSV_FILTER = "CSV table (*.csv)"
CANCELLED_TEXT = "The comparison was cancelled."


class ComparisonController(RunControls, QObject):
    """Runs :func:`core.fleet.compare.compare_depots` for the document and shows it."""

    STATUS_MS = 10_000
    SHUTDOWN_MS = 30_000  # worker processes take longer to wind down

    message = Signal(str)

    def __init__(
        self, document: Any, view: Any = None, status_bar: Any = None, parent: Any = None
    ) -> None:
        super().__init__(parent)
        self.document = document
        self.view = view
        self.status_bar = status_bar
        self.runner = CompareRunner(self)
        self.panel = ComparePanel()
        self.workers: int | None = None
        """Processes for the candidates (None: every core)."""
        self.rows: list = []
        self.unit = 1000.0
        self.last_message = ""
        self.dock: QDockWidget | None = None
        self.show_action = QAction("Compare depots…", self)
        self.show_action.setToolTip("Plan from several candidate depots and compare the figures")
        self.show_action.triggered.connect(self.show_panel)
        p = self.panel
        p.run_button.clicked.connect(self.start)
        p.cancel_button.clicked.connect(self.cancel)
        p.add_picked_button.clicked.connect(self.add_picked)
        p.add_depot_button.clicked.connect(self.add_depot)
        p.add_ids_button.clicked.connect(self.add_typed)
        p.export_button.clicked.connect(self.export_dialog)
        p.rowPicked.connect(self.pick_row)
        self.runner.started.connect(self._on_started)
        self.runner.progress.connect(self._on_progress)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)

    # -- candidates ---------------------------------------------------------------------
    def add_picked(self) -> list[str]:
        picked = list(getattr(self.document, "node_selection", []))
        if not picked:
            self._say("Pick junctions on the map first (Pick tool; Shift+click adds).")
            return []
        return self.panel.add_depots(picked)

    def add_depot(self) -> list[str]:
        depot = self.document.network.depot
        if depot is None:
            self._say("The drawing has no depot yet.")
            return []
        return self.panel.add_depots([depot])

    def add_typed(self) -> list[str]:
        ids = parse_ids(self.panel.id_edit.text())
        nodes = self.document.network.nodes
        unknown = [i for i in ids if i not in nodes]
        if unknown:
            self._say(f"No junction {', '.join(unknown)} in the drawing.")
        added = self.panel.add_depots([i for i in ids if i in nodes])
        if not unknown:
            self.panel.id_edit.clear()
        return added

    # -- running --------------------------------------------------------------------------
    def start(self) -> bool:
        """Compare the candidates in the background; False if it cannot start."""
        if self.runner.running:
            return False
        network = self.document.network
        try:
            candidates = self.panel.candidate_list()
            if not candidates:
                self._say("Add candidate depots first: pick junctions or type their ids.")
                return False
            missing = [c.depot for c in candidates if c.depot not in network.nodes]
            if missing:
                self._say(f"No junction {', '.join(dict.fromkeys(missing))} in the drawing.")
                return False
            settings = self.panel.fleet_settings(network)
        except RoundsmanError as exc:
            self._say(str(exc))
            return False
        self.unit = 1000.0 if network.crs is not None else 1.0
        self._say(f"Comparing {len(candidates)} candidates…", status=False)
        return self.runner.start(network, candidates, settings, workers=self.workers)

    def _on_started(self) -> None:
        self.panel.set_running(True)
        self.show_panel()

    def _on_progress(self, what: str, fraction: float) -> None:
        self.panel.progress.setValue(round(100 * min(max(fraction, 0.0), 1.0)))
        self._say(f"Comparing: {what}", status=False)

    def _on_finished(self, rows: list) -> None:
        self.panel.set_running(False)
        self.rows = list(rows)
        self.panel.show_rows(self.rows, self.unit)
        ok = [r for r in self.rows if not r.error]
        best = min(ok, key=lambda r: r.deadhead_m, default=None)
        text = f"Compared {len(self.rows)} candidates in {self.runner.elapsed_s:.1f} s."
        if best is not None:
            text += f" Least deadhead: {best.depot} ({best.deadhead_m / self.unit:.2f})."
        self._say(text)

    def _on_failed(self, exc: object) -> None:
        self.panel.set_running(False)
        if isinstance(exc, RoundsmanError):
            self._say(f"The comparison failed: {exc}")
        else:
            self._say(f"The comparison failed ({type(exc).__name__}: {exc}).")

    def _on_cancelled(self) -> None:
        self.panel.set_running(False)
        self._say(CANCELLED_TEXT)

    # -- results --------------------------------------------------------------------------
    def pick_row(self, index: int) -> None:
        """Pick the row's depot on the canvas and bring it into view."""
        if not (0 <= index < len(self.rows)):
            return
        depot = self.rows[index].depot
        node = self.document.network.nodes.get(depot)
        if node is None:
            return
        self.document.set_node_selection([depot])
        if self.view is not None and node.has_xy:
            self.view.centerOn(QPointF(node.x, -node.y))

    def ask_csv_path(self) -> str:
        start = str(Path(self._last_dir()) / "depots.csv")
        path, _ = QFileDialog.getSaveFileName(self.panel, "Export comparison", start, CSV_FILTER)
        return path

    def _last_dir(self) -> str:
        settings = getattr(self.parent(), "settings", None)
        value = settings.value("files/last_dir", str(Path.home())) if settings else None
        return str(value or Path.home())

    def export_dialog(self) -> bool:
        path = self.ask_csv_path()
        return self.export_csv(path) if path else False

    def export_csv(self, path: str | Path) -> bool:
        """Write the table as CSV (the same text ``roundsman compare --csv`` writes)."""
        try:
            atomic_write_text(path, self.panel.model.csv_text())
        except (OSError, RoundsmanError) as exc:
            self._say(f"Cannot write {Path(path).name}: {exc}")
            return False
        self._say(f"Table written to {Path(path).name}.")
        return True

    def show_panel(self) -> None:
        if self.dock is not None:
            self.dock.show()
            self.dock.raise_()


def install_comparison(window: QMainWindow) -> ComparisonController:
    """Add the "Depots" panel to Roundsman's main window: a dock, a Plan-menu entry
    and a View-menu toggle (``window.document``, ``window.view``, ``window.menus``)."""
    ctl = ComparisonController(
        window.document,  # type: ignore[attr-defined]
        getattr(window, "view", None),
        window.statusBar(),
        parent=window,
    )
    app = QApplication.instance()
    if app is not None:  # stop the processes before Qt goes away
        app.aboutToQuit.connect(ctl.shutdown)
    dock = dock_beside_circuit(window, "Depots", "depotCompareDock", ctl.panel)
    ctl.dock = dock
    menus = getattr(window, "menus", {})
    plan_menu = menus.get("plan")
    if plan_menu is not None:
        plan_menu.addSeparator()
        plan_menu.addAction(ctl.show_action)
    view_menu = menus.get("view")
    if view_menu is not None:
        view_menu.addAction(dock.toggleViewAction())
    return ctl
