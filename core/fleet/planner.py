"""The fleet planner's front door: :func:`plan_fleet`.

1. The day's service passes become tasks; deadhead runs on the turn-aware state
   graph (:mod:`core.fleet.graph`).
2. A giant tour (the engine's single circuit, else nearest neighbour), ordered by
   priority class, is cut into trips by the optimal split (Ulusoy 1985) — a fast,
   deterministic start and the fallback (:mod:`core.fleet.split`).
3. PyVRP's search improves it on a node-routing form of the arc routing problem
   (:mod:`core.fleet.hgs`), warm-started from the split.  With a limited fleet and a
   time limit, a fifth of the search first finds a turn-aware giant tour for one
   vehicle, whose fleet split becomes the warm start when it is shorter.  For as many
   vehicles as needed, a search that stalls with more routes than the demand needs
   hands the rest of its budget to fresh searches held to one route fewer
   (:func:`_search`).
4. The candidates are checked by the independent checker (:mod:`core.fleet.check`);
   the shortest feasible one is returned, with the checker's totals.

``settings.time_limit`` covers the whole call (the search gets what preparing left,
at least a fifth).  Runs are deterministic for a given seed up to the search's
clock: PyVRP stops on time, so a slower machine may stop earlier; set
``settings.iterations`` for runs that repeat exactly.
"""

from __future__ import annotations

import itertools
import math
import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import replace

import numpy as np
import pyvrp

from core.errors import Cancelled, DepotError, RoundsmanError
from core.fleet.check import check_plan
from core.fleet.graph import (
    StateGraph,
    Task,
    build_tasks,
    check_reachable,
    task_demands,
    task_minutes,
)
from core.fleet.hgs import HandOver, NodeModel
from core.fleet.result import FleetPlan, Route, Trip
from core.fleet.settings import FleetSettings, VehicleType, priority_of, serviced_today
from core.fleet.split import split_tour
from core.model import Network, Service

ProgressFn = Callable[[str, float], None]
StopFlag = Callable[[], bool] | threading.Event

Visit = tuple[int, int]
RouteSpec = tuple[int, list[list[Visit]]]

METHOD_SPLIT = "giant tour split into trips (Ulusoy 1985)"
METHOD_HGS = (
    "PyVRP search (Wouda, Lan & Kool 2024) on arc routing as a generalised VRP, "
    "from the split of a giant tour (Ulusoy 1985)"
)


def _stopped(stop: StopFlag | None) -> Callable[[], bool]:
    if stop is None:
        return lambda: False
    if isinstance(stop, threading.Event):
        return stop.is_set
    return lambda: bool(stop())


class _Context:
    """Everything the steps of one planning run share."""

    def __init__(self, network: Network, settings: FleetSettings) -> None:
        settings.check_nodes(network)
        self.network = network
        self.settings = settings
        homes = []
        for v in settings.vehicles:
            home = v.home or network.depot
            if home is None or home not in network.nodes:
                raise DepotError(
                    f"vehicle {v.name!r} has no home depot: give one (or set the network's depot)"
                )
            homes.append(home)
        if any(v.end_at == "refill" for v in settings.vehicles) and not settings.refill_sites:
            raise DepotError("vehicles that end at a refill site need at least one refill site")
        self.homes = homes
        self.circuit_bound_m = 0.0
        """The engine's proven bound on one circuit over the day's passes, once
        :func:`_circuit_tour` has planned it (see :func:`fleet_lower_bound`)."""
        self.graph = StateGraph(network, settings.vehicles[0], settings.uturns_forbidden(network))
        self.tasks = build_tasks(network, self.graph, settings)
        g = self.graph
        refill_ends = [g.terminal(r) for r in settings.refill_sites]
        self.end_states = [
            [g.terminal(h)] if v.end_at == "home" else refill_ends
            for v, h in zip(settings.vehicles, homes, strict=True)
        ]
        self.profile = [g.profile_of(v) for v in settings.vehicles]
        """Per vehicle type, its speed profile in the state graph."""
        self.service_min = [task_minutes(network, self.tasks, v) for v in settings.vehicles]
        """Per vehicle type, the service minutes of each task at its speeds."""
        self.demand = [task_demands(network, self.tasks, v) for v in settings.vehicles]
        """Per vehicle type, the load of each task under its demand model."""

    def end_of(self, k: int) -> Callable[[int], tuple[float, float]]:
        """For vehicle type k: (length, minutes) from an arc to the route's end."""
        g = self.graph
        states = self.end_states[k]
        p = self.profile[k]

        def f(arc: int) -> tuple[float, float]:
            best = min(states, key=lambda s: g.dist(arc, s))
            return g.dist(arc, best), g.minutes(arc, best, p)

        return f


def plan_fleet(
    network: Network,
    settings: FleetSettings | None = None,
    *,
    progress: ProgressFn | None = None,
    stop: StopFlag | None = None,
    search: bool = True,
) -> FleetPlan:
    """Plan routes and trips for a fleet over the streets needing service on the day.

    Parameters
    ----------
    network
        The street network; not modified.
    settings
        Vehicles, refill sites, U-turn rule, day, seed and search time; default one
        vehicle type without capacity at the network's depot.
    progress, stop
        ``progress(message, fraction)`` between phases; ``stop`` (callable or
        :class:`threading.Event`) ends the search early and raises
        :class:`~core.errors.Cancelled`.
    search
        False skips the PyVRP search (the split alone: fast and deterministic).

    Returns
    -------
    FleetPlan
        Checked by :func:`core.fleet.check.check_plan`; ``feasible`` and ``issues``
        carry the verdict.

    Raises
    ------
    DepotError, UnreachableError, FleetError
        Naming the vehicle, node or street at fault.
    """
    settings = settings or FleetSettings()
    say = progress or (lambda m, f: None)
    stopped = _stopped(stop)
    t0 = time.perf_counter()
    timings: dict[str, float] = {}
    say("preparing the street graph", 0.0)
    ctx = _Context(network, settings)
    if not ctx.tasks:
        plan = FleetPlan([], "nothing to service", settings.seed, network.name, day=settings.day)
        plan.notes.append("No street needs service on this day.")
        return plan
    check_reachable(ctx.graph, ctx.tasks, list(ctx.homes) + list(settings.refill_sites))
    timings["prepare_s"] = time.perf_counter() - t0
    if stopped():
        raise Cancelled("planning was cancelled")
    say("splitting a giant tour into trips", 0.1)
    t = time.perf_counter()
    tour = giant_tour(ctx)
    split_routes = split_into_routes(ctx, tour)
    candidates: list[tuple[str, list[RouteSpec], dict[int, list[str | None]] | None]] = [
        (METHOD_SPLIT, split_routes, None)
    ]
    timings["split_s"] = time.perf_counter() - t
    notes: list[str] = []
    if search:
        say("improving the routes", 0.2)
        t = time.perf_counter()
        timed = any(v.max_time_min is not None for v in settings.vehicles)
        model = NodeModel(
            ctx.graph,
            ctx.tasks,
            settings,
            ctx.homes,
            ctx.end_states,
            list(settings.refill_sites),
            timed,
        )
        # the time limit covers the whole plan: the search gets what preparing left
        budget = max(0.2 * settings.time_limit, settings.time_limit - (time.perf_counter() - t0))
        if _limited_fleet(settings) and search:
            # a turn-aware giant tour by the search itself (one vehicle, no limits), then
            # the fleet split of that tour as the warm start: a fifth of the budget
            tour2 = search_tour(ctx, budget / 5, settings.seed, stopped, settings.iterations)
            if tour2 is not None:
                alt = split_into_routes(ctx, tour2)
                candidates.append((METHOD_SPLIT, alt, None))
                if _routes_length(ctx, alt) < _routes_length(ctx, split_routes):
                    split_routes = alt
            budget -= budget / 5
        initial = model.to_solution(split_routes)
        t_search = time.perf_counter()

        def tick() -> None:
            done = min(1.0, (time.perf_counter() - t_search) / max(budget, 1e-9))
            say("improving the routes", 0.2 + 0.75 * done)

        for sol, used in _search(ctx, model, budget, initial, stopped, tick):
            routes, split_pairs = used.decode(sol)
            if split_pairs:
                notes.append(f"the search split {split_pairs} two-way passes; kept at the first")
            candidates.append((METHOD_HGS, routes, used.trip_ends))
        timings["search_s"] = time.perf_counter() - t
    say("checking the plan", 0.95)
    best: FleetPlan | None = None
    for method, routes, ends in candidates:
        plan = realise(ctx, routes, method, ends)
        report = check_plan(network, plan, settings, depots=_home_map(ctx))
        plan.feasible = report.feasible
        plan.issues = report.issues
        if best is None or _better(plan, best):
            best = plan
    assert best is not None
    best.lower_bound_m = fleet_lower_bound(ctx)
    best.notes.extend(notes)
    best.timings = {**timings, "total_s": time.perf_counter() - t0}
    say("done", 1.0)
    return best


STALL_SHARE = 0.2
"""A search hands over to a fresh search with one route fewer once its best has not
improved for this share of the budget (see :func:`_search`) ..."""
REST_SHARE = 0.2
"""... and only while at least this share of the budget is left for the next search.
Both chosen on gdb23, where a fresh search held to 10 routes reached the optimum
within 5 s in 8 of 12 seeds (our measurements)."""


def _search(
    ctx: _Context,
    model: NodeModel,
    budget: float,
    initial: pyvrp.Solution | None,
    stopped: Callable[[], bool],
    tick: Callable[[], None],
) -> list[tuple[pyvrp.Solution, NodeModel]]:
    """The PyVRP search; for a fleet of as many vehicles as needed, a second search held
    to one route fewer when the first has stalled (no better plan for ``STALL_SHARE`` of
    the budget, with at least ``REST_SHARE`` left) using more routes than the
    bound ceil(total demand / capacity).

    Why: where loads pack tightly (gdb23: demand 266 in vehicles of 27) the search
    settles on one route more than the best plans use, and moving from m to m - 1
    routes needs many moves that each add load over capacity.  The second search holds
    the fleet to m - 1 routes and starts afresh (PyVRP's random start, another seed),
    in the spirit of route minimisation before distance (Nagata & Bräysy 2009, "A
    powerful route minimization heuristic for the vehicle routing problem with time
    windows", Operations Research Letters 37 — from memory).  Starting it from the first
    result with two routes joined was tried and kept the first result's deadhead on
    gdb23 in 2 runs of 2.  A second search that stalls no better than the first starts
    afresh with the next seed while the same shares allow (on gdb23 some seeds never
    leave 235).  A first search at the bound, or still improving, keeps the whole
    budget uninterrupted.  The caller keeps the shortest feasible plan.

    Returns the first search's best (always, so that the checker can report what went
    wrong) and each later best that improves on it and PyVRP finds feasible.  Raises
    :class:`~core.errors.Cancelled` when stopped.
    """
    settings = ctx.settings
    seed, iters = settings.seed, settings.iterations
    bound = _route_bound(ctx)
    t0 = time.perf_counter()
    first = model.solve(
        budget,
        seed,
        stopped,
        initial,
        iters,
        tick,
        hand_over=HandOver(
            STALL_SHARE, REST_SHARE, lambda best: _fewer_routes(bound, best) is not None
        ),
    )
    if stopped():
        raise Cancelled("planning was cancelled")
    out = [(first.best, model)]
    fewer = _fewer_routes(bound, first.best)
    if not first.ended_early or fewer is None:
        return out
    small = model.with_fleet(fewer)
    best = first.best.distance()
    used = first.iterations
    for k in itertools.count(1):
        # fresh starts while one stalls no better than the best so far
        rest_s = budget - (time.perf_counter() - t0)
        rest_iters = None if iters is None else iters - used
        left = rest_s / budget if iters is None else rest_iters / iters
        if left <= 0.02:
            break
        again = HandOver(
            STALL_SHARE / left,
            REST_SHARE / left,
            lambda sol, best=best: not sol.is_feasible() or sol.distance() >= best,
        )
        run = small.solve(rest_s, seed + k, stopped, None, rest_iters, tick, hand_over=again)
        if stopped():
            raise Cancelled("planning was cancelled")
        used += run.iterations
        if run.best.is_feasible() and run.best.distance() < best:
            best = run.best.distance()
            out.append((run.best, small))
        if not run.ended_early:
            break
    return out


def _route_bound(ctx: _Context) -> int | None:
    """The bound ceil(total demand / capacity) on the number of routes, or None when
    :func:`_search` has no second search to try: several vehicle types, a limited
    fleet or no capacity.  O(n) for n passes."""
    vs = ctx.settings.vehicles
    if len(vs) != 1 or vs[0].count is not None or vs[0].capacity is None:
        return None
    return max(1, math.ceil(math.fsum(t.demand for t in ctx.tasks) / vs[0].capacity - 1e-9))


def _fewer_routes(bound: int | None, sol: pyvrp.Solution) -> int | None:
    """One route fewer than feasible ``sol`` uses, or None when that would be below
    ``bound`` (or there is no bound, or ``sol`` is infeasible).  O(1)."""
    if bound is None or not sol.is_feasible():
        return None
    m = sol.num_routes()
    return m - 1 if m - 1 >= bound else None


def _limited_fleet(settings: FleetSettings) -> bool:
    return all(v.count is not None for v in settings.vehicles) and any(
        v.max_time_min is not None for v in settings.vehicles
    )


def _routes_length(ctx: _Context, routes: Sequence[RouteSpec]) -> float:
    return realise(ctx, routes, "").total_m if routes else np.inf


def search_tour(
    ctx: _Context,
    seconds: float,
    seed: int,
    stopped: Callable[[], bool],
    iterations: int | None = None,
) -> list[Visit] | None:
    """A giant tour that keeps the turn rules: PyVRP's search for one vehicle of the
    first type without capacity or time limit, from and back to its home."""
    v0 = ctx.settings.vehicles[0]
    one = replace(
        ctx.settings,
        vehicles=(replace(v0, capacity=None, max_time_min=None, count=1, end_at="home"),),
        refill_sites=(),
    )
    g = ctx.graph
    model = NodeModel(g, ctx.tasks, one, ctx.homes[:1], [[g.terminal(ctx.homes[0])]], [], False)
    initial = model.to_solution([(0, [giant_tour(ctx)])])
    sol = model.solve(seconds, seed, stopped, initial, iterations).best
    routes, _ = model.decode(sol)
    tour = [v for _, trips in routes for trip in trips for v in trip]
    if len(tour) != len(ctx.tasks):
        return None
    return sorted(tour, key=lambda v: ctx.tasks[v[0]].priority)


def _home_map(ctx: _Context) -> dict[str, str]:
    return {v.name: h for v, h in zip(ctx.settings.vehicles, ctx.homes, strict=True)}


def _better(a: FleetPlan, b: FleetPlan) -> bool:
    if a.feasible != b.feasible:
        return a.feasible
    return a.total_m < b.total_m - 1e-9


# -- giant tour and split --------------------------------------------------------------------------
def giant_tour(ctx: _Context) -> list[Visit]:
    """One order of all passes: the engine's single circuit where it can be had, else
    nearest neighbour; then stably sorted by priority class.  O(n²) at worst."""
    tour = _circuit_tour(ctx)
    if tour is None:
        tour = nearest_neighbour(ctx.graph, ctx.tasks, ctx.graph.free(ctx.homes[0]))
    return sorted(tour, key=lambda v: ctx.tasks[v[0]].priority)


def _circuit_tour(ctx: _Context) -> list[Visit] | None:
    from core.solve.circuit import plan_circuit

    net = ctx.network.copy()
    for seg in list(net.segments.values()):
        if seg.service is not Service.NONE and not serviced_today(seg, ctx.settings.day):
            net.segments[seg.id] = replace(seg, service=Service.NONE)
    try:
        circuit = plan_circuit(net, ctx.homes[0], time_limit=5.0, strategy="heuristic")
    except RoundsmanError:
        return None
    free: dict[tuple[str, int], list[int]] = {}
    for t in ctx.tasks:
        for a in t.arcs:
            free.setdefault((t.segment, a), []).append(t.index)
    used: set[int] = set()
    tour: list[Visit] = []
    for s in circuit.steps:
        if not s.service:
            continue
        arc = ctx.graph.arc_of.get((s.segment, s.forward))
        for ti in free.get((s.segment, arc), []) if arc is not None else []:
            if ti not in used:
                used.add(ti)
                tour.append((ti, arc))
                break
    if len(used) != len(ctx.tasks):
        return None
    ctx.circuit_bound_m = circuit.lower_bound_m
    return tour


def fleet_lower_bound(ctx: _Context) -> float:
    """A proven lower bound on a fleet plan's total length, or 0 when none is known.

    When every vehicle leaves from and returns to one depot, the routes joined there
    form one closed walk over every pass of the day, so no fleet plan is shorter than
    the shortest single circuit; the engine's bound on that circuit (route inspection
    bounds, see :mod:`core.solve.circuit`) is therefore a bound on the fleet.
    Capacity, time, priorities and turn rules only lengthen the plan, so the bound
    relaxes them and can be far below the best fleet plan.  With several homes, or
    routes that end at refill sites, the routes do not join into one circuit and no
    bound is given.  O(1) once the circuit is planned.
    """
    if len(set(ctx.homes)) != 1 or any(v.end_at != "home" for v in ctx.settings.vehicles):
        return 0.0
    return ctx.circuit_bound_m


def nearest_neighbour(graph: StateGraph, tasks: Sequence[Task], start: int) -> list[Visit]:
    """Visit the nearest unserved pass next (by deadhead on the state graph).  O(n²)."""
    left = {t.index for t in tasks}
    here = start
    tour: list[Visit] = []
    while left:
        graph.rows([here])
        d = graph._rows[here][0]
        best, best_d = None, np.inf
        for ti in sorted(left):
            for a in tasks[ti].arcs:
                v = d[a] - graph.arc_len[a] if a != here else np.inf
                if v < best_d:
                    best, best_d = (ti, a), v
        if best is None:
            best = (min(left), tasks[min(left)].arcs[0])
        tour.append(best)
        left.discard(best[0])
        here = best[1]
    return tour


def split_into_routes(ctx: _Context, tour: list[Visit]) -> list[RouteSpec]:
    """Trips by the optimal split (Ulusoy 1985) for the first vehicle type, then routes:
    one per trip, or, where vehicles are few and refill sites exist, several trips per
    route while the time limit allows.  O(n·k) for the split."""
    g = ctx.graph
    v0 = ctx.settings.vehicles[0]
    refills = list(ctx.settings.refill_sites)
    start = g.free(ctx.homes[0])
    if all(v.count is not None for v in ctx.settings.vehicles):
        fleet = fleet_split(ctx, tour)
        if fleet is not None:
            return fleet
    if refills and v0.capacity is not None:
        # trips after the first leave from a refill site: cut greedily at the capacity
        return _greedy_multitrip(ctx, tour)
    trips = split_tour(tour, ctx.tasks, g, start, ctx.end_of(0), v0.capacity, v0.max_time_min)
    return [(0, [t]) for t in trips]


class _RouteGrowth:
    """One route grown pass by pass along the tour: reloads at the refill site with the
    least detour when the next pass would not fit.  O(refill sites) per pass."""

    def __init__(self, ctx: _Context, kt: int) -> None:
        self.ctx, self.kt = ctx, kt
        self.v = ctx.settings.vehicles[kt]
        self.p = ctx.profile[kt]
        self.here = ctx.graph.free(ctx.homes[kt])
        self.length = self.minutes = self.load = 0.0
        self.cuts: list[int] = []  # visits after which the vehicle reloads
        self.n = 0
        self.ok = True

    def add(self, ti: int, arc: int) -> None:
        g = self.ctx.graph
        cap = self.v.capacity
        q = self.ctx.demand[self.kt][ti]
        if cap is not None and self.load + q > cap * (1 + 1e-9) and self.n:
            refills = self.ctx.settings.refill_sites
            if not refills:
                self.ok = False
                return
            r = min(
                refills, key=lambda n: g.dist(self.here, g.terminal(n)) + g.dist(g.free(n), arc)
            )
            self.length += g.dist(self.here, g.terminal(r))
            back = g.minutes(self.here, g.terminal(r), self.p)
            self.minutes += back + self.ctx.settings.reload_min
            self.here, self.load = g.free(r), 0.0
            self.cuts.append(self.n)
        self.length += g.dist(self.here, arc)
        self.minutes += _path_min(g, self.here, arc, self.p) + self.ctx.service_min[self.kt][ti]
        self.load += q
        self.here = arc
        self.n += 1

    def closed(self) -> tuple[float, bool]:
        """(length, feasible) of the route if it ended now."""
        e_len, e_min = self.ctx.end_of(self.kt)(self.here)
        mt = self.v.max_time_min
        ok = self.ok and (mt is None or self.minutes + e_min <= mt * (1 + 1e-9))
        return self.length + e_len, ok


def fleet_split(ctx: _Context, tour: list[Visit]) -> list[RouteSpec] | None:
    """Cut the tour into at most one contiguous piece per available vehicle, each a
    multi-trip route, at least total length: a split in the manner of Ulusoy (1985)
    over (tour position, vehicle) with the vehicles in their listed order, trying each
    rotation of the tour that starts a piece at a vehicle's nearest pass.  O(K·n²)
    per rotation for K vehicles; None when no cut respects the time limits."""
    vehicles = [k for k, v in enumerate(ctx.settings.vehicles) for _ in range(v.count or 0)]
    n = len(tour)
    if not vehicles or n == 0:
        return None
    g = ctx.graph
    rotations = {0}
    if n <= 150:  # beyond, one rotation keeps the split within a few seconds
        for h in ctx.homes:
            row = [g.dist(g.free(h), arc) for _, arc in tour]
            rotations.add(int(np.argmin(row)))
    best_total, best_routes = np.inf, None
    for rot in sorted(rotations):
        seq = tour[rot:] + tour[:rot]
        for order in (vehicles, vehicles[::-1]):
            total, routes = _fleet_dp(ctx, seq, order)
            if total < best_total:
                best_total, best_routes = total, routes
    return best_routes


def _fleet_dp(
    ctx: _Context, seq: list[Visit], order: list[int]
) -> tuple[float, list[RouteSpec] | None]:
    n, K = len(seq), len(order)
    INF = np.inf
    best = np.full((K + 1, n + 1), INF)
    back: dict[tuple[int, int], tuple[int, list[int]]] = {}  # set only where a route ends
    best[0, 0] = 0.0
    for k in range(K):
        best[k + 1, :] = best[k, :]  # a vehicle may stay at home
        for i in range(n + 1):
            if not np.isfinite(best[k, i]):
                continue
            grow = _RouteGrowth(ctx, order[k])
            for j in range(i, n):
                grow.add(*seq[j])
                length, ok = grow.closed()
                if not ok:
                    break
                c = best[k, i] + length
                if c < best[k + 1, j + 1] - 1e-9:
                    best[k + 1, j + 1] = c
                    back[(k + 1, j + 1)] = (i, list(grow.cuts))
    if not np.isfinite(best[K, n]):
        return INF, None
    routes: list[RouteSpec] = []
    k, j = K, n
    while j > 0 and k > 0:
        if (k, j) in back:
            i, cuts = back[(k, j)]
            piece = seq[i:j]
            bounds = [0, *cuts, len(piece)]
            trips = [piece[a:b] for a, b in itertools.pairwise(bounds) if b > a]
            routes.append((order[k - 1], trips))
            j = i
        k -= 1
    routes.reverse()
    return float(best[K, n]), routes


def _greedy_multitrip(ctx: _Context, tour: list[Visit]) -> list[RouteSpec]:
    """Fill each load in tour order, reloading at the nearest refill site; start a new
    vehicle when the next load would break the time limit.  O(n · path)."""
    g = ctx.graph
    settings = ctx.settings
    refills = list(settings.refill_sites)
    routes: list[RouteSpec] = []
    k = 0  # vehicle type
    i = 0
    while i < len(tour):
        kt = min(k, len(settings.vehicles) - 1)
        v = settings.vehicles[kt]
        here = g.free(ctx.homes[kt])
        trips: list[list[Visit]] = []
        minutes = 0.0
        cur: list[Visit] = []
        load = 0.0
        while i < len(tour):
            ti, arc = tour[i]
            step_min = _path_min(g, here, arc, ctx.profile[kt]) + ctx.service_min[kt][ti]
            end_min = ctx.end_of(kt)(arc)[1]
            q = ctx.demand[kt][ti]
            if v.capacity is not None and load + q > v.capacity * (1 + 1e-9) and cur:
                # reload at the nearest refill site
                r = min(refills, key=lambda n: g.dist(here, g.terminal(n)))
                minutes += _path_min(g, here, g.terminal(r), ctx.profile[kt]) + settings.reload_min
                trips.append(cur)
                cur, load, here = [], 0.0, g.free(r)
                continue
            if (
                v.max_time_min is not None
                and minutes + step_min + end_min > v.max_time_min
                and (cur or trips)
            ):
                break
            cur.append((ti, arc))
            load += q
            minutes += step_min
            here = arc
            i += 1
        if cur:
            trips.append(cur)
        routes.append((kt, trips))
        k += 1
    return routes


def _path_min(g: StateGraph, source: int, target: int, profile: int = 0) -> float:
    """Deadhead minutes to the start of ``target`` (arc) or to ``target`` (terminal), at
    the speeds of ``profile``."""
    m = g.minutes(source, target, profile)
    return m - float(g.profiles[profile][target]) if target < g.n_arcs else m


# -- from visits to steps ------------------------------------------------------------------------
def realise(
    ctx: _Context,
    routes: Sequence[RouteSpec],
    method: str,
    trip_ends: dict[int, list[str | None]] | None = None,
) -> FleetPlan:
    """Steps, loads, minutes and class completion times for routes of visits; each trip
    ends where ``trip_ends`` says (route index → node per trip), else at the nearest
    refill site or the route's end.  O(steps)."""
    g = ctx.graph
    settings = ctx.settings
    out: list[Route] = []
    per_type: dict[int, int] = {}
    class_done: dict[int, float] = {}
    for k, (kt, trips) in enumerate(routes):
        v = settings.vehicles[kt]
        per_type[kt] = per_type.get(kt, 0) + 1
        name = v.name if v.count == 1 else f"{v.name}-{per_type[kt]}"
        node = ctx.homes[kt]
        here = g.free(node)
        route = Route(name, v.name, [])
        clock = 0.0
        for n, visits in enumerate(trips):
            steps = []
            load = 0.0
            stop = settings.reload_min if n > 0 else 0.0  # the reload this trip starts with
            for ti, arc in visits:
                path = g.path(here, arc)
                steps += [g.step(a, False) for a in path[:-1]]
                steps.append(g.step(arc, True))
                load += ctx.demand[kt][ti]
                here = arc
            if n == len(trips) - 1:
                ends = ctx.end_states[kt]
            else:
                ends = [g.terminal(r) for r in settings.refill_sites]
            chosen = trip_ends[k][n] if trip_ends and k in trip_ends else None
            if chosen is not None and g.terminal(chosen) in ends:
                ends = [g.terminal(chosen)]
            end = min(ends, key=lambda s: g.dist(here, s))
            steps += [g.step(a, False) for a in g.path(here, end)]
            end_node = g.node_ids[end - g.n_arcs - len(g.node_ids)]
            trip = Trip(node, end_node, steps, load, stop)
            clock += stop
            for s in steps:
                seg = ctx.network.segments[s.segment]
                clock += v.pass_minutes(seg, s.service)
                trip.minutes += v.pass_minutes(seg, s.service)
                if s.service:
                    p = priority_of(seg)
                    route.class_done_min[p] = clock
            route.trips.append(trip)
            node = end_node
            here = g.free(end_node)
        for p, m in route.class_done_min.items():
            class_done[p] = max(class_done.get(p, 0.0), m)
        out.append(route)
    return FleetPlan(
        out,
        method,
        settings.seed,
        ctx.network.name,
        class_done_min=dict(sorted(class_done.items())),
        day=settings.day,
        reload_min=settings.reload_min,
    )


__all__ = ["FleetSettings", "VehicleType", "giant_tour", "plan_fleet", "realise"]
