"""Turns at a node: bearings from street geometry, the angle of a turn and its kind.

Shared by the turn rules of the circuit (``core/solve``), the driver's
directions and the route card, so that all three call the same manoeuvre by
the same name.

Bearings are *grid* bearings: degrees clockwise from the +y axis of the
network's projected CRS, from the planar formula ``atan2(dx, dy)`` (the
quadrant-aware form of the surveyor's ``tan θ = ΔE / ΔN``; e.g. Ghilani &
Wolf, *Elementary Surveying*, 13th ed., 2012, ch. 10, "azimuths").  Grid north
differs from true north by the meridian convergence, which is the same for both
streets at a node and so cancels in a turn angle.

A turn angle is the change of bearing from the street arrived on to the street
left by, wrapped into ``(-180, 180]``: positive is clockwise (to the driver's
right), negative anticlockwise (left).  The thresholds that name a turn are our
own choice (common practice in route directions, no single source).
"""

from __future__ import annotations

import math
from enum import StrEnum

from core.errors import RoundsmanError
from core.model import Coords, Network, Segment


class Turn(StrEnum):
    """The kind of manoeuvre between two consecutive passes."""

    STRAIGHT = "straight"
    BEAR_LEFT = "bear left"
    BEAR_RIGHT = "bear right"
    LEFT = "left"
    RIGHT = "right"
    SHARP_LEFT = "sharp left"
    SHARP_RIGHT = "sharp right"
    UTURN = "U-turn"

    @property
    def side(self) -> str:
        """``"left"``, ``"right"`` or ``""`` (straight on and U-turns)."""
        if self in (Turn.BEAR_LEFT, Turn.LEFT, Turn.SHARP_LEFT):
            return "left"
        if self in (Turn.BEAR_RIGHT, Turn.RIGHT, Turn.SHARP_RIGHT):
            return "right"
        return ""


class DriveSide(StrEnum):
    """The side of the road traffic keeps to."""

    RIGHT = "right"
    LEFT = "left"


def parse_drive_side(value: object) -> DriveSide:
    """A :class:`DriveSide` from ``"left"``/``"right"``; the error lists the choices."""
    try:
        return DriveSide(str(value).strip().lower())
    except ValueError:
        raise RoundsmanError(
            f"drive side {value!r} is not one of 'right', 'left' "
            "(the side of the road traffic keeps to)"
        ) from None


STRAIGHT_MAX = 20.0
"""Degrees: a change of bearing up to this is straight on."""
BEAR_MAX = 45.0
"""Up to this, bear left/right."""
TURN_MAX = 120.0
"""Up to this, turn left/right."""
SHARP_MAX = 165.0
"""Up to this, a sharp turn; beyond it the vehicle comes back on itself (U-turn)."""


def bearing(p: tuple[float, float], q: tuple[float, float]) -> float:
    """Grid bearing from ``p`` to ``q`` in degrees, ``[0, 360)``; 0 is +y, 90 is +x.

    ``atan2(dx, dy)`` (Ghilani & Wolf 2012, azimuth from coordinates).  O(1).
    Coincident points have no bearing and raise :class:`ValueError`.
    """
    dx, dy = q[0] - p[0], q[1] - p[1]
    if dx == 0 and dy == 0:
        raise ValueError("coincident points have no bearing")
    return math.degrees(math.atan2(dx, dy)) % 360.0


def turn_angle(bearing_in: float, bearing_out: float) -> float:
    """Signed change of bearing in ``(-180, 180]``; positive turns right (clockwise)."""
    a = (bearing_out - bearing_in) % 360.0
    return a - 360.0 if a > 180.0 else a


def classify(angle: float) -> Turn:
    """Name a turn from its signed angle (see the module thresholds)."""
    m = abs(angle)
    if m <= STRAIGHT_MAX:
        return Turn.STRAIGHT
    if m > SHARP_MAX:
        return Turn.UTURN
    right = angle > 0
    if m <= BEAR_MAX:
        return Turn.BEAR_RIGHT if right else Turn.BEAR_LEFT
    if m <= TURN_MAX:
        return Turn.RIGHT if right else Turn.LEFT
    return Turn.SHARP_RIGHT if right else Turn.SHARP_LEFT


def crosses_traffic(turn: Turn, drive: DriveSide) -> bool:
    """True for turns across the oncoming lane: left turns where traffic keeps
    right, right turns where it keeps left (U-turns cross it either way)."""
    if turn is Turn.UTURN:
        return True
    far_side = "left" if drive is DriveSide.RIGHT else "right"
    return turn.side == far_side and turn not in (Turn.BEAR_LEFT, Turn.BEAR_RIGHT)


def _distinct_end(
    coords: Coords, from_start: bool
) -> tuple[tuple[float, float], tuple[float, float]]:
    """The end point and the nearest distinct vertex to it along the line."""
    pts = coords if from_start else coords[::-1]
    first = pts[0]
    for p in pts[1:]:
        if p != first:
            return first, p
    raise ValueError("a street whose points all coincide has no bearing")


def segment_coords(network: Network, seg: Segment) -> Coords | None:
    """The segment's polyline, or the straight line between its nodes, or ``None``
    when the network has no coordinates."""
    if seg.geometry is not None and len(seg.geometry) >= 2:
        return seg.geometry
    a, b = network.nodes[seg.start], network.nodes[seg.end]
    if a.has_xy and b.has_xy:
        return ((a.x, a.y), (b.x, b.y))  # type: ignore[return-value]
    return None


def leaving_bearing(coords: Coords, forward: bool) -> float:
    """Bearing with which a pass leaves its first node (``forward`` follows the
    geometry's order)."""
    p, q = _distinct_end(coords, from_start=forward)
    return bearing(p, q)


def arriving_bearing(coords: Coords, forward: bool) -> float:
    """Bearing with which a pass arrives at its last node."""
    end, before = _distinct_end(coords, from_start=not forward)
    return bearing(before, end)


def pass_turn(
    network: Network,
    seg_in: Segment,
    forward_in: bool,
    seg_out: Segment,
    forward_out: bool,
) -> tuple[Turn, float]:
    """The turn from one pass into the next, and its angle in degrees.

    Driving back along the same street in the other direction is a U-turn
    whatever the geometry says.  Without coordinates the turn is
    :attr:`Turn.STRAIGHT` with angle 0 unless it is such a reversal.
    """
    if seg_in.id == seg_out.id and forward_in != forward_out and not seg_in.is_loop:
        return Turn.UTURN, 180.0
    ci, co = segment_coords(network, seg_in), segment_coords(network, seg_out)
    if ci is None or co is None:
        return Turn.STRAIGHT, 0.0
    try:
        a = turn_angle(arriving_bearing(ci, forward_in), leaving_bearing(co, forward_out))
    except ValueError:
        return Turn.STRAIGHT, 0.0
    return classify(a), a
