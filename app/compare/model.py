"""The comparison table as a Qt model: one row per candidate, the engine's own cells.

The cells are :func:`core.fleet.compare.row_values` (the same text the
command line prints and writes as CSV), so the window, ``roundsman compare``
and the CSV file always agree.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

from core.fleet.compare import CompareRow, row_values, rows_csv

__all__ = ["HEADERS", "CompareModel"]

HEADERS = (
    "Depot",
    "Vehicles given",
    "Deadhead",
    "Total",
    "Hours",
    "Vehicles needed",
    "Trips",
    "Feasible",
    "Note",
)
"""Column titles for people, in the order of :data:`core.fleet.compare.COLUMNS`."""

_NUMERIC = {2, 3, 4, 5, 6}

Index = QModelIndex | QPersistentModelIndex


class CompareModel(QAbstractTableModel):
    """Shows a list of :class:`CompareRow`; never changes it."""

    def __init__(self, parent: Any = None) -> None:
        super().__init__(parent)
        self.rows: list[CompareRow] = []
        self.unit = 1000.0
        self._cells: list[list[str]] = []

    def set_rows(self, rows: Sequence[CompareRow], unit: float = 1000.0) -> None:
        self.beginResetModel()
        self.rows = list(rows)
        self.unit = unit
        self._cells = [row_values(r, unit) for r in self.rows]
        self.endResetModel()

    def csv_text(self) -> str:
        """The table as CSV (RFC 4180), as ``roundsman compare --csv`` writes it."""
        return rows_csv(self.rows, self.unit)

    def cells(self) -> list[list[str]]:
        return [list(c) for c in self._cells]

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(self._cells)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(HEADERS)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid():
            return None
        r, c = index.row(), index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return self._cells[r][c]
        if role == Qt.ItemDataRole.TextAlignmentRole and c in _NUMERIC:
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.ToolTipRole:
            row = self.rows[r]
            return row.error or "\n".join(row.issues) or None
        return None

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        if role != Qt.ItemDataRole.DisplayRole:
            return None
        if orientation == Qt.Orientation.Horizontal:
            title = HEADERS[section]
            if section in (2, 3):
                title += " (km)" if self.unit == 1000.0 else " (m)"
            return title
        return str(section + 1)
