"""How streets look: one pen per service requirement, shared by canvas and legend.

Colours come from the colour-blind-safe palette of Okabe & Ito (2008),
"Color Universal Design (CUD): how to make figures and presentations that are
friendly to colorblind people" (https://jfly.uni-koeln.de/color/).  Colour is
never the only cue: each requirement also has its own width and dash pattern
(our own), so the drawing reads in greyscale too.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QPen

from core.model import Service

# Okabe & Ito (2008) palette
OI_BLACK = "#000000"
OI_ORANGE = "#E69F00"
OI_SKY_BLUE = "#56B4E9"
OI_BLUISH_GREEN = "#009E73"
OI_YELLOW = "#F0E442"
OI_BLUE = "#0072B2"
OI_VERMILLION = "#D55E00"
OI_REDDISH_PURPLE = "#CC79A7"
NEUTRAL_GREY = "#8C8C8C"


@dataclass(frozen=True)
class StreetLook:
    """Colour, width (screen pixels) and dash pattern of one service requirement."""

    label: str
    explanation: str
    colour: str
    width: float
    dashes: tuple[float, ...] = ()

    def pen(self, *, selected: bool = False) -> QPen:
        colour = OI_REDDISH_PURPLE if selected else self.colour
        return line_pen(colour, self.width + (2.5 if selected else 0.0), self.dashes)


def line_pen(colour: str, width: float, dashes: tuple[float, ...] = ()) -> QPen:
    """A cosmetic pen (``width`` in screen pixels at any zoom) with flat caps and round
    joins, dashed when ``dashes`` is given; for streets and the passes drawn over them."""
    pen = QPen(QColor(colour), width)
    pen.setCosmetic(True)
    pen.setCapStyle(Qt.PenCapStyle.FlatCap)
    pen.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
    if dashes:
        pen.setDashPattern(list(dashes))
    return pen


LOOKS: dict[Service, StreetLook] = {
    Service.NONE: StreetLook(
        "No service", "driven only to get somewhere", NEUTRAL_GREY, 1.5, (3.0, 2.0)
    ),
    Service.EITHER: StreetLook("Once, either way", "one pass in either direction", OI_BLUE, 3.0),
    Service.ALONG: StreetLook(
        "Along the one-way", "passes in the traffic direction", OI_BLUISH_GREEN, 3.0, (5.0, 1.5)
    ),
    Service.BOTH: StreetLook(
        "Both kerbs",
        "a pass each way (twice along a one-way)",
        OI_VERMILLION,
        4.0,
        (6.0, 1.0, 1.0, 1.0),
    ),
}
"""The look of each service requirement."""

SELECTED_COLOUR = OI_REDDISH_PURPLE
ARROW_COLOUR = OI_BLACK
NODE_COLOUR = "#404040"
LABEL_COLOUR = "#3A3A3A"
DEPOT_COLOUR = OI_ORANGE
BACKDROP = "#F7F6F2"
GRID_MINOR = "#E6E4DC"
GRID_MAJOR = "#D6D3C8"
GRID_LABEL = "#A8A496"
