"""Whole-number lengths for the solvers that need them.

PyMatching and OR-Tools' min-cost flow work on integer weights.  Lengths are
expressed in a whole unit, the network's own when every length is already a
whole number (research instances), else millimetres, so results are exact at
that resolution.
"""

from __future__ import annotations

import numpy as np

MAX_INT_WEIGHT = 1 << 23
"""Largest integer weight handed to PyMatching (it accepts weights below 2**24)."""


def integer_weights(length: np.ndarray) -> tuple[np.ndarray, float]:
    """Express lengths as whole numbers of a unit; return ``(weights, unit)``.

    The unit is 1 when every length is already a whole number (research
    instances), else 1 mm (1e-3 of the length unit), coarsened by tens if the
    longest segment would not fit PyMatching's weight range.
    """
    if len(length) == 0:
        return np.zeros(0, dtype=np.int64), 1.0
    top = float(np.max(length))
    unit = 1.0 if np.all(length == np.round(length)) else 1e-3
    while top / unit > MAX_INT_WEIGHT:
        unit *= 10.0
    return np.round(length / unit).astype(np.int64), unit
