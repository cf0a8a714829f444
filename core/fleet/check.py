"""An independent feasibility check of a fleet plan.

Written apart from the planner (it reads only the network, the settings and the
plan's steps, never the planner's state graph, tasks or matrices), so that a
mistake in the planner shows up here instead of being repeated.  It checks:

* **continuity**: each trip is a connected walk; the first trip of a route leaves
  the vehicle's home, later trips leave where the previous one ended (a refill
  site), middle trips end at a refill site and the last one at the home (or at a
  refill site for vehicles that end there);
* **direction**: every pass follows a drivable direction of its street, its end
  nodes and length match the street;
* **coverage**: every street serviced on the planned day gets exactly the service
  passes it needs (forward, backward, either), no other street is serviced;
* **capacity** per trip and **time** per route, from the settings' demand and
  time model;
* **U-turns** where forbidden: coming straight back to the node just left, except
  at turning places, dead ends, or between trips at a depot or refill site;
* **fleet size** per vehicle type, and **priority order** within each route.

Cost O(total steps + streets).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field

from core.fleet.result import FleetPlan, Trip
from core.fleet.settings import FleetSettings, VehicleType, priority_of, serviced_today
from core.model import Network, OneWay

_TOL = 1e-6


@dataclass(slots=True)
class TripTotals:
    service_m: float
    deadhead_m: float
    load: float
    minutes: float


@dataclass(slots=True)
class RouteTotals:
    vehicle: str
    service_m: float
    deadhead_m: float
    load: float
    minutes: float
    trips: list[TripTotals] = field(default_factory=list)


@dataclass(slots=True)
class CheckReport:
    """The verdict: ``issues`` (empty when feasible) and the totals recomputed here."""

    issues: list[str]
    routes: list[RouteTotals]

    @property
    def feasible(self) -> bool:
        return not self.issues


def _dead_ends_and_turns(network: Network) -> set[str]:
    nb: dict[str, set[str]] = {n: set() for n in network.nodes}
    for s in network.segments.values():
        if s.start != s.end:
            nb[s.start].add(s.end)
            nb[s.end].add(s.start)
    return {n for n, node in network.nodes.items() if node.turning_place or len(nb[n]) <= 1}


def check_plan(
    network: Network,
    plan: FleetPlan,
    settings: FleetSettings,
    *,
    depots: dict[str, str] | None = None,
) -> CheckReport:
    """Check ``plan`` against the network and settings.

    Parameters
    ----------
    depots
        The home node of each vehicle type by name, for types without ``home``
        (defaults to the network's depot).
    """
    issues: list[str] = []
    types = {v.name: v for v in settings.vehicles}
    forbid = settings.uturns_forbidden(network)
    turn_ok = _dead_ends_and_turns(network) if forbid else set()
    refills = set(settings.refill_sites)
    done: Counter[tuple[str, str]] = Counter()  # (segment, 'fwd'|'bwd') service passes
    totals: list[RouteTotals] = []
    used: Counter[str] = Counter()
    n_passes: dict[str, int] = {}
    for seg in network.segments.values():
        f, b, e = seg.required_passes()
        n_passes[seg.id] = f + b + e
    for r in plan.routes:
        vt = types.get(r.vehicle_type)
        if vt is None:
            issues.append(f"route {r.vehicle}: unknown vehicle type {r.vehicle_type!r}")
            continue
        used[vt.name] += 1
        home = vt.home or (depots or {}).get(vt.name) or network.depot
        rt = RouteTotals(r.vehicle, 0.0, 0.0, 0.0, 0.0)
        last_prio = 0
        for k, trip in enumerate(r.trips):
            where = f"route {r.vehicle}, trip {k + 1}"
            expect_start = home if k == 0 else r.trips[k - 1].end
            if trip.start != expect_start:
                issues.append(f"{where} starts at {trip.start}, not at {expect_start}")
            last = k == len(r.trips) - 1
            if not last and trip.end not in refills:
                issues.append(f"{where} ends at {trip.end}, which is not a refill site")
            if last:
                ok_end = {home} if vt.end_at == "home" else refills
                if trip.end not in ok_end:
                    issues.append(f"{where}: the route ends at {trip.end}, not at its depot")
            tt = _check_trip(network, vt, trip, where, turn_ok, forbid, n_passes, issues, done)
            if k > 0:  # the trip starts by reloading
                tt.minutes += settings.reload_min
            if vt.capacity is not None and tt.load > vt.capacity * (1 + _TOL):
                issues.append(f"{where} carries {tt.load:g}, over the capacity {vt.capacity:g}")
            rt.trips.append(tt)
            rt.service_m += tt.service_m
            rt.deadhead_m += tt.deadhead_m
            rt.load += tt.load
            rt.minutes += tt.minutes
            for s in trip.steps:
                if s.service:
                    p = priority_of(network.segments[s.segment])
                    if p < last_prio:
                        issues.append(
                            f"route {r.vehicle}: street {s.segment} (class {p}) is treated "
                            f"after a class {last_prio} street"
                        )
                    last_prio = max(last_prio, p)
        if vt.max_time_min is not None and rt.minutes > vt.max_time_min * (1 + _TOL):
            issues.append(
                f"route {r.vehicle} takes {rt.minutes:.1f} min, over the limit "
                f"{vt.max_time_min:g} min"
            )
        totals.append(rt)
    for name, n in used.items():
        vt = types.get(name)
        if vt is not None and vt.count is not None and n > vt.count:
            issues.append(f"{n} routes for vehicle type {name!r}, but only {vt.count} available")
    _check_coverage(network, settings, done, issues)
    return CheckReport(issues, totals)


def _check_trip(
    network: Network,
    vt: VehicleType,
    trip: Trip,
    where: str,
    turn_ok: set[str],
    forbid: bool,
    n_passes: dict[str, int],
    issues: list[str],
    done: Counter[tuple[str, str]],
) -> TripTotals:
    tt = TripTotals(0.0, 0.0, 0.0, 0.0)
    at = trip.start
    prev = None
    for i, s in enumerate(trip.steps):
        seg = network.segments.get(s.segment)
        if seg is None:
            issues.append(f"{where}, pass {i + 1}: no street {s.segment!r}")
            return tt
        a, b = (seg.start, seg.end) if s.forward else (seg.end, seg.start)
        if (s.start, s.end) != (a, b):
            issues.append(f"{where}, pass {i + 1}: street {seg.label} does not join these nodes")
        if s.start != at:
            issues.append(f"{where}, pass {i + 1}: jumps from {at} to {s.start}")
        if (seg.oneway is OneWay.FORWARD and not s.forward) or (
            seg.oneway is OneWay.BACKWARD and s.forward
        ):
            issues.append(f"{where}, pass {i + 1}: drives one-way street {seg.label} backwards")
        if abs(s.length - seg.length) > 1e-6 * max(1.0, seg.length):
            issues.append(f"{where}, pass {i + 1}: length of {seg.label} is wrong")
        back = forbid and prev is not None and prev.start != prev.end
        if back and (s.end, s.start) == (prev.start, prev.end) and s.start not in turn_ok:
            issues.append(f"{where}, pass {i + 1}: U-turn at node {s.start}")
        if s.service:
            tt.service_m += seg.length
            tt.load += vt.pass_demand(seg, max(1, n_passes[seg.id]))
            done[(seg.id, "fwd" if s.forward else "bwd")] += 1
        else:
            tt.deadhead_m += seg.length
        tt.minutes += vt.pass_minutes(seg, s.service)
        at = s.end
        prev = s
    if at != trip.end:
        issues.append(f"{where} ends at {at}, not at its stated end {trip.end}")
    return tt


def _check_coverage(
    network: Network,
    settings: FleetSettings,
    done: Counter[tuple[str, str]],
    issues: list[str],
) -> None:
    for seg in network.segments.values():
        f, b, e = seg.required_passes()
        if not serviced_today(seg, settings.day):
            f = b = e = 0
        got_f, got_b = done.get((seg.id, "fwd"), 0), done.get((seg.id, "bwd"), 0)
        extra_f, extra_b = got_f - f, got_b - b
        if extra_f < 0 or extra_b < 0 or extra_f + extra_b != e:
            if f + b + e == 0:
                issues.append(f"street {seg.label} is serviced but needs no service today")
            elif got_f + got_b < f + b + e or extra_f < 0 or extra_b < 0:
                issues.append(
                    f"street {seg.label} is missing service: {got_f} forward and {got_b} "
                    f"backward passes for {f} forward, {b} backward, {e} either way"
                )
            else:
                issues.append(f"street {seg.label} is serviced more often than needed")
