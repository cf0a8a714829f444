"""How the circuit looks on the canvas, kept apart from the street palette.

The streets (``app/canvas/style.py``) use the Okabe & Ito (2008) colours:
grey, blue, bluish green, vermillion, with reddish purple for the selection
and orange for the depot.  The circuit drawn over them uses none of those:
service passes are near-black ink, deadhead passes magenta and dashed, the
chosen step glows yellow and streets at fault get a wide red band (magenta,
yellow and red from Paul Tol's schemes, built to stay distinct for the common
colour-vision deficiencies; Tol, "Colour schemes", SRON/EPS/TN/09-002, 2021,
https://personal.sron.nl/~pault/).  Every pass has a white casing, and the
streets underneath are veiled while a circuit shows, so the circuit reads
first.  Colour is never the only cue: service is solid and wide, deadhead
thin and dashed (our own patterns), which also reads in greyscale.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QPen

from app.canvas.style import line_pen

# Paul Tol (2021): yellow of the high-contrast scheme; magenta and red of the vibrant one.
TOL_YELLOW = "#DDAA33"
TOL_MAGENTA = "#EE3377"
TOL_RED = "#CC3311"
WHITE = "#FFFFFF"
INK = "#1A1A1A"

VEIL = QColor(247, 246, 242, 150)
"""The backdrop colour, part transparent: laid over the streets while a circuit shows."""

Z_VEIL = 10.0
Z_CASING = 11.0
Z_DEADHEAD = 12.0
Z_SERVICE = 13.0
Z_HIGHLIGHT = 11.5
Z_MARKS = 25.0
Z_FAULTS = 35.0


@dataclass(frozen=True)
class PassLook:
    """Colour, width (screen pixels) and dash pattern of one kind of pass."""

    label: str
    explanation: str
    colour: str
    width: float
    dashes: tuple[float, ...] = ()

    def pen(self) -> QPen:
        return line_pen(self.colour, self.width, self.dashes)


SERVICE = PassLook("Service pass", "the crew works this street", INK, 2.5)
DEADHEAD = PassLook("Deadhead pass", "driven without service", TOL_MAGENTA, 2.5, (2.5, 1.5))
HIGHLIGHT = PassLook("Selected step", "the step chosen in the list", TOL_YELLOW, 12.0)
FAULT = PassLook("Street at fault", "named in the planning problem", TOL_RED, 12.0)
CASING_PX = 5.0
"""Width of the white casing under every pass, screen pixels."""


def casing(width: float) -> QPen:
    """A white pen under a line so it stands out from what lies beneath."""
    pen = QPen(QColor(WHITE), width)
    pen.setCosmetic(True)
    pen.setCapStyle(Qt.PenCapStyle.FlatCap)
    pen.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
    return pen
