"""Where each pass of a circuit is drawn: its polyline, moved sideways.

Two passes over the same street would hide each other, so every pass is
drawn a little to the side it drives on (right-hand traffic: to the right of
the direction of travel), and a second pass in the same direction one step
further out.  A pass each way thus shows as two parallel lines and the side
of each tells its direction even without arrows.

Pure NumPy, no Qt, and vectorised over all passes at once (a 20,000-street
plan has about 25,000 passes; a loop of small NumPy calls per pass took
seconds).  Coordinates are the network's (metres, ``y`` up); the overlay
converts them to the scene with :mod:`app.canvas.coords`'s rule.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from core.directions import step_coords
from core.model import Network
from core.plan import Step

__all__ = ["PassGeometry", "pass_geometry", "side_slots"]

_MITRE_LIMIT = 3.0
"""A vertex moves at most this many times the offset (very sharp bends)."""


def side_slots(steps: Sequence[Step]) -> np.ndarray:
    """For each step, how many earlier passes drove the same street the same way.

    The slot ``k`` draws the pass ``k + 0.5`` offsets from the centre line.
    One pass over the steps with a counter: O(n).
    """
    seen: Counter[tuple[str, str, bool]] = Counter()
    slots = np.zeros(len(steps), dtype=np.int64)
    for i, s in enumerate(steps):
        key = (s.segment, s.start, s.forward)
        slots[i] = seen[key]
        seen[key] += 1
    return slots


@dataclass(frozen=True, slots=True)
class PassGeometry:
    """The drawn polylines of a circuit's passes, all in one array.

    Pass ``i`` is ``points[start[i]:start[i + 1]]`` in network coordinates;
    an empty slice means no line (a street without coordinates, or one no
    longer in the network).
    """

    points: np.ndarray
    """``(N, 2)`` vertices of every pass, in step order."""
    start: np.ndarray
    """``(n + 1,)`` offsets into ``points``."""
    lengths: np.ndarray
    """``(n,)`` drawn length of each pass (0 without a line)."""

    @property
    def has_line(self) -> np.ndarray:
        return np.diff(self.start) >= 2

    def line(self, i: int) -> np.ndarray | None:
        a, b = int(self.start[i]), int(self.start[i + 1])
        return self.points[a:b] if b - a >= 2 else None

    def edges(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Every drawn piece as ``(a, b, step)``: end points and the step it belongs to."""
        owner = np.repeat(np.arange(len(self.lengths)), np.diff(self.start))
        same = owner[:-1] == owner[1:]
        return self.points[:-1][same], self.points[1:][same], owner[:-1][same]

    def point_along(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Point ``(n, 2)`` and direction (radians, network axes) at fraction ``t[i]``
        of each pass's length.  Passes without a line get zeros.  O(N log N)."""
        n = len(self.lengths)
        xy = np.zeros((n, 2))
        angle = np.zeros(n)
        a, b, owner = self.edges()
        if len(owner) == 0:
            return xy, angle
        d = b - a
        seg_len = np.hypot(d[:, 0], d[:, 1])
        cum = np.cumsum(seg_len)
        first_edge = np.searchsorted(owner, np.arange(n), side="left")
        last_edge = np.searchsorted(owner, np.arange(n), side="right") - 1
        has = self.has_line
        before = np.where(first_edge > 0, cum[np.maximum(first_edge - 1, 0)], 0.0)
        target = before + np.clip(t, 0.0, 1.0) * self.lengths
        k = np.searchsorted(cum, target, side="left")
        k = np.clip(k, first_edge, np.maximum(last_edge, first_edge))
        k = np.minimum(k, len(owner) - 1)
        start_k = cum[k] - seg_len[k]
        safe = np.where(seg_len[k] > 0, seg_len[k], 1.0)
        f = np.clip((target - start_k) / safe, 0.0, 1.0)
        pts = a[k] + f[:, None] * d[k]
        xy[has] = pts[has]
        angle[has] = np.arctan2(d[k, 1], d[k, 0])[has]
        return xy, angle


def _raw_lines(network: Network, steps: Sequence[Step]) -> tuple[np.ndarray, np.ndarray]:
    """All passes' polylines in the direction driven, concatenated, and the
    number of points of each.  O(total vertices)."""
    flat: list[tuple[float, float]] = []
    counts = np.zeros(len(steps), dtype=np.int64)
    for i, step in enumerate(steps):
        if step.segment not in network.segments:
            continue
        coords = step_coords(network, step)
        if coords is None:
            continue
        flat.extend(coords)
        counts[i] = len(coords)
    pts = np.asarray(flat, dtype=np.float64).reshape(-1, 2)
    return pts, counts


def pass_geometry(
    network: Network, steps: Sequence[Step], gap: float, *, left_hand: bool = False
) -> PassGeometry:
    """Polylines for every step, moved ``(slot + 0.5) * gap`` to the driving side.

    Each vertex moves along the bisector of its two edges' normals, scaled so
    that both edges end up ``distance`` away (the mitre of a parallel curve;
    capped at :data:`_MITRE_LIMIT` times the distance at very sharp bends).
    Repeated points are dropped first.  ``left_hand`` moves passes to the left
    of travel (traffic keeping left).  Vectorised: O(N) NumPy work for N
    vertices, plus one Python loop over the steps to collect coordinates.
    """
    n = len(steps)
    pts, counts = _raw_lines(network, steps)
    owner = np.repeat(np.arange(n), counts)
    # drop repeated consecutive points within a pass
    keep = np.ones(len(pts), dtype=bool)
    if len(pts) > 1:
        keep[1:] = (owner[1:] != owner[:-1]) | np.any(pts[1:] != pts[:-1], axis=1)
    pts, owner = pts[keep], owner[keep]
    counts = np.bincount(owner, minlength=n)
    # passes left with fewer than two points have no line
    short = counts < 2
    if short.any():
        ok = ~short[owner]
        pts, owner = pts[ok], owner[ok]
        counts = np.where(short, 0, counts)
    start = np.concatenate([[0], np.cumsum(counts)]).astype(np.int64)
    if len(pts) == 0:
        return PassGeometry(pts.reshape(0, 2), start, np.zeros(n))
    # unit normals of the edges (right of travel with y up); edges across passes are unused
    d = np.diff(pts, axis=0)
    norm = np.hypot(d[:, 0], d[:, 1])
    norm[norm == 0] = 1.0
    normal = np.column_stack([d[:, 1], -d[:, 0]]) / norm[:, None]
    is_first = np.zeros(len(pts), dtype=bool)
    is_first[start[:-1][counts > 0]] = True
    is_last = np.zeros(len(pts), dtype=bool)
    is_last[start[1:][counts > 0] - 1] = True
    n_prev = np.zeros_like(pts)
    n_next = np.zeros_like(pts)
    n_prev[1:] = normal
    n_next[:-1] = normal
    n_prev[is_first] = 0.0
    n_next[is_last] = 0.0
    bis = n_prev + n_next
    blen = np.hypot(bis[:, 0], bis[:, 1])
    lone = is_first | is_last
    inner = ~lone & (blen > 1e-9)
    vertex_n = np.where(is_first[:, None], n_next, n_prev)  # ends, and U-shaped reversals
    unit = bis[inner] / blen[inner, None]
    cos_half = np.maximum(np.sum(unit * n_next[inner], axis=1), 1.0 / _MITRE_LIMIT)
    vertex_n[inner] = unit / cos_half[:, None]
    sign = -1.0 if left_hand else 1.0
    dist = sign * (side_slots(steps) + 0.5) * gap
    out = pts + dist[owner][:, None] * vertex_n
    # drawn lengths
    same = owner[:-1] == owner[1:]
    dd = np.diff(out, axis=0)
    seg_len = np.hypot(dd[:, 0], dd[:, 1])
    lengths = np.bincount(owner[:-1][same], weights=seg_len[same], minlength=n)
    return PassGeometry(out, start, lengths)
