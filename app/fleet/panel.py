"""The "Routes" panel: the Vehicles settings, run and cancel, the verdict, routes and trips.

The panel gathers what the user chose and shows what it is handed; it never holds the
network or the fleet plan (:class:`app.fleet.controller.FleetController` does).
"""

from __future__ import annotations

import html
from collections.abc import Sequence

from PySide6.QtCore import QSettings, Qt, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QScrollArea,
    QSpinBox,
    QSplitter,
    QTableView,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from app.cell_table import CellTableModel
from app.fleet.choices import (
    DAY_CHOICES,
    MAX_SEARCH_S,
    FleetDefaults,
    VehicleChoices,
    number_text,
    parse_capacity,
    parse_max_time,
    parse_vehicles,
)
from app.fleet.figures import ROUTE_COLUMNS, TRIP_COLUMNS, unit_name
from app.plan.panel import run_row
from core.fleet.cards import weekday_name

__all__ = ["RoutesPanel", "VehiclesBox"]

DEFAULT_SEARCH_S = 10.0
"""The route search's default time, as ``roundsman plan --search-time``."""
KEY = "fleet/"
"""Where the settings are kept in :class:`QSettings`."""


class VehiclesBox(QGroupBox):
    """The Vehicles settings: how many, what one carries, how long, which day, search."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Vehicles", parent)
        self.vehicles = QLineEdit()
        self.vehicles.setPlaceholderText("as many as needed")
        self.vehicles.setToolTip("How many vehicles are available; empty: as many as needed")
        self.capacity = QLineEdit()
        self.capacity.setToolTip(
            "What one vehicle carries, in the unit of the activity (hopper m³, salt t) or, "
            "for research files, of the street demands; empty: no capacity limit"
        )
        self.capacity_label = QLabel("Capacity")
        self.max_time = QLineEdit()
        self.max_time.setPlaceholderText("no time limit")
        self.max_time.setToolTip("Minutes one route (a shift or a treatment) may take")
        self.day = QComboBox()
        for code in DAY_CHOICES:
            self.day.addItem("Any day" if code is None else weekday_name(code), code)
        self.day.setToolTip("Plan only the streets serviced on this day (the streets' days)")
        self.search_time = QDoubleSpinBox()
        self.search_time.setRange(0.5, MAX_SEARCH_S)
        self.search_time.setDecimals(1)
        self.search_time.setValue(DEFAULT_SEARCH_S)
        self.search_time.setSuffix(" s")
        self.search_time.setToolTip("Seconds the route search may use; longer finds shorter")
        self.seed = QSpinBox()
        self.seed.setRange(0, 2**31 - 1)
        self.seed.setToolTip("Another seed gives the search another start")
        self.defaults_button = QPushButton("Defaults")
        self.defaults_button.setToolTip(
            "Vehicles, capacity and time limit as the file states them, else the "
            "activity's capacity"
        )
        self.source = QLabel("")
        self.source.setWordWrap(True)
        form = QFormLayout(self)
        form.addRow("Vehicles", self.vehicles)
        form.addRow(self.capacity_label, self.capacity)
        form.addRow("Time limit (min)", self.max_time)
        form.addRow("Service day", self.day)
        form.addRow("Search time", self.search_time)
        form.addRow("Seed", self.seed)
        row = QHBoxLayout()
        row.addWidget(self.source, 1)
        row.addWidget(self.defaults_button)
        form.addRow(row)
        self.unit = ""
        self.iterations: int | None = None
        """Stop the search after this many iterations (runs that repeat exactly)."""
        self.user_set: set[str] = set()
        """Fields the user typed in since the last defaults (others follow the activity)."""
        self._settings: QSettings | None = None
        for key, edit in self._edits().items():
            edit.textEdited.connect(lambda _t, k=key: self.user_set.add(k))

    def _edits(self) -> dict[str, QLineEdit]:
        return {"vehicles": self.vehicles, "capacity": self.capacity, "max_time": self.max_time}

    # -- defaults ----------------------------------------------------------------------
    def set_unit(self, unit: str) -> None:
        self.unit = unit
        shown = unit_name(unit)
        self.capacity_label.setText(f"Capacity ({shown})" if shown else "Capacity")

    def apply_defaults(self, defaults: FleetDefaults, *, only_unset: bool = False) -> None:
        """Fill vehicles, capacity and time limit from ``defaults``; with ``only_unset``
        the fields the user typed in keep their values."""
        self.set_unit(defaults.capacity_unit)
        values = {
            "vehicles": "" if defaults.vehicles is None else str(defaults.vehicles),
            "capacity": number_text(defaults.capacity),
            "max_time": number_text(defaults.max_time_min),
        }
        for key, edit in self._edits().items():
            if only_unset and key in self.user_set:
                continue
            edit.setText(values[key])
            self.user_set.discard(key)
        if defaults.from_file:
            self.capacity.setPlaceholderText(
                f"the file's ({number_text(defaults.capacity)})"
                if defaults.capacity is not None
                else "no capacity limit"
            )
            self.source.setText(f"Defaults from {defaults.source}.")
        else:
            self.capacity.setPlaceholderText("no capacity limit")
            self.source.setText(f"Defaults from {defaults.source}.")

    # -- what the controller reads -----------------------------------------------------
    def choices(self) -> VehicleChoices:
        """The settings as typed; raises :class:`core.errors.FleetError` naming the field."""
        return VehicleChoices(
            vehicles=parse_vehicles(self.vehicles.text()),
            capacity=parse_capacity(self.capacity.text(), unit_name(self.unit)),
            max_time_min=parse_max_time(self.max_time.text()),
            day=self.day.currentData(),
            search_time_s=float(self.search_time.value()),
            seed=int(self.seed.value()),
        )

    # -- preferences -------------------------------------------------------------------
    def restore(self, settings: QSettings) -> None:
        """Take the settings saved under ``fleet/`` (if any) and keep them saved.

        Vehicles, capacity and time limit are kept only as the user typed them (so the
        figures a file states are not carried to the next drawing); the Defaults button
        forgets them."""
        self._settings = settings
        self.reload_typed()
        day = settings.value(KEY + "day")
        i = self.day.findData(day) if day not in (None, "") else -1
        if i >= 0:
            self.day.setCurrentIndex(i)
        for key, box in (("search_time_s", self.search_time), ("seed", self.seed)):
            value = settings.value(KEY + key)
            try:
                if value is not None:
                    box.setValue(type(box.value())(float(value)))
            except (TypeError, ValueError):
                pass  # a hand-edited settings file: keep the default
        for edit in self._edits().values():
            edit.textEdited.connect(self._save)
        self.day.currentIndexChanged.connect(self._save)
        self.search_time.valueChanged.connect(self._save)
        self.seed.valueChanged.connect(self._save)

    def reload_typed(self) -> None:
        """Put back the vehicles, capacity and time limit the user typed and kept."""
        if self._settings is None:
            return
        for key, edit in self._edits().items():
            value = self._settings.value(KEY + key)
            if value is not None:
                edit.setText(str(value))
                self.user_set.add(key)

    def forget_typed(self) -> None:
        """Forget the vehicles, capacity and time limit the user typed (Defaults)."""
        self.user_set.clear()
        if self._settings is not None:
            for key in self._edits():
                self._settings.remove(KEY + key)

    def _save(self, *_: object) -> None:
        settings = self._settings
        if settings is None:
            return
        for key, edit in self._edits().items():
            if key in self.user_set:
                settings.setValue(KEY + key, edit.text())
        settings.setValue(KEY + "day", self.day.currentData() or "")
        settings.setValue(KEY + "search_time_s", self.search_time.value())
        settings.setValue(KEY + "seed", self.seed.value())


def _table(model: CellTableModel) -> QTableView:
    table = QTableView()
    table.setModel(model)
    table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
    table.verticalHeader().setVisible(False)
    table.verticalHeader().setDefaultSectionSize(20)
    table.setAlternatingRowColors(True)
    header = table.horizontalHeader()
    header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
    header.setStretchLastSection(True)
    return table


class RoutesPanel(QWidget):
    """Vehicles settings, run and cancel, progress, totals and verdict, routes, trips."""

    routePicked = Signal(object)
    """A route row was selected (0-based index) or the selection cleared (None)."""

    def __init__(
        self,
        plan_action: QAction,
        cancel_action: QAction,
        card_actions: Sequence[QAction] = (),
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.vehicles = VehiclesBox()
        run, self.progress, self.status = run_row(
            (plan_action, cancel_action),
            "Press “Plan routes for the fleet” to split the work into routes.",
        )
        self.summary = QLabel("")
        self.summary.setTextFormat(Qt.TextFormat.RichText)
        self.summary.setWordWrap(True)
        self.summary.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.routes_model = CellTableModel(ROUTE_COLUMNS, numeric=(1, 2, 3, 4, 5), parent=self)
        self.trips_model = CellTableModel(TRIP_COLUMNS, numeric=(0, 3, 4, 5, 6), parent=self)
        self.routes_table = _table(self.routes_model)
        self.trips_table = _table(self.trips_model)
        self.trips_table.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        self.trips_title = QLabel("Trips of the selected route")
        cards = QHBoxLayout()
        for action in card_actions:
            button = QToolButton()
            button.setDefaultAction(action)
            button.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
            cards.addWidget(button)
        cards.addStretch(1)

        top = QWidget()
        top_layout = QVBoxLayout(top)
        top_layout.setContentsMargins(0, 0, 0, 0)
        top_layout.addWidget(self.vehicles)
        top_layout.addStretch(1)
        scroll = QScrollArea()
        scroll.setWidgetResizable(True)
        scroll.setFrameShape(QScrollArea.Shape.NoFrame)
        scroll.setWidget(top)
        routes = QWidget()
        routes_layout = QVBoxLayout(routes)
        routes_layout.setContentsMargins(0, 0, 0, 0)
        summary = QScrollArea()
        summary.setWidgetResizable(True)
        summary.setFrameShape(QScrollArea.Shape.NoFrame)
        summary.setWidget(self.summary)
        routes_layout.addWidget(summary, 1)
        routes_layout.addWidget(QLabel("Routes (select one to show it on the map)"))
        routes_layout.addWidget(self.routes_table, 2)
        trips = QWidget()
        trips_layout = QVBoxLayout(trips)
        trips_layout.setContentsMargins(0, 0, 0, 0)
        trips_layout.addWidget(self.trips_title)
        trips_layout.addWidget(self.trips_table, 1)
        self.splitter = QSplitter(Qt.Orientation.Vertical)
        for part in (scroll, routes, trips):
            self.splitter.addWidget(part)
        self.splitter.setChildrenCollapsible(False)
        self.splitter.setStretchFactor(0, 2)
        self.splitter.setStretchFactor(1, 4)
        self.splitter.setStretchFactor(2, 1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addLayout(run)
        layout.addWidget(self.progress)
        layout.addWidget(self.status)
        layout.addWidget(self.splitter, 1)
        layout.addLayout(cards)
        self.routes_table.selectionModel().selectionChanged.connect(self._rows_selected)

    # -- what the controller shows -------------------------------------------------------
    def show_summary(self, rows: Sequence[tuple[str, str]], verdict: Sequence[str]) -> None:
        if not rows:
            self.summary.setText("")
            return
        cells = "".join(
            f"<tr><td><b>{html.escape(k)}</b></td><td>&nbsp;{html.escape(v)}</td></tr>"
            for k, v in rows
        )
        lines = "<br>".join(html.escape(v) for v in verdict)
        self.summary.setText(f"<p>{lines}</p><table>{cells}</table>")

    def summary_text(self) -> str:
        return self.summary.text()

    def selected_route(self) -> int | None:
        rows = self.routes_table.selectionModel().selectedRows()
        return rows[0].row() if rows else None

    def select_route(self, index: int | None) -> None:
        """Select a route row (``None`` clears the selection)."""
        if index is None:
            self.routes_table.clearSelection()
        else:
            self.routes_table.selectRow(index)

    def _rows_selected(self, *_: object) -> None:
        self.routePicked.emit(self.selected_route())
