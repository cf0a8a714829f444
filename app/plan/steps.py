"""The circuit's steps as a Qt table model: one row per pass.

Columns: step number, street, direction of travel, service or deadhead,
length and the distance driven by the end of the step.  The model is
handed a network and a plan and reads them; it never changes them.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt
from PySide6.QtGui import QColor

from app.plan.style import DEADHEAD, SERVICE
from core.directions import compass_point, format_distance, step_coords, street_label
from core.model import Network
from core.plan import Plan
from core.turns import leaving_bearing

__all__ = ["COLUMNS", "StepTableModel"]

COLUMNS = ("Step", "Street", "Direction", "Kind", "Length", "Driven")
"""Column titles."""

Index = QModelIndex | QPersistentModelIndex


def _direction(network: Network, plan: Plan, i: int) -> str:
    """``"north-east (n3 → n4)"``: the compass heading leaving the first junction, and
    the junctions."""
    step = plan.steps[i]
    text = f"{step.start} → {step.end}"
    if step.segment not in network.segments:
        return text
    coords = step_coords(network, step)
    if coords is None:
        return text
    try:
        heading = compass_point(leaving_bearing(coords, True))
    except ValueError:  # a line whose points all coincide has no heading
        return text
    return f"{heading} ({text})"


class StepTableModel(QAbstractTableModel):
    """Rows are the plan's steps; cells are computed when Qt asks (O(1) each)."""

    def __init__(self, parent: Any = None) -> None:
        super().__init__(parent)
        self.network: Network | None = None
        self.plan: Plan | None = None
        self._cumulative = np.zeros(0)
        self._colours = {True: QColor(SERVICE.colour), False: QColor(DEADHEAD.colour)}

    def set_plan(self, network: Network | None, plan: Plan | None) -> None:
        """Show ``plan``'s steps over ``network`` (``None`` empties the table)."""
        self.beginResetModel()
        self.network, self.plan = network, plan
        steps = plan.steps if plan is not None else []
        self._cumulative = np.cumsum([s.length for s in steps]) if steps else np.zeros(0)
        self.endResetModel()

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        if parent.isValid() or self.plan is None:
            return 0
        return len(self.plan.steps)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        if role != Qt.ItemDataRole.DisplayRole:
            return None
        if orientation == Qt.Orientation.Horizontal:
            return COLUMNS[section] if 0 <= section < len(COLUMNS) else None
        return None

    def street(self, row: int) -> str:
        """The street of a step, as the driver reads it."""
        assert self.plan is not None and self.network is not None
        sid = self.plan.steps[row].segment
        seg = self.network.segments.get(sid)
        return (
            f"{street_label(seg)} ({sid})"
            if seg is not None and seg.name
            else (street_label(seg) if seg is not None else sid)
        )

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid() or self.plan is None or self.network is None:
            return None
        row, col = index.row(), index.column()
        step = self.plan.steps[row]
        if role == Qt.ItemDataRole.DisplayRole:
            if col == 0:
                return row + 1
            if col == 1:
                return self.street(row)
            if col == 2:
                return _direction(self.network, self.plan, row)
            if col == 3:
                return "service" if step.service else "deadhead"
            if col == 4:
                return format_distance(step.length)
            if col == 5:
                return format_distance(float(self._cumulative[row]))
        if role == Qt.ItemDataRole.ForegroundRole and col == 3:
            return self._colours[step.service]
        if role == Qt.ItemDataRole.TextAlignmentRole and col in (0, 4, 5):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.UserRole:
            return step.segment
        return None
