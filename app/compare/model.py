"""The comparison table as a Qt model: one row per candidate, the engine's own cells.

The cells are :func:`core.fleet.compare.row_values` (the same text the
command line prints and writes as CSV), so the window, ``roundsman compare``
and the CSV file always agree.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from app.cell_table import CellTableModel
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


class CompareModel(CellTableModel):
    """Shows a list of :class:`CompareRow`; never changes it."""

    def __init__(self, parent: Any = None) -> None:
        super().__init__(HEADERS, sorted(_NUMERIC), parent, numbered=True)
        self.rows: list[CompareRow] = []
        self.unit = 1000.0

    def set_rows(self, rows: Sequence[CompareRow], unit: float = 1000.0) -> None:
        self.rows = list(rows)
        self.unit = unit
        length = " (km)" if unit == 1000.0 else " (m)"
        titles = [h + length if k in (2, 3) else h for k, h in enumerate(HEADERS)]
        tips = [r.error or "\n".join(r.issues) for r in self.rows]
        self.set_cells([row_values(r, unit) for r in self.rows], titles, tips)

    def csv_text(self) -> str:
        """The table as CSV (RFC 4180), as ``roundsman compare --csv`` writes it."""
        return rows_csv(self.rows, self.unit)
