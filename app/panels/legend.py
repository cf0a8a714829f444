"""The key: what each line look and mark on the canvas means."""

from __future__ import annotations

from PySide6.QtCore import QPointF, QSize, Qt
from PySide6.QtGui import QBrush, QColor, QPainter, QPixmap, QPolygonF
from PySide6.QtWidgets import QGridLayout, QLabel, QWidget

from app.canvas.style import ARROW_COLOUR, DEPOT_COLOUR, LOOKS, NODE_COLOUR

SWATCH = QSize(56, 16)


def line_swatch(service) -> QPixmap:
    """A short sample of the street look for ``service``."""
    pix = QPixmap(SWATCH)
    pix.fill(Qt.GlobalColor.transparent)
    painter = QPainter(pix)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    painter.setPen(LOOKS[service].pen())
    painter.drawLine(
        QPointF(3, SWATCH.height() / 2), QPointF(SWATCH.width() - 3, SWATCH.height() / 2)
    )
    painter.end()
    return pix


def _mark_swatch(kind: str) -> QPixmap:
    pix = QPixmap(SWATCH)
    pix.fill(Qt.GlobalColor.transparent)
    painter = QPainter(pix)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    cy = SWATCH.height() / 2
    if kind == "arrow":
        painter.setPen(LOOKS[next(iter(LOOKS))].pen())
        painter.drawLine(QPointF(3, cy), QPointF(SWATCH.width() - 3, cy))
        painter.setPen(Qt.PenStyle.NoPen)
        painter.setBrush(QBrush(QColor(ARROW_COLOUR)))
        cx = SWATCH.width() / 2
        painter.drawPolygon(
            QPolygonF([QPointF(cx + 6, cy), QPointF(cx - 4, cy - 5), QPointF(cx - 4, cy + 5)])
        )
    elif kind == "turning":
        painter.setBrush(QBrush(QColor(NODE_COLOUR)))
        painter.setPen(QColor("#FFFFFF"))
        painter.drawRect(SWATCH.width() / 2 - 3, cy - 3, 6, 6)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.setPen(QColor(NODE_COLOUR))
        painter.drawEllipse(QPointF(SWATCH.width() / 2, cy), 7, 7)
    elif kind == "node":
        painter.setBrush(QBrush(QColor(NODE_COLOUR)))
        painter.setPen(QColor("#FFFFFF"))
        painter.drawRect(SWATCH.width() / 2 - 3, cy - 3, 6, 6)
    else:
        painter.setBrush(QBrush(QColor(DEPOT_COLOUR)))
        painter.setPen(QColor("#000000"))
        cx = SWATCH.width() / 2
        painter.drawPolygon(
            QPolygonF(
                [
                    QPointF(cx, cy - 7),
                    QPointF(cx + 7, cy - 1),
                    QPointF(cx + 7, cy + 7),
                    QPointF(cx - 7, cy + 7),
                    QPointF(cx - 7, cy - 1),
                ]
            )
        )
    painter.end()
    return pix


class LegendPanel(QWidget):
    """A small key to the street looks (colour, width and dashes) and marks."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        grid = QGridLayout(self)
        grid.setContentsMargins(8, 8, 8, 8)
        row = 0
        for service, look in LOOKS.items():
            swatch = QLabel()
            swatch.setPixmap(line_swatch(service))
            text = QLabel(f"<b>{look.label}</b><br><small>{look.explanation}</small>")
            grid.addWidget(swatch, row, 0)
            grid.addWidget(text, row, 1)
            row += 1
        for kind, text in (
            ("arrow", "One-way: traffic goes the way of the arrow"),
            ("node", "Junction (shown when zoomed in)"),
            ("turning", "Turning place: vehicles may turn round"),
            ("depot", "Depot: where the circuit starts and ends"),
        ):
            swatch = QLabel()
            swatch.setPixmap(_mark_swatch(kind))
            grid.addWidget(swatch, row, 0)
            grid.addWidget(QLabel(text), row, 1)
            row += 1
        note = QLabel(
            "<small>Colours: Okabe &amp; Ito (2008), safe for colour-blind readers.</small>"
        )
        note.setWordWrap(True)
        grid.addWidget(note, row, 0, 1, 2)
        grid.setRowStretch(row + 1, 1)
        grid.setColumnStretch(1, 1)
