"""A bar chart of the depot comparison, drawn with QPainter.

PySide6-Essentials has no QtCharts, and two bars per depot need little: for
each candidate a pair of horizontal bars, deadhead and total distance, on one
scale.  Colours are from Okabe & Ito (2008) through :mod:`app.canvas.style`
(the street palette), and colour is never the only cue: the deadhead bar is
hatched, the total bar plain, and a candidate that could not be planned is an
empty outline with the word "failed" (our own patterns).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from PySide6.QtCore import QPointF, QRectF, QSize, Qt
from PySide6.QtGui import QBrush, QColor, QFontMetricsF, QPainter, QPaintEvent, QPen
from PySide6.QtWidgets import QSizePolicy, QWidget

from app.canvas.style import NEUTRAL_GREY, OI_BLUE, OI_VERMILLION
from core.fleet.compare import CompareRow

__all__ = ["BAR_LOOKS", "BarLook", "CompareChart"]


@dataclass(frozen=True)
class BarLook:
    """Fill colour and pattern of one kind of bar."""

    label: str
    colour: str
    pattern: Qt.BrushStyle | None = None
    """A black pattern drawn over the colour (``None``: plain)."""


BAR_LOOKS: dict[str, BarLook] = {
    "deadhead": BarLook("Deadhead", OI_VERMILLION, Qt.BrushStyle.BDiagPattern),
    "total": BarLook("Total distance", OI_BLUE),
}
"""Deadhead: vermilion with diagonal hatching; total: plain blue."""

ROW_PX = 40.0
BAR_PX = 14.0
MARGIN = 8.0


class CompareChart(QWidget):
    """Deadhead and total distance per candidate; shows the rows it is given."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.rows: list[CompareRow] = []
        self.unit = 1000.0
        self.selected: int | None = None
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Minimum)
        self.setMinimumHeight(60)

    def set_rows(self, rows: Sequence[CompareRow], unit: float = 1000.0) -> None:
        self.rows = list(rows)
        self.unit = unit
        self.selected = None
        self.updateGeometry()
        self.update()

    def set_selected(self, index: int | None) -> None:
        self.selected = index
        self.update()

    def sizeHint(self) -> QSize:
        return QSize(320, int(self._legend_h() + ROW_PX * max(len(self.rows), 1) + 2 * MARGIN))

    def _legend_h(self) -> float:
        return QFontMetricsF(self.font()).height() + 10.0

    def scale_max(self) -> float:
        """The longest bar's value in metres (at least 1)."""
        best = max((r.total_m for r in self.rows if not r.error), default=0.0)
        return max(best, max((r.deadhead_m for r in self.rows if not r.error), default=0.0), 1.0)

    def bar_rects(self) -> list[tuple[QRectF, QRectF]]:
        """The (deadhead, total) bar rectangles per row, in widget pixels."""
        fm = QFontMetricsF(self.font())
        label_w = max((fm.horizontalAdvance(self._label(r)) for r in self.rows), default=0.0)
        left = MARGIN + label_w + 8.0
        value_w = fm.horizontalAdvance("0000.00 km") + 8.0
        width = max(self.width() - left - value_w - MARGIN, 10.0)
        top = MARGIN + self._legend_h()
        top_m = self.scale_max()
        out = []
        for k, r in enumerate(self.rows):
            y = top + k * ROW_PX
            dead = 0.0 if r.error else width * r.deadhead_m / top_m
            total = 0.0 if r.error else width * r.total_m / top_m
            out.append(
                (
                    QRectF(left, y + 4.0, dead, BAR_PX - 2.0),
                    QRectF(left, y + 4.0 + BAR_PX, total, BAR_PX - 2.0),
                )
            )
        return out

    @staticmethod
    def _label(r: CompareRow) -> str:
        text = r.depot if r.vehicles is None else f"{r.depot} ×{r.vehicles}"
        return text if r.feasible or r.error else f"{text} (breaks a rule)"

    def _fill(self, painter: QPainter, rect: QRectF, look: BarLook) -> None:
        painter.fillRect(rect, QColor(look.colour))
        if look.pattern is not None:
            painter.fillRect(rect, QBrush(QColor("#000000"), look.pattern))
        painter.setPen(QPen(QColor("#000000"), 1.0))
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawRect(rect)

    def paintEvent(self, event: QPaintEvent) -> None:
        painter = QPainter(self)
        painter.fillRect(self.rect(), self.palette().base())
        fm = QFontMetricsF(self.font())
        # legend
        x = MARGIN
        for look in BAR_LOOKS.values():
            box = QRectF(x, MARGIN, 18.0, fm.height() - 2)
            self._fill(painter, box, look)
            painter.setPen(self.palette().text().color())
            painter.drawText(QPointF(x + 24.0, MARGIN + fm.ascent()), look.label)
            x += 24.0 + fm.horizontalAdvance(look.label) + 16.0
        if not self.rows:
            painter.setPen(QColor(NEUTRAL_GREY))
            painter.drawText(
                QPointF(MARGIN, MARGIN + self._legend_h() + fm.ascent()),
                "Compare depots to see the chart.",
            )
            painter.end()
            return
        unit_name = "km" if self.unit == 1000.0 else "m"
        for k, (r, (dead, total)) in enumerate(zip(self.rows, self.bar_rects(), strict=True)):
            y = dead.top() - 4.0
            if k == self.selected:
                painter.fillRect(
                    QRectF(0, y, self.width(), ROW_PX), self.palette().highlight().color().lighter()
                )
            painter.setPen(self.palette().text().color())
            painter.drawText(
                QRectF(MARGIN, y, dead.left() - MARGIN - 8.0, ROW_PX),
                Qt.AlignmentFlag.AlignVCenter | Qt.AlignmentFlag.AlignRight,
                self._label(r),
            )
            if r.error:
                outline = QRectF(dead.left(), dead.top(), 60.0, 2 * BAR_PX - 2.0)
                pen = QPen(QColor(NEUTRAL_GREY), 1.0, Qt.PenStyle.DashLine)
                painter.setPen(pen)
                painter.drawRect(outline)
                painter.drawText(outline, Qt.AlignmentFlag.AlignCenter, "failed")
                continue
            self._fill(painter, dead, BAR_LOOKS["deadhead"])
            self._fill(painter, total, BAR_LOOKS["total"])
            painter.setPen(self.palette().text().color())
            for rect, value in ((dead, r.deadhead_m), (total, r.total_m)):
                painter.drawText(
                    QPointF(rect.right() + 4.0, rect.top() + fm.ascent() - 2.0),
                    f"{value / self.unit:.2f} {unit_name}",
                )
        painter.end()
