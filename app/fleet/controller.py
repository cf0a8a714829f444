"""Fleet plans in the window: the run, the routes, the cards and their links.

:class:`FleetController` holds the current :class:`core.fleet.result.FleetPlan` and the
settings it was made with, and observes the :class:`app.document.NetworkDocument`: any
edit of the network (or a new drawing) drops the fleet plan, as it drops the circuit,
because the routes no longer fit the drawing.  It never owns the network: a run starts
on a copy (:class:`app.fleet.runner.FleetRunner`); a cancelled or failed run never
touches the document, and a plan that finishes after the drawing was edited is dropped
with a message.  The widgets (:class:`app.fleet.panel.RoutesPanel`) only show the cells
the controller hands them.

Selecting a route hands ``route.as_plan(network.name)`` to ``document.set_plan``, so the
circuit overlay, the step list and the summary of :mod:`app.plan` show that route.

Route cards: one per vehicle route, with :func:`core.fleet.cards.fleet_cards` for the
content (as ``roundsman card`` makes them) and :mod:`app.card.render` for the drawing;
the PDF is written atomically (:func:`core.files.atomic.atomic_write_bytes`).

:func:`install_fleet` puts it into the main window: the "Routes" dock, the Plan menu
entries, two File menu entries and a View menu toggle.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QSettings, Signal
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QApplication, QDockWidget, QFileDialog, QMainWindow, QStatusBar

from app.fleet.choices import FleetDefaults, fleet_defaults, route_issues
from app.fleet.figures import (
    ROUTE_COLUMNS,
    TRIP_COLUMNS,
    Units,
    route_cells,
    totals_lines,
    trip_cells,
    units_for,
    verdict_lines,
)
from app.fleet.panel import RoutesPanel
from app.fleet.runner import FleetRunner
from app.plan.controller import NO_STREETS_TEXT, dock_beside_circuit, failure_text
from app.worker import RunControls
from core.activity import SWEEPING, Activity
from core.card import CardContent
from core.errors import RoundsmanError
from core.fleet.result import FleetPlan
from core.fleet.settings import FleetSettings
from core.plan import Plan
from core.turns import DriveSide

__all__ = ["FleetController", "install_fleet"]

PDF_FILTER = "PDF (*.pdf)"
CANCELLED_TEXT = "Route planning was cancelled. The drawing and the routes shown are unchanged."
STALE_TEXT = (
    "The drawing was changed while the routes were being planned, so they no longer fit "
    "it and were not shown. Plan the routes again to include the changes."
)
CLEARED_TEXT = "The drawing was changed, so the fleet's routes were cleared."
NO_DEPOT_TEXT = (
    "Planning routes needs a depot: place it on a junction with the Depot tool, then plan again."
)
NO_PLAN_TEXT = "Plan routes for the fleet first."


class FleetController(RunControls, QObject):
    """Plans routes for a fleet on the document's network and shows them."""

    planChanged = Signal(object)
    """The fleet plan (:class:`FleetPlan`) or ``None``."""
    message = Signal(str)

    def __init__(
        self,
        document: Any,
        status_bar: QStatusBar | None = None,
        parent: QObject | None = None,
        *,
        activity: Callable[[], Activity] | None = None,
        drive: Callable[[], str] | None = None,
    ) -> None:
        super().__init__(parent)
        self.document = document
        self.status_bar = status_bar
        self.activity_source = activity or (lambda: SWEEPING)
        """The activity the window plans for (the Circuit panel's, with its speeds)."""
        self.drive_source = drive or (lambda: DriveSide.RIGHT.value)
        self.runner = FleetRunner(self)
        self.plan: FleetPlan | None = None
        self.settings: FleetSettings | None = None
        """The settings :attr:`plan` was made with."""
        self.activity: Activity | None = None
        """The activity :attr:`plan` was made for."""
        self.units: Units = units_for(document.network)
        self.defaults = FleetDefaults()
        self.last_message = ""
        self.page_size = "A4"
        self.dock: QDockWidget | None = None
        self._shown: Plan | None = None
        self._shown_index = -1
        self._edited_during_run = False
        self._cancelling = False
        self._pending: tuple[FleetSettings | None, Activity | None] = (None, None)
        self._make_actions()
        self.panel = RoutesPanel(
            self.plan_action, self.cancel_action, (self.print_action, self.pdf_action)
        )
        self._connect()
        self.refresh_defaults(from_file=True)

    # -- set-up ----------------------------------------------------------------------
    def _make_actions(self) -> None:
        self.plan_action = QAction("Plan routes for the fleet", self)
        self.plan_action.setShortcut(QKeySequence("Ctrl+F5"))
        self.plan_action.setToolTip(
            "Split the work into routes (one per vehicle) and trips (one per load) with the "
            "Vehicles settings (Ctrl+F5)"
        )
        self.cancel_action = QAction("Cancel route planning", self)
        self.cancel_action.setShortcut(QKeySequence("Ctrl+Shift+F5"))
        self.cancel_action.setToolTip("Stop planning routes; the drawing stays as it is")
        self.cancel_action.setEnabled(False)
        self.print_action = QAction("Print route cards for the fleet…", self)
        self.print_action.setToolTip("One route card per vehicle route, each on its own pages")
        self.pdf_action = QAction("Save route cards as PDF…", self)
        self.pdf_action.setToolTip("One route card per vehicle route, all in one PDF")
        for action in (self.print_action, self.pdf_action):
            action.setEnabled(False)

    def _connect(self) -> None:
        doc = self.document
        self.plan_action.triggered.connect(self.start)
        self.cancel_action.triggered.connect(self.cancel)
        self.print_action.triggered.connect(self.print_cards)
        self.pdf_action.triggered.connect(self.save_pdf_dialog)
        self.runner.started.connect(self._on_started)
        self.runner.progress.connect(self._on_progress)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        doc.changed.connect(self._on_edited)
        doc.reset.connect(self._on_reset)
        doc.planChanged.connect(self._on_document_plan)
        self.panel.routePicked.connect(self.show_route)
        self.panel.vehicles.defaults_button.clicked.connect(self.use_defaults)

    # -- defaults ----------------------------------------------------------------------
    def refresh_defaults(self, *, from_file: bool = False) -> None:
        """Work out the defaults for the document's network and the current activity.

        With ``from_file`` (a new drawing) the figures the file states replace what the
        fields hold; otherwise only the fields the user has not typed in follow them."""
        self.defaults = fleet_defaults(self.document.network, self.activity_source())
        box = self.panel.vehicles
        if from_file and not self.defaults.from_file:
            box.reload_typed()  # the user's own figures, after a file that stated others
        box.apply_defaults(self.defaults, only_unset=not (from_file and self.defaults.from_file))

    def use_defaults(self) -> None:
        """The Defaults button: the file's figures, else the activity's; forget the typed."""
        self.panel.vehicles.forget_typed()
        self.refresh_defaults()

    # -- running ---------------------------------------------------------------------
    def start(self) -> bool:
        """Plan routes for the document's network in the worker; False if it cannot start
        (a run is going on, or a setting is wrong: the message says which)."""
        if self.runner.running:
            return False
        network = self.document.network
        if len(network) == 0:
            self._say(NO_STREETS_TEXT)
            return False
        try:
            activity = self.activity_source()
            choices = self.panel.vehicles.choices()
            settings = choices.settings(
                network, activity, self.defaults, iterations=self.panel.vehicles.iterations
            )
        except RoundsmanError as exc:
            self._say(f"Check the Vehicles settings: {exc}")
            return False
        self._edited_during_run = False
        self._cancelling = False
        self._pending = (settings, activity)
        return self.runner.start(network, settings)

    def _running(self, on: bool) -> None:
        self.plan_action.setEnabled(not on)
        self.cancel_action.setEnabled(on)
        self.panel.progress.setVisible(on)
        if on:
            self.panel.progress.setValue(0)

    def _on_started(self) -> None:
        self._running(True)
        if self.dock is not None:
            self.dock.show()
            self.dock.raise_()
        self._say("Planning routes: preparing…", status=False)

    def _on_progress(self, what: str, fraction: float) -> None:
        self.panel.progress.setValue(round(100 * min(max(fraction, 0.0), 1.0)))
        if not self._cancelling:
            secs = self.runner.seconds_running()
            self._say(f"Planning routes: {what}… {secs:.0f} s", status=False)

    def _on_finished(self, plan: object) -> None:
        self._running(False)
        if self._edited_during_run:
            self._say(STALE_TEXT)
            return
        assert isinstance(plan, FleetPlan)
        settings, activity = self._pending
        self.set_plan(plan, settings, activity)
        verdict = "every rule holds" if plan.feasible else "it breaks a rule (see below)"
        self._say(
            f"Planned {len(plan.routes)} routes with {plan.n_trips} trips in "
            f"{self.runner.elapsed_s:.1f} s; checked: {verdict}."
        )

    def _on_failed(self, exc: object) -> None:
        self._running(False)
        self._say(failure_text(exc, self.document.network, "Route planning", NO_DEPOT_TEXT))

    def _on_cancelled(self) -> None:
        self._running(False)
        self._say(CANCELLED_TEXT)

    # -- the plan --------------------------------------------------------------------
    def set_plan(
        self,
        plan: FleetPlan | None,
        settings: FleetSettings | None = None,
        activity: Activity | None = None,
    ) -> None:
        """Hold ``plan`` (made with ``settings`` for ``activity``) and show it; ``None``
        clears it, and the route it put on the map."""
        if plan is None and self.plan is None:
            return
        self.plan, self.settings, self.activity = plan, settings, activity
        if self._shown is not None and self.document.plan is self._shown:
            self.document.set_plan(None)
        self._shown = None
        network = self.document.network
        load_unit = settings.vehicles[0].capacity_unit if settings is not None else ""
        self.units = units_for(network, load_unit)
        titles = [self.units.column_title(t) for t in ROUTE_COLUMNS]
        if plan is None:
            self.panel.routes_model.set_cells([], titles)
            self.panel.show_summary([], [])
        else:
            tips = ["\n".join(route_issues(plan, r)) for r in plan.routes]
            self.panel.routes_model.set_cells(route_cells(plan, self.units), titles, tips)
            self.panel.show_summary(totals_lines(plan, self.units), verdict_lines(plan))
        self._show_trips(None)
        has_cards = plan is not None and any(r.steps for r in plan.routes)
        self.print_action.setEnabled(has_cards)
        self.pdf_action.setEnabled(has_cards)
        self.planChanged.emit(plan)

    def show_route(self, index: int | None) -> None:
        """Show route ``index`` on the map (through the document's plan) and its trips."""
        plan = self.plan
        if plan is None or index is None or not (0 <= index < len(plan.routes)):
            self._show_trips(None)
            return
        route = plan.routes[index]
        self._show_trips(index)
        if self.panel.selected_route() != index:
            self.panel.select_route(index)  # comes back here through routePicked
            return
        if not route.steps:
            return
        shown = route.as_plan(self.document.network.name)
        self._shown = shown
        self._shown_index = index
        self.document.set_plan(shown)

    def _show_trips(self, index: int | None) -> None:
        titles = [self.units.column_title(t) for t in TRIP_COLUMNS]
        if self.plan is None or index is None:
            self.panel.trips_model.set_cells([], titles)
            self.panel.trips_title.setText("Trips of the selected route")
            return
        route = self.plan.routes[index]
        self.panel.trips_model.set_cells(trip_cells(route, self.units), titles)
        self.panel.trips_title.setText(f"Trips of vehicle {route.vehicle}")

    # -- the document's side -----------------------------------------------------------
    def _on_edited(self, *_: object) -> None:
        if self.runner.running:
            self._edited_during_run = True
        if self.plan is not None:
            self.set_plan(None)
            self._say(CLEARED_TEXT, status=False)

    def _on_reset(self) -> None:
        self._on_edited()
        self.refresh_defaults(from_file=True)

    def _on_document_plan(self, plan: object) -> None:
        """Another circuit on the map (planned, or cleared): no route row is selected."""
        if plan is None or plan is not self._shown:
            self._shown = None
            if self.panel.selected_route() is not None:
                self.panel.routes_table.selectionModel().blockSignals(True)
                self.panel.routes_table.clearSelection()
                self.panel.routes_table.selectionModel().blockSignals(False)
                self.panel.routes_table.viewport().update()
                self._show_trips(None)

    # -- route cards -------------------------------------------------------------------
    def shown_route_card(self) -> CardContent | None:
        """The fleet card of the route shown on the map (with its reload stops and its
        "Route i of n" header), or None when the document shows no route of this plan:
        File ▸ Print route card then prints that card rather than a bare circuit."""
        if self.plan is None or self._shown is None or self.document.plan is not self._shown:
            return None
        route = self.plan.routes[self._shown_index]
        with_steps = [r for r in self.plan.routes if r.steps]
        return self.card_contents()[with_steps.index(route)]

    def card_contents(self) -> list[CardContent]:
        """One card per vehicle route with passes (:func:`core.fleet.cards.fleet_cards`,
        as ``roundsman card`` makes them).  Raises :class:`RoundsmanError` if none."""
        from core.errors import FleetError
        from core.fleet.cards import fleet_cards

        if self.plan is None:
            raise FleetError(NO_PLAN_TEXT)
        vt = self.settings.vehicles[0] if self.settings is not None else None
        cards = fleet_cards(
            self.document.network,
            self.plan,
            activity=self.activity or self.activity_source(),
            drive=self.drive_source(),
            load_unit=vt.capacity_unit if vt is not None else "",
            capacity=vt.capacity if vt is not None else None,
        )
        return [c.content for c in cards]

    def save_pdf(self, path: str | Path) -> list[int] | None:
        """Write the fleet's route cards to ``path`` (atomically); the pages per card, or
        None when it could not (the message says why)."""
        from app.card.render import write_cards_pdf

        try:
            pages = write_cards_pdf(self.card_contents(), str(path), self.page_size)
        except (RoundsmanError, OSError) as exc:
            self._say(f"The route cards were not saved: {exc}")
            return None
        self._say(
            f"Route cards saved to {Path(path).name}: {len(pages)} routes, {sum(pages)} pages."
        )
        return pages

    def ask_pdf_path(self) -> str:
        name = f"{self.document.network.name or 'district'} route cards.pdf"
        start = str(Path(self._last_dir()) / name)
        path, _ = QFileDialog.getSaveFileName(self.panel, "Save route cards", start, PDF_FILTER)
        if path and not Path(path).suffix:
            path += ".pdf"
        return path

    def _last_dir(self) -> str:
        settings = getattr(self.parent(), "settings", None)
        value = settings.value("files/last_dir", str(Path.home())) if settings else None
        return str(value or Path.home())

    def save_pdf_dialog(self) -> bool:
        if self.plan is None:
            self._say(NO_PLAN_TEXT)
            return False
        path = self.ask_pdf_path()
        return bool(path) and self.save_pdf(path) is not None

    def print_cards(self) -> bool:
        """Print the fleet's route cards (the printer dialog asks where)."""
        from app.card.render import print_cards

        try:
            contents = self.card_contents()
        except RoundsmanError as exc:
            self._say(f"The route cards cannot be printed: {exc}")
            return False
        return bool(print_cards(self.panel, contents, self.page_size))


def install_fleet(window: QMainWindow) -> FleetController:
    """Add fleet plans to Roundsman's main window: the "Routes" dock (Vehicles settings,
    routes, trips), Plan menu entries after the circuit's, the route-card entries in the
    File menu and a View menu toggle (``window.document``, ``window.menus``; the
    activity and traffic side come from ``window.planning.panel`` when present)."""
    plan_panel = getattr(getattr(window, "planning", None), "panel", None)
    activity = getattr(plan_panel, "current_activity", None)
    drive = getattr(getattr(plan_panel, "drive", None), "currentData", None)
    ctl = FleetController(
        window.document,  # type: ignore[attr-defined]
        window.statusBar(),
        parent=window,
        activity=activity if callable(activity) else None,
        drive=drive if callable(drive) else None,
    )
    settings = getattr(window, "settings", None)
    if isinstance(settings, QSettings):
        ctl.panel.vehicles.restore(settings)
        ctl.refresh_defaults(from_file=True)
    changed = getattr(plan_panel, "settingsChanged", None)
    if changed is not None:  # another activity: another capacity unit and default
        changed.connect(ctl.refresh_defaults)
    app = QApplication.instance()
    if app is not None:  # stop a run before Qt goes away (the thread would abort the exit)
        app.aboutToQuit.connect(ctl.shutdown)
    dock = dock_beside_circuit(window, "Routes", "routesDock", ctl.panel)
    ctl.dock = dock
    menus = getattr(window, "menus", {})
    # right after the circuit's plan and cancel entries, and after Print route card
    cancel = getattr(getattr(window, "planning", None), "cancel_action", None)
    _insert_after(menus.get("plan"), cancel, [ctl.plan_action, ctl.cancel_action])
    card = getattr(window, "act_print_card", None)
    _insert_after(menus.get("file"), card, [ctl.print_action, ctl.pdf_action])
    view_menu = menus.get("view")
    if view_menu is not None:
        view_menu.addAction(dock.toggleViewAction())
    return ctl


def _insert_after(menu: Any, anchor: Any, actions: list[QAction]) -> None:
    """Put ``actions`` into ``menu`` right after ``anchor`` (at the end without it)."""
    if menu is None:
        return
    present = menu.actions()
    after = present.index(anchor) + 1 if anchor in present else len(present)
    if after < len(present):
        menu.insertActions(present[after], actions)
    else:
        menu.addActions(actions)
