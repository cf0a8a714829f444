"""How the importing part draws on the canvas.

Z values sit in 40–45, above the planning overlay (10–40) and below tool
feedback (50): the closed district boundary at 43, the boundary being drawn
at 44.  The boundary is Okabe & Ito's (2008) sky blue — a colour no street
look uses (:mod:`app.canvas.style`) — drawn dash-dot over a faint wash of the
same colour inside the district, so it also reads in greyscale (our own look).
"""

from __future__ import annotations

from app.canvas.style import OI_SKY_BLUE

BOUNDARY_COLOUR = OI_SKY_BLUE
BOUNDARY_FILL_ALPHA = 28
"""Alpha (0–255) of the wash inside the district."""
Z_BOUNDARY = 43.0
Z_BOUNDARY_DRAFT = 44.0
