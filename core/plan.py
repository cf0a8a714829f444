"""Plans: what the engine hands on to directions, route cards and the window.

A :class:`Plan` is a plain data object: the ordered :class:`Step` list of one
closed circuit from the depot, its totals, the method that produced it, a
lower bound on the optimum and the timings.  Fleet plans (several vehicles and
trips) will wrap several circuits; the plan file format already has room for
them (``routes`` → ``trips`` → ``steps``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field


@dataclass(frozen=True, slots=True)
class Step:
    """One pass along one segment."""

    segment: str
    start: str
    """The node the pass leaves."""
    end: str
    """The node the pass arrives at."""
    service: bool
    """True if this pass services the street; False for deadhead."""
    length: float
    """Metres (or the network's length unit)."""
    forward: bool = True
    """True when the pass follows the segment's geometry from ``start`` to ``end``
    (the only way to tell the direction round a loop)."""


@dataclass(slots=True)
class TurnCounts:
    """The manoeuvres between consecutive passes of a circuit (the return to the depot
    at the end is parking, not a turn).

    ``left``/``right`` count turns and sharp turns; bears (20–45°) count as straight
    on in :attr:`straight_on` and are kept apart here.  Without street geometry only
    U-turns (driving back along the same street) can be told; then ``geometry`` is
    False and everything else counts as straight on.
    """

    straight: int = 0
    bear_left: int = 0
    bear_right: int = 0
    left: int = 0
    right: int = 0
    sharp_left: int = 0
    sharp_right: int = 0
    uturns: int = 0
    """All U-turns, allowed or not."""
    across_traffic: int = 0
    """Turns across the oncoming lane (left where traffic keeps right), U-turns aside."""
    uturn_nodes: list[str] = field(default_factory=list)
    """Where U-turns remain that are not allowed (not a dead end or turning place)."""
    detours: int = 0
    """Ways round the block driven instead of a U-turn."""
    extra_m: float = 0.0
    """Deadhead the detours add (the extra distance for turn rules)."""
    drive: str = "right"
    geometry: bool = True

    @property
    def lefts(self) -> int:
        return self.left + self.sharp_left

    @property
    def rights(self) -> int:
        return self.right + self.sharp_right

    @property
    def straight_on(self) -> int:
        return self.straight + self.bear_left + self.bear_right


class StepTotals:
    """Mixin: the totals of a ``steps`` list of :class:`Step` (plans and fleet trips).

    Each property is one compensated sum over the steps (``math.fsum``), O(n).
    """

    __slots__ = ()
    steps: list[Step]

    @property
    def total_m(self) -> float:
        return math.fsum(s.length for s in self.steps)

    @property
    def service_m(self) -> float:
        return math.fsum(s.length for s in self.steps if s.service)

    @property
    def deadhead_m(self) -> float:
        return math.fsum(s.length for s in self.steps if not s.service)


@dataclass(slots=True)
class Plan(StepTotals):
    """A closed circuit from the depot with its figures.

    ``lower_bound_m`` is a proven lower bound on the shortest possible
    circuit; ``exact`` is true when the circuit is proven optimal (then the
    bound equals the total up to rounding).
    """

    depot: str
    steps: list[Step]
    lower_bound_m: float
    method: str
    exact: bool
    timings: dict[str, float] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    network_name: str = ""
    turns: TurnCounts | None = None
    """Turn counts of the circuit (``None`` for plans read from files without them)."""

    @property
    def gap(self) -> float:
        """Relative gap ``(total - bound) / bound`` (0 when proven optimal)."""
        if self.exact:
            return 0.0
        lb = self.lower_bound_m
        if lb <= 0:
            return 0.0 if self.total_m <= 0 else math.inf
        return max(0.0, (self.total_m - lb) / lb)

    @property
    def deadhead_share(self) -> float:
        total = self.total_m
        return self.deadhead_m / total if total > 0 else 0.0
