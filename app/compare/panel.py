"""The "Depots" panel: candidates, vehicle settings, run and cancel, table, chart, CSV.

The panel only gathers what the user chose and shows results; the
:class:`app.compare.controller.ComparisonController` runs the comparison.
"""

from __future__ import annotations

import re

from PySide6.QtCore import Qt, Signal
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
    QListWidget,
    QProgressBar,
    QPushButton,
    QScrollArea,
    QSplitter,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from app.compare.chart import CompareChart
from app.compare.model import CompareModel
from core.activity import PRESETS, activity_preset
from core.errors import FleetError
from core.fleet.compare import Candidate
from core.fleet.settings import FleetSettings, VehicleType, settings_from_network
from core.model import Network

__all__ = ["ComparePanel", "parse_counts", "parse_ids"]

NO_ACTIVITY = ""


def parse_ids(text: str) -> list[str]:
    """Junction ids typed by the user: separated by commas, semicolons or spaces."""
    return [t for t in re.split(r"[,;\s]+", text.strip()) if t]


def parse_counts(text: str) -> list[int | None]:
    """Vehicle counts typed as ``1,2,3``; empty means "as many as needed" (``[None]``).

    Raises :class:`FleetError` naming a count that is not a whole number of at least 1.
    """
    parts = [t for t in re.split(r"[,;\s]+", text.strip()) if t]
    if not parts:
        return [None]
    out: list[int | None] = []
    for p in parts:
        try:
            n = int(p)
        except ValueError:
            raise FleetError(f"vehicle count {p!r} is not a whole number") from None
        if n < 1:
            raise FleetError(f"vehicle count {p!r} must be at least 1")
        out.append(n)
    return list(dict.fromkeys(out))


class ComparePanel(QWidget):
    """Candidate depots, vehicle settings, progress, results."""

    rowPicked = Signal(int)
    """A result row was clicked (0-based)."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        outer = QVBoxLayout(self)
        outer.setContentsMargins(4, 4, 4, 4)

        # -- candidates ---------------------------------------------------------------
        box = QGroupBox("Candidate depots")
        lay = QVBoxLayout(box)
        self.candidates = QListWidget()
        self.candidates.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.candidates.setMaximumHeight(110)
        self.candidates.setToolTip("Junctions to try as the depot, one plan each")
        lay.addWidget(self.candidates)
        row = QHBoxLayout()
        self.add_picked_button = QPushButton("Add picked junctions")
        self.add_picked_button.setToolTip(
            "Add the junctions picked on the map (Pick tool: click a junction, Shift adds)"
        )
        self.add_depot_button = QPushButton("Add depot")
        self.add_depot_button.setToolTip("Add the drawing's depot")
        row.addWidget(self.add_picked_button)
        row.addWidget(self.add_depot_button)
        lay.addLayout(row)
        row = QHBoxLayout()
        self.id_edit = QLineEdit()
        self.id_edit.setPlaceholderText("junction ids, e.g. n12, n40")
        self.add_ids_button = QPushButton("Add")
        row.addWidget(self.id_edit, 1)
        row.addWidget(self.add_ids_button)
        lay.addLayout(row)
        row = QHBoxLayout()
        self.remove_button = QPushButton("Remove")
        self.clear_button = QPushButton("Clear")
        row.addWidget(self.remove_button)
        row.addWidget(self.clear_button)
        row.addStretch(1)
        lay.addLayout(row)
        outer.addWidget(box)

        # -- vehicles -----------------------------------------------------------------
        box = QGroupBox("Vehicles")
        form = QFormLayout(box)
        self.counts_edit = QLineEdit()
        self.counts_edit.setPlaceholderText("as many as needed (or e.g. 1, 2, 3)")
        self.counts_edit.setToolTip("Vehicles available; a list compares each count")
        form.addRow("Vehicles", self.counts_edit)
        self.activity = QComboBox()
        self.activity.addItem("Plain distances", NO_ACTIVITY)
        for name, preset in PRESETS.items():
            self.activity.addItem(preset.label, name)
        self.activity.setToolTip("The activity's speeds and material use")
        form.addRow("Activity", self.activity)
        self.capacity = QDoubleSpinBox()
        self.capacity.setRange(0.0, 1e9)
        self.capacity.setDecimals(2)
        self.capacity.setSpecialValueText("from the file, else none")
        self.capacity.setToolTip("What one vehicle carries, in the unit of the street demands")
        form.addRow("Capacity", self.capacity)
        self.max_time = QDoubleSpinBox()
        self.max_time.setRange(0.0, 24 * 60.0)
        self.max_time.setDecimals(0)
        self.max_time.setSuffix(" min")
        self.max_time.setSpecialValueText("from the file, else none")
        self.max_time.setToolTip("Minutes one route may take")
        form.addRow("Route time limit", self.max_time)
        self.search_time = QDoubleSpinBox()
        self.search_time.setRange(0.2, 600.0)
        self.search_time.setValue(5.0)
        self.search_time.setSuffix(" s")
        self.search_time.setToolTip("Seconds the route search may use for each candidate")
        form.addRow("Search time", self.search_time)
        outer.addWidget(box)
        self.iterations: int | None = None
        """Stop each search after this many iterations (runs that repeat exactly)."""

        # -- run ----------------------------------------------------------------------
        row = QHBoxLayout()
        self.run_button = QPushButton("Compare")
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setEnabled(False)
        row.addWidget(self.run_button)
        row.addWidget(self.cancel_button)
        outer.addLayout(row)
        self.progress = QProgressBar()
        self.progress.setRange(0, 100)
        self.progress.setVisible(False)
        outer.addWidget(self.progress)
        self.status = QLabel("")
        self.status.setWordWrap(True)
        outer.addWidget(self.status)

        # -- results ------------------------------------------------------------------
        self.model = CompareModel(self)
        self.table = QTableView()
        self.table.setModel(self.model)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.verticalHeader().setVisible(False)
        self.table.setMinimumHeight(80)
        self.chart = CompareChart()
        scroll = QScrollArea()
        scroll.setWidget(self.chart)
        scroll.setWidgetResizable(True)
        scroll.setMinimumHeight(80)
        self.results = QSplitter(Qt.Orientation.Vertical)
        self.results.addWidget(self.table)
        self.results.addWidget(scroll)
        self.results.setChildrenCollapsible(False)
        outer.addWidget(self.results, 1)
        row = QHBoxLayout()
        self.export_button = QPushButton("Export CSV…")
        self.export_button.setEnabled(False)
        row.addStretch(1)
        row.addWidget(self.export_button)
        outer.addLayout(row)

        self.remove_button.clicked.connect(self._remove_selected)
        self.clear_button.clicked.connect(self.candidates.clear)
        self.id_edit.returnPressed.connect(self.add_ids_button.click)
        self.table.selectionModel().selectionChanged.connect(self._rows_selected)

    # -- candidates ---------------------------------------------------------------------
    def depots(self) -> list[str]:
        return [self.candidates.item(k).text() for k in range(self.candidates.count())]

    def add_depots(self, ids: list[str]) -> list[str]:
        """Add ids not listed yet; returns those added."""
        have = set(self.depots())
        added = [i for i in dict.fromkeys(ids) if i not in have]
        self.candidates.addItems(added)
        return added

    def _remove_selected(self) -> None:
        for item in self.candidates.selectedItems():
            self.candidates.takeItem(self.candidates.row(item))

    def candidate_list(self) -> list[Candidate]:
        """One candidate per depot and vehicle count, depots first."""
        counts = parse_counts(self.counts_edit.text())
        return [Candidate(d, n) for d in self.depots() for n in counts]

    def fleet_settings(self, network: Network) -> FleetSettings:
        """The settings every candidate shares, as ``roundsman compare`` builds them:
        the activity gives speeds and the demand model, the file or the fields give
        capacity and time limit (:func:`core.fleet.settings_from_network`)."""
        name = self.activity.currentData()
        base = VehicleType()
        if name:
            base = VehicleType.from_activity(
                activity_preset(name), capacity=None, max_time_min=None
            )
        return settings_from_network(
            network,
            capacity=self.capacity.value() or None,
            max_time_min=self.max_time.value() or None,
            base=base,
            seed=0,
            time_limit=float(self.search_time.value()),
            iterations=self.iterations,
        )

    # -- results ------------------------------------------------------------------------
    def set_running(self, on: bool) -> None:
        self.run_button.setEnabled(not on)
        self.cancel_button.setEnabled(on)
        self.progress.setVisible(on)
        if on:
            self.progress.setValue(0)

    def show_rows(self, rows: list, unit: float) -> None:
        self.model.set_rows(rows, unit)
        self.chart.set_rows(rows, unit)
        self.export_button.setEnabled(bool(rows))

    def _rows_selected(self, *_: object) -> None:
        rows = self.table.selectionModel().selectedRows()
        index = rows[0].row() if rows else None
        self.chart.set_selected(index)
        if index is not None:
            self.rowPicked.emit(index)

    def select_row(self, index: int) -> None:
        self.table.selectRow(index)
