"""Fleet plans as plain dataclasses: plan → routes (one per vehicle) → trips (one per
load) → steps (:class:`core.plan.Step`)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from core.plan import Plan, Step, StepTotals


@dataclass(slots=True)
class Trip(StepTotals):
    """One load: a connected walk from a depot or refill site to a refill site or depot.

    ``load`` is in the capacity's unit, ``minutes`` the driving and service time plus,
    for every trip after a route's first, the reload stop it starts with.
    """

    start: str
    end: str
    steps: list[Step]
    load: float = 0.0
    minutes: float = 0.0


@dataclass(slots=True)
class Route:
    """One vehicle's work: its trips in order; the vehicle reloads between trips."""

    vehicle: str
    vehicle_type: str
    trips: list[Trip]
    class_done_min: dict[int, float] = field(default_factory=dict)
    """Minutes from the route's start until the last street of each priority class is done."""

    @property
    def steps(self) -> list[Step]:
        return [s for t in self.trips for s in t.steps]

    @property
    def refill_stops(self) -> list[tuple[int, str]]:
        """Where the vehicle reloads: (number of steps driven before the stop, node), for
        route cards that print refill stops as instructions."""
        out, n = [], 0
        for t in self.trips[:-1]:
            n += len(t.steps)
            out.append((n, t.end))
        return out

    def as_plan(self, network_name: str = "") -> Plan:
        """This route as a one-circuit :class:`~core.plan.Plan` (all trips in a row), so
        that directions and route cards written for one circuit print it per vehicle."""
        start = self.trips[0].start if self.trips else ""
        notes = [f"vehicle {self.vehicle}: reload at {node} after step {k}"
                 for k, node in self.refill_stops]  # fmt: skip
        return Plan(start, self.steps, 0.0, f"fleet route of vehicle {self.vehicle}", False,
                    notes=notes, network_name=network_name)  # fmt: skip

    @property
    def service_m(self) -> float:
        return math.fsum(t.service_m for t in self.trips)

    @property
    def deadhead_m(self) -> float:
        return math.fsum(t.deadhead_m for t in self.trips)

    @property
    def total_m(self) -> float:
        return math.fsum(t.total_m for t in self.trips)

    @property
    def load(self) -> float:
        return math.fsum(t.load for t in self.trips)

    @property
    def minutes(self) -> float:
        return math.fsum(t.minutes for t in self.trips)


@dataclass(slots=True)
class FleetPlan:
    """Routes for a fleet, checked by :mod:`core.fleet.check` before it is returned.

    ``feasible`` is the checker's verdict and ``issues`` its findings (empty when
    feasible).  ``lower_bound_m`` is a proven lower bound when one is known (else 0).
    """

    routes: list[Route]
    method: str
    seed: int = 0
    network_name: str = ""
    feasible: bool = True
    issues: list[str] = field(default_factory=list)
    lower_bound_m: float = 0.0
    class_done_min: dict[int, float] = field(default_factory=dict)
    """Minutes after the start until every street of each priority class is done (the
    latest over the routes)."""
    timings: dict[str, float] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    day: str | None = None
    reload_min: float = 0.0
    """Minutes each reload stop took in the plan's times (:attr:`FleetSettings.reload_min`)."""

    @property
    def total_m(self) -> float:
        return math.fsum(r.total_m for r in self.routes)

    @property
    def service_m(self) -> float:
        return math.fsum(r.service_m for r in self.routes)

    @property
    def deadhead_m(self) -> float:
        return math.fsum(r.deadhead_m for r in self.routes)

    @property
    def gap(self) -> float | None:
        """Relative gap ``(total - bound) / bound``, or None when no bound is known."""
        if self.lower_bound_m <= 0:
            return None
        return max(0.0, (self.total_m - self.lower_bound_m) / self.lower_bound_m)

    @property
    def hours(self) -> float:
        """Vehicle hours: the sum of the route times."""
        return math.fsum(r.minutes for r in self.routes) / 60.0

    @property
    def longest_route_min(self) -> float:
        return max((r.minutes for r in self.routes), default=0.0)

    @property
    def n_trips(self) -> int:
        return sum(len(r.trips) for r in self.routes)

    @property
    def depot(self) -> str:
        """Start of the first route (for code written for one circuit)."""
        return self.routes[0].trips[0].start if self.routes and self.routes[0].trips else ""
