"""A read-only Qt table of text cells, shared by the window's result tables.

The fleet's route and trip tables (cells from :mod:`app.fleet.figures`) and the depot
comparison (cells from :func:`core.fleet.compare.row_values`) show the cells they are
handed and never hold the plan; their controllers make the cells and hand them in.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

__all__ = ["CellTableModel"]

Index = QModelIndex | QPersistentModelIndex


class CellTableModel(QAbstractTableModel):
    """A read-only table of text cells with column titles and a tooltip per row."""

    def __init__(
        self,
        titles: Sequence[str],
        numeric: Sequence[int] = (),
        parent: Any = None,
        *,
        numbered: bool = False,
    ) -> None:
        super().__init__(parent)
        self._titles = list(titles)
        self._numeric = set(numeric)
        self._numbered = numbered  # row numbers down the side
        self._cells: list[list[str]] = []
        self._tips: list[str] = []

    def set_cells(
        self,
        cells: Sequence[Sequence[str]],
        titles: Sequence[str] | None = None,
        tips: Sequence[str] = (),
    ) -> None:
        """Show ``cells`` (one list per row); ``titles`` replaces the column titles."""
        self.beginResetModel()
        self._cells = [list(row) for row in cells]
        if titles is not None:
            self._titles = list(titles)
        self._tips = list(tips)
        self.endResetModel()

    def cells(self) -> list[list[str]]:
        return [list(row) for row in self._cells]

    def titles(self) -> list[str]:
        return list(self._titles)

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(self._cells)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(self._titles)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid():
            return None
        r, c = index.row(), index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return self._cells[r][c]
        if role == Qt.ItemDataRole.TextAlignmentRole and c in self._numeric:
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.ToolTipRole and r < len(self._tips):
            return self._tips[r] or None
        return None

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        if role != Qt.ItemDataRole.DisplayRole:
            return None
        if orientation == Qt.Orientation.Horizontal and 0 <= section < len(self._titles):
            return self._titles[section]
        if orientation == Qt.Orientation.Vertical and self._numbered:
            return str(section + 1)
        return None
