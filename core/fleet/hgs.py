"""Arc routing through PyVRP: node-routing transformations of the service passes.

PyVRP (Wouda, Lan & Kool 2024, "PyVRP: a high-performance VRP solver package",
INFORMS J. Computing; its search descends from the hybrid genetic search of
Vidal 2022) solves vehicle routing on *nodes*, with several depots, reload depots
for multi-trip routes, route duration limits, vehicle types and mutually exclusive
client groups.  Two transformations of the passes are offered (``mode``):

``groups`` (default)
    each direction of a pass is one node (its entry and exit are the two ends of the
    street), and the directions of a two-way pass form a required mutually exclusive
    group: exactly one is visited.  This is arc routing as a generalised VRP
    (Baldacci, Bartolini & Laporte 2010, "Some applications of the generalized
    vehicle routing problem", JORS 61 — from memory); no constant is needed and a
    pass can never be split.  Chosen because the ``pairs`` form below let the search
    split pairs to gain time on the time-limited salt-spreading instance.
``pairs``
    the classical transformation (Pearn, Assad & Golden 1987; Longo, Poggi de
    Aragão & Uchoa 2006; Foulds, Longo & Martins 2015): a two-way pass u–v becomes
    two nodes ``u→v`` and ``v→u`` linked at zero cost; visiting ``u→v`` then its
    partner means servicing from u to v.  A constant M is added to every arc between
    different passes and M/2 to every arc to or from a depot, so a trip servicing k
    passes pays k·M and every solution that keeps the pairs together costs the real
    deadhead plus n·M; a split pair pays at least one extra M, which with M above
    twice the longest deadhead never pays on distance alone.

In both, the distance between nodes is the deadhead from the arc just serviced to
the start of the next, on the turn-aware state graph
(:class:`core.fleet.graph.StateGraph`), so one-way streets and turn rules hold; the
service length is a constant left out of the objective.  Vehicle types with other speeds
get their own PyVRP routing profile (durations along the same shortest paths, their own
service minutes folded into the travel times to each client, as PyVRP's service time
belongs to the client); vehicle types with another demand model (spread rate, width)
load a dimension of their own, as PyVRP's demand also belongs to the client.
Decoded plans are checked by the independent :mod:`core.fleet.check`.  Cost: the
matrices O(P·L²) for L nodes and P speed profiles; the search runs for its time budget.
"""

from __future__ import annotations

import copy
import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np
import pyvrp
from pyvrp.search import NeighbourhoodParams
from pyvrp.solve import SolveParams
from pyvrp.stop import StoppingCriterion

from core.fleet.graph import StateGraph, Task, task_demands, task_minutes
from core.fleet.settings import FleetSettings

Visit = tuple[int, int]
RouteSpec = tuple[int, list[list[Visit]]]
"""(vehicle type index, trips), each trip a list of visits."""

_BIG = 10**12
MODES = ("groups", "pairs")
"""``groups``: each direction of a two-way pass is its own node and the two form a
mutually exclusive required group (a generalised VRP; PyVRP's client groups);
``pairs``: the two-node transformation with the constant M described above."""


def _params() -> SolveParams:
    """Search settings: restarts after 20,000 iterations without improvement (default
    150,000) and 100 granular neighbours (default 50), both chosen on gdb8 and val4D
    where the defaults stalled (our measurements, noisy; see bench/bench_carp.py)."""
    return SolveParams(
        ils=pyvrp.IteratedLocalSearchParams(num_iters_no_improvement=20_000),
        neighbourhood=NeighbourhoodParams(num_neighbours=100),
    )


@dataclass(frozen=True)
class HandOver:
    """When a search should end early to leave the rest of its budget to another.

    It ends once its best has not improved for ``stall`` of the budget, while at least
    ``keep`` of the budget is left, if ``wanted(best)`` says so.  Shares count
    iterations when the search is held to an iteration count, else seconds."""

    stall: float
    keep: float
    wanted: Callable[[pyvrp.Solution], bool]


class _Stop(StoppingCriterion):
    """Stop at the time budget (or after ``iterations``) or when the caller's stop flag
    is raised; with a :class:`HandOver`, also when that says so (``ended_early`` then
    records it)."""

    def __init__(
        self,
        seconds: float,
        stopped: Callable[[], bool],
        iterations: int | None = None,
        tick: Callable[[], None] | None = None,
    ) -> None:
        self.start = time.perf_counter()
        self.seconds = seconds
        self.stopped = stopped
        self.iterations = iterations
        self.done = 0
        self.tick = tick
        self.next_tick = 0.0
        self.hand_over: HandOver | None = None
        self.best: pyvrp.Solution | None = None
        self.best_at = 0.0
        self.ended_early = False

    def spent(self) -> float:
        """The share of the budget spent so far."""
        if self.iterations is not None:
            return self.done / max(1, self.iterations)
        return (time.perf_counter() - self.start) / max(self.seconds, 1e-9)

    def __call__(self, best_cost: float) -> bool:
        if self.tick is not None and time.perf_counter() >= self.next_tick:
            self.next_tick = time.perf_counter() + 0.5
            self.tick()
        self.done += 1
        if self.iterations is not None and self.done > self.iterations:
            return True
        if self.iterations is None and time.perf_counter() - self.start >= self.seconds:
            return True
        h = self.hand_over
        if h is not None and self.best is not None:
            spent = self.spent()
            if spent - self.best_at >= h.stall and spent <= 1 - h.keep and h.wanted(self.best):
                self.ended_early = True
                return True
        return self.stopped()


class _Watch(pyvrp.IteratedLocalSearchCallbacks):
    """Tells the stopping rule of each new best solution (PyVRP's callback hook)."""

    def __init__(self, stop: _Stop) -> None:
        self.stop = stop

    def on_best(self, best: pyvrp.Solution) -> None:
        self.stop.best = best
        self.stop.best_at = self.stop.spent()


@dataclass
class SearchRun:
    """One PyVRP search: its best solution, whether it handed over early (see
    :meth:`NodeModel.solve`) and the iterations it used."""

    best: pyvrp.Solution
    ended_early: bool
    iterations: int


class NodeModel:
    """The PyVRP instance of a fleet problem and the map back to passes.

    Parameters
    ----------
    graph, tasks, settings
        The state graph, the passes and the fleet settings.
    end_state
        Per vehicle type, the terminal states its route may end in (one, or every
        refill site for ``end_at="refill"``).
    """

    def __init__(
        self,
        graph: StateGraph,
        tasks: Sequence[Task],
        settings: FleetSettings,
        starts: Sequence[str],
        end_states: Sequence[list[int]],
        refill_nodes: Sequence[str],
        timed: bool,
        mode: str = "groups",
    ) -> None:
        self.graph = graph
        self.tasks = tasks
        # -- depots: homes, refill sites, then one virtual end per distinct end set --
        depot_rows: list[int] = []
        depot_cols: list[list[int]] = []
        depot_index: dict[object, int] = {}

        self.depot_node: list[str | None] = []  # None: a virtual end (nearest refill)

        def depot(key: object, row: int, cols: list[int], node: str | None = None) -> int:
            if key not in depot_index:
                depot_index[key] = len(depot_rows)
                depot_rows.append(row)
                depot_cols.append(cols)
                self.depot_node.append(key if isinstance(key, str) else node)
            return depot_index[key]

        self.start_depot = [depot(s, graph.free(s), [graph.terminal(s)]) for s in starts]
        # With a reload stop time, a refill site that is also a home gets a depot of its
        # own: PyVRP charges a depot's service time at the start of every trip from it,
        # and leaving home is no reload.
        stop = timed and settings.reload_min > 0
        self.reload_min = settings.reload_min if stop else 0.0
        self.reload = [
            depot(("reload", r) if stop else r, graph.free(r), [graph.terminal(r)], r)
            for r in refill_nodes
        ]
        self.end_depot = []
        for k, states in enumerate(end_states):
            if len(states) == 1 and states[0] == graph.terminal(starts[k]):
                self.end_depot.append(self.start_depot[k])
            else:
                self.end_depot.append(depot(("end", tuple(states)), -1, list(states)))
        self.depot_cols = depot_cols
        # -- clients: (task, entry arc, exit arc) ---------------------------------------
        if mode not in MODES:
            raise ValueError(f"mode {mode!r} is not one of {', '.join(map(repr, MODES))}")
        self.mode = mode
        self.clients: list[tuple[int, int, int]] = []
        for t in tasks:
            if len(t.arcs) == 1:
                self.clients.append((t.index, t.arcs[0], t.arcs[0]))
            elif mode == "pairs":
                a0, a1 = t.arcs
                self.clients.append((t.index, a0, a1))
                self.clients.append((t.index, a1, a0))
            else:
                for a in t.arcs:
                    self.clients.append((t.index, a, a))
        nd, nc = len(depot_rows), len(self.clients)
        row_states = depot_rows + [c[2] for c in self.clients]
        graph.rows([s for s in row_states if s >= 0])
        dist = np.full((nd + nc, nd + nc), np.inf)
        col_arc = np.array([c[1] for c in self.clients], dtype=np.int64)
        nearest: list[list[int]] = []  # per row: the depot column state reached first
        for i, s in enumerate(row_states):
            if s < 0:
                nearest.append([])
                continue
            d, _pred = graph._rows[s]
            # to clients: the path to the entry arc minus that arc
            row = d[col_arc] - graph.arc_len[col_arc]
            same = col_arc == s
            if np.any(same):
                row[same] = graph.dist(s, s) - graph.arc_len[s]
            dist[i, nd:] = row
            nearest.append([cols[int(np.argmin(d[cols]))] for cols in depot_cols])
            dist[i, :nd] = d[nearest[-1]]
        finite = dist[np.isfinite(dist)]
        longest = float(finite.max()) if finite.size else 1.0
        self.dscale = 1 if np.allclose(graph.arc_len, np.round(graph.arc_len)) else 100
        # even, so that the two halves M/2 on the depot arcs add up to M exactly
        self.M = 2 * (int(longest * self.dscale) + 1) if mode == "pairs" else 0
        penalty = int(2 * longest * self.dscale) + 1
        di = np.where(np.isfinite(dist), np.round(dist * self.dscale), _BIG).astype(np.int64)
        task_of = np.array([-1] * nd + [c[0] for c in self.clients])
        prio = np.array([0] * nd + [tasks[c[0]].priority for c in self.clients])
        is_c = task_of >= 0
        inter = is_c[:, None] & is_c[None, :] & (task_of[:, None] != task_of[None, :])
        touch_depot = (~is_c[:, None]) ^ (~is_c[None, :])
        di[inter] += self.M
        di[touch_depot] += self.M // 2
        backwards = inter & (prio[None, :] < prio[:, None])
        di[backwards] += penalty
        same_task = is_c[:, None] & (task_of[:, None] == task_of[None, :])
        if mode == "pairs":
            di[same_task] = 0
        np.fill_diagonal(di, 0)
        di = np.minimum(di, _BIG)
        self.distance = di
        self.nd = nd
        # one speed profile per distinct set of vehicle speeds (PyVRP routing profiles)
        vs = settings.vehicles
        self.profile = [graph.profile_of(v) for v in vs] if timed else [0] * len(vs)
        self.durations = []
        for p in range(max(self.profile) + 1):
            mins = self._minutes(row_states, col_arc, nearest, p) if timed else None
            dur = np.zeros((nd + nc, nd + nc), dtype=np.int64)
            if mins is not None:
                dur = np.round(np.clip(np.where(np.isfinite(mins), mins, 0), 0, None) * 600)
                dur = dur.astype(np.int64)
            if mode == "pairs":
                dur[same_task] = 0
            np.fill_diagonal(dur, 0)
            self.durations.append(dur)
        self._build_data(settings, timed)

    def _minutes(
        self, row_states: list[int], col_arc: np.ndarray, nearest: list[list[int]], p: int
    ) -> np.ndarray:
        """Deadhead minutes between the nodes at the speeds of profile ``p``, along the
        shortest-length paths of the distance matrix.  O(n²)."""
        g, nd = self.graph, self.nd
        am = g.profiles[p]
        mins = np.zeros((len(row_states), len(row_states)))
        for i, s in enumerate(row_states):
            if s < 0:
                continue
            m = g.minutes_row(s, p)
            mins[i, nd:] = m[col_arc] - am[col_arc]
            same = col_arc == s
            if np.any(same):
                mins[i, nd:][same] = g.minutes(s, s, p) - am[s]
            mins[i, :nd] = m[nearest[i]]
        return mins

    def _load_models(self, settings: FleetSettings) -> list[list[float]]:
        """The loads of the tasks under each distinct demand model of the vehicle types
        (model 0: the tasks' own, the first type's); sets :attr:`load_dim`, the model of
        each type, and :attr:`qscale`, the integer scale of each model.  O(types · n)."""
        vs = settings.vehicles
        models = [[t.demand for t in self.tasks]]
        self.load_dim = [0] * len(vs)
        for k, v in enumerate(vs[1:], 1):
            mine = task_demands(self.graph.network, self.tasks, v)
            for j, known in enumerate(models):
                if known == mine:
                    self.load_dim[k] = j
                    break
            else:
                models.append(mine)
                self.load_dim[k] = len(models) - 1
        self.qscale = []
        for j, loads in enumerate(models):
            caps = [v.capacity for k, v in enumerate(vs) if self.load_dim[k] == j]
            known = [c for c in caps if c is not None]
            integral = all(float(x).is_integer() for x in loads) and all(
                float(c).is_integer() for c in known
            )
            self.qscale.append(1.0 if integral or not known else 1e6 / max(known))
        return models

    def _build_data(self, settings: FleetSettings, timed: bool) -> None:
        # Loads differ by vehicle when their spread rates or widths do, but PyVRP's
        # demand belongs to the client: each demand model is a load dimension of its
        # own, limited only for the vehicle types that use it.
        models = self._load_models(settings)
        per_client: list[tuple[list[int], int]] = []  # (loads, service) per client
        count = {t.index: 0 for t in self.tasks}
        for ti, _, _ in self.clients:
            count[ti] += 1
        # service minutes of each task per speed profile (profile 0: the tasks' own)
        service_min = [[t.service_min for t in self.tasks]]
        for p in range(1, len(self.durations)):
            v = settings.vehicles[self.profile.index(p)]
            service_min.append(task_minutes(self.graph.network, self.tasks, v))
        services: list[list[int]] = [[] for _ in self.durations]
        for ti, _, _ in self.clients:
            t = self.tasks[ti]
            q = [math.ceil(m[ti] * sc - 1e-6) for m, sc in zip(models, self.qscale, strict=True)]
            ss = [round(sm[ti] * 600) for sm in service_min]
            if count[ti] == 2 and self.mode == "pairs":
                first = self.clients.index((ti, t.arcs[0], t.arcs[1]))
                mine = len(per_client) == first
                q = [x // 2 + (x % 2 if mine else 0) for x in q]
                ss = [s // 2 + (s % 2 if mine else 0) for s in ss]
            for p, s in enumerate(ss):
                services[p].append(s)
            per_client.append((q, ss[0]))
        if len(self.durations) > 1:
            # Service times differ by vehicle, but PyVRP's belong to the client: fold each
            # profile's service into its travel times to the client instead.
            for p, dur in enumerate(self.durations):
                dur[:, self.nd :] += np.asarray(services[p], dtype=np.int64)[None, :]
                np.fill_diagonal(dur, 0)
            per_client = [(q, 0) for q, _ in per_client]
        n = self.nd + len(self.clients)
        locations = [pyvrp.Location(0, 0) for _ in range(n)]
        stop = round(self.reload_min * 600)
        depots = [
            pyvrp.Depot(k, service_duration=stop if k in self.reload else 0) for k in range(self.nd)
        ]
        alternative = self.mode == "groups"
        group_of: dict[int, int] = {}
        groups = []
        if alternative:
            members: dict[int, list[int]] = {}
            for k, (ti, _, _) in enumerate(self.clients):
                members.setdefault(ti, []).append(k)
            for ks in members.values():
                if len(ks) > 1:
                    for k in ks:
                        group_of[k] = len(groups)
                    groups.append(pyvrp.ClientGroup(ks, required=True))
        clients = [
            pyvrp.Client(
                self.nd + k,
                delivery=q,
                service_duration=s if timed else 0,
                required=k not in group_of,
                group=group_of.get(k),
            )
            for k, (q, s) in enumerate(per_client)
        ]
        types = []
        n_tasks = max(1, len(self.tasks))
        unlimited = [sum(q[j] for q, _ in per_client) + 1 for j in range(len(models))]
        for k, v in enumerate(settings.vehicles):
            j = self.load_dim[k]
            cap = list(unlimited)  # other vehicles' load models do not bind this one
            if v.capacity is not None:
                cap[j] = math.floor(v.capacity * self.qscale[j] + 1e-6)
            kwargs: dict[str, object] = {}
            if v.max_time_min is not None:
                kwargs["shift_duration"] = math.floor(v.max_time_min * 600 + 1e-6)
            if self.reload and v.capacity is not None:
                kwargs["reload_depots"] = list(self.reload)
            types.append(
                pyvrp.VehicleType(
                    v.count if v.count is not None else n_tasks,
                    capacity=cap,
                    start_depot=self.start_depot[k],
                    end_depot=self.end_depot[k],
                    profile=self.profile[k],
                    name=v.name,
                    **kwargs,
                )
            )
        self.data = pyvrp.ProblemData(
            locations,
            clients,
            depots,
            types,
            [self.distance] * len(self.durations),
            self.durations,
            groups=groups,
        )

    # -- to and from PyVRP -----------------------------------------------------------------------
    def to_solution(self, routes: Sequence[RouteSpec]) -> pyvrp.Solution | None:
        """A PyVRP solution from routes of visits (a warm start), or None if it cannot be
        expressed."""
        where = {(ti, entry): k for k, (ti, entry, _) in enumerate(self.clients)}
        partner = {}
        for k, (ti, entry, exit_) in enumerate(self.clients):
            if entry != exit_:
                partner[k] = where[(ti, exit_)]
        out = []
        try:
            for vt, trips in routes:
                acts: list[pyvrp.Activity] = []
                for n, trip in enumerate(trips):
                    if n > 0:
                        if not self.reload:
                            return None
                        acts.append(pyvrp.Activity(pyvrp.ActivityType.DEPOT, self.reload[0]))
                    for ti, arc in trip:
                        k = where[(ti, arc)]
                        acts.append(pyvrp.Activity(pyvrp.ActivityType.CLIENT, k))
                        if k in partner:
                            acts.append(pyvrp.Activity(pyvrp.ActivityType.CLIENT, partner[k]))
                out.append(pyvrp.Route(self.data, acts, vt))
            return pyvrp.Solution(self.data, out)
        except (KeyError, ValueError, RuntimeError, IndexError):
            return None

    def with_fleet(self, count: int) -> NodeModel:
        """This model with at most ``count`` vehicles of its single vehicle type (a copy;
        the matrices are shared)."""
        other = copy.copy(self)
        vt = self.data.vehicle_type(0).replace(num_available=count)
        other.data = self.data.replace(vehicle_types=[vt])
        return other

    def solve(
        self,
        seconds: float,
        seed: int,
        stopped: Callable[[], bool],
        initial: pyvrp.Solution | None,
        iterations: int | None = None,
        tick: Callable[[], None] | None = None,
        hand_over: HandOver | None = None,
    ) -> SearchRun:
        """PyVRP's search for ``seconds`` (or ``iterations``), from ``initial`` or its own
        random start; with ``hand_over``, ending early when that says so
        (:class:`HandOver`), so that the caller can use the rest for another search."""
        stop = _Stop(seconds, stopped, iterations, tick)
        params = _params()
        if hand_over is not None:
            stop.hand_over = hand_over
            stop.best = initial
            params = SolveParams(
                ils=replace(params.ils, callbacks=_Watch(stop)), neighbourhood=params.neighbourhood
            )
        res = pyvrp.solve(
            self.data,
            stop,
            seed=seed,
            collect_stats=False,
            display=False,
            params=params,
            initial_solution=initial,
        )
        return SearchRun(res.best, stop.ended_early, stop.done)

    def decode(self, sol: pyvrp.Solution) -> tuple[list[RouteSpec], int]:
        """Routes of visits from a PyVRP solution, and the number of split pairs (a pass
        whose partner node does not follow it at once; the pass is kept where its first
        node is).  O(L)."""
        routes: list[RouteSpec] = []
        seen: set[int] = set()
        split = 0
        self.trip_ends: dict[int, list[str | None]] = {}
        """Per decoded route, the depot or refill node where each trip ended (None: the
        nearest one)."""
        for r in sol.routes():
            trips: list[list[Visit]] = []
            cur: list[Visit] = []
            prev = None
            ends: list[str | None] = []
            for act in r.schedule():
                if act.is_depot():
                    if cur:
                        trips.append(cur)
                        ends.append(self.depot_node[act.idx])
                    cur, prev = [], None
                    continue
                ti, entry, _ = self.clients[act.idx]
                if ti in seen:
                    if prev != ti:
                        split += 1
                    prev = None
                    continue
                seen.add(ti)
                cur.append((ti, entry))
                prev = ti
            if cur:
                trips.append(cur)
                ends.append(None)
            if trips:
                self.trip_ends[len(routes)] = ends
                routes.append((r.vehicle_type(), trips))
        return routes, split
