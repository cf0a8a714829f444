"""The planner's view of the network: service tasks and turn-aware deadhead paths.

**Tasks.**  Every service pass a street needs on the planned day is one task: a
one-way or ``along`` pass has one allowed arc, an ``either`` pass on a two-way
street two (one per direction).

**Arc states.**  Deadhead paths are shortest paths on the *line graph* of the
drivable arcs (an arc-state graph: a state is "just arrived along arc a"), so a
turn rule is a missing edge of the state graph: with U-turns forbidden, arriving
at node v from u and leaving v back to u is allowed only at a turning place or a
dead end (the usual construction for turn penalties and prohibitions, e.g.
Caldwell 1961; Winter 2002, "Modeling costs of turns in route planning",
GeoInformatica 6(4)).  Each node also has a *free* state (a vehicle leaving a
depot or refill site, any heading) and a *terminal* state (arrival, any heading).

Distances come from SciPy's Dijkstra (``scipy.sparse.csgraph``) run from the
states the planner needs: O(S (E + N log N)) for S sources on the state graph with
N states and E turns.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import dijkstra

from core.errors import FleetError, UnreachableError, describe_streets
from core.fleet.settings import FleetSettings, VehicleType, priority_of, serviced_today
from core.model import Network, OneWay
from core.plan import Step


@dataclass(frozen=True, slots=True)
class Task:
    """One service pass: the segment, its allowed arcs (1 or 2), demand, minutes, class."""

    index: int
    segment: str
    arcs: tuple[int, ...]
    demand: float
    service_min: float
    priority: int


class StateGraph:
    """Drivable arcs, the turn-aware state graph and shortest paths on it.

    Parameters
    ----------
    network
        The street network (not modified).
    vehicle
        The vehicle type whose speeds give deadhead minutes.
    forbid_uturns
        Forbid U-turns except at turning places and dead ends.
    """

    def __init__(self, network: Network, vehicle: VehicleType, forbid_uturns: bool) -> None:
        self.network = network
        self.node_ids = list(network.nodes)
        self.node_index = {n: i for i, n in enumerate(self.node_ids)}
        seg_of, fwd, frm, to, length, minutes = [], [], [], [], [], []
        self.arc_of: dict[tuple[str, bool], int] = {}
        for seg in network.segments.values():
            for forward in (True, False):
                if seg.oneway is OneWay.FORWARD and not forward:
                    continue
                if seg.oneway is OneWay.BACKWARD and forward:
                    continue
                a, b = (seg.start, seg.end) if forward else (seg.end, seg.start)
                self.arc_of[(seg.id, forward)] = len(seg_of)
                seg_of.append(seg.id)
                fwd.append(forward)
                frm.append(self.node_index[a])
                to.append(self.node_index[b])
                length.append(seg.length)
                minutes.append(vehicle.pass_minutes(seg, False))
        self.arc_seg = seg_of
        self.arc_fwd = fwd
        self.arc_from = np.asarray(frm, dtype=np.int64)
        self.arc_to = np.asarray(to, dtype=np.int64)
        self.arc_len = np.asarray(length, dtype=float)
        self.arc_min = np.asarray(minutes, dtype=float)
        self.forbid_uturns = forbid_uturns
        self.turn_ok = uturn_places(network)
        self._build()
        self._rows: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        self._mins: dict[tuple[int, int], np.ndarray] = {}
        self._cycles: dict[int, int | None] = {}
        self.profiles: list[np.ndarray] = [self.arc_min]
        """Deadhead minutes per arc for each speed profile; 0 is the vehicle given here."""

    def profile_of(self, vehicle: VehicleType) -> int:
        """The index of ``vehicle``'s speed profile in :attr:`profiles`, added when new:
        the paths stay the shortest by length, only their minutes differ.  O(arcs)."""
        mins = np.asarray(
            [vehicle.pass_minutes(self.network.segments[s], False) for s in self.arc_seg],
            dtype=float,
        )
        for k, known in enumerate(self.profiles):
            if np.array_equal(known, mins):
                return k
        self.profiles.append(mins)
        return len(self.profiles) - 1

    # -- states ---------------------------------------------------------------------------------
    @property
    def n_arcs(self) -> int:
        return len(self.arc_seg)

    def free(self, node: str) -> int:
        """The state of a vehicle at ``node`` with any heading (leaving a depot)."""
        return self.n_arcs + self.node_index[node]

    def terminal(self, node: str) -> int:
        """The state of arriving at ``node`` whatever the heading."""
        return self.n_arcs + len(self.node_ids) + self.node_index[node]

    def _build(self) -> None:
        """The state graph: arc a → arc b when b leaves where a arrives and the turn is
        allowed; free(v) → every arc leaving v; every arc into v → terminal(v).  The
        weight of an edge is the length of the arc entered.  O(sum of in × out degrees)."""
        na, nn = self.n_arcs, len(self.node_ids)
        out_arcs: list[list[int]] = [[] for _ in range(nn)]
        for k in range(na):
            out_arcs[int(self.arc_from[k])].append(k)
        rows, cols, w = [], [], []
        for a in range(na):
            v = int(self.arc_to[a])
            u = int(self.arc_from[a])
            for b in out_arcs[v]:
                uturn = self.forbid_uturns and int(self.arc_to[b]) == u and u != v
                if uturn and not self.turn_ok[self.node_ids[v]]:
                    continue
                rows.append(a)
                cols.append(b)
                w.append(self.arc_len[b])
            rows.append(a)
            cols.append(na + nn + v)
            w.append(0.0)
        for v in range(nn):
            for b in out_arcs[v]:
                rows.append(na + v)
                cols.append(b)
                w.append(self.arc_len[b])
            rows.append(na + v)
            cols.append(na + nn + v)
            w.append(0.0)
        n = na + 2 * nn
        # Dijkstra treats explicit zeros as absent edges: shift weights by a tiny epsilon
        # on zero-length moves (terminal arrivals) and take it back out afterwards.
        self._eps = 1e-9
        wa = np.asarray(w, dtype=float)
        wa = np.where(wa > 0, wa, self._eps)
        self.graph = csr_matrix((wa, (rows, cols)), shape=(n, n))
        self.graph_t = self.graph.T.tocsr()
        self.n_states = n

    def rows(self, sources: list[int]) -> None:
        """Run Dijkstra from every source not yet run.  O(S (E + N log N))."""
        todo = sorted({s for s in sources if s not in self._rows})
        if not todo:
            return
        dist, pred = dijkstra(self.graph, directed=True, indices=todo, return_predecessors=True)
        for k, s in enumerate(todo):
            self._rows[s] = (dist[k], pred[k])

    def dist(self, source: int, target: int) -> float:
        """Length of the shortest state path (``inf`` when none); includes the entered
        arc when the target is an arc state."""
        if source == target:
            if source >= self.n_arcs:
                return 0.0
            p = self._cycle_pred(source)
            return np.inf if p is None else self.dist(source, p) + float(self.arc_len[source])
        self.rows([source])
        d = float(self._rows[source][0][target])
        return round(d, 6) if np.isfinite(d) else np.inf

    def path(self, source: int, target: int) -> list[int]:
        """The arcs driven from ``source`` to ``target`` (excluding the source arc,
        including the target arc when it is an arc state).  O(path length)."""
        if source == target:
            if source >= self.n_arcs:
                return []
            p = self._cycle_pred(source)
            if p is None:
                raise UnreachableError("no drivable path between two planned positions")
            return [*self.path(source, p), source]
        self.rows([source])
        dist, pred = self._rows[source]
        if not np.isfinite(dist[target]):
            raise UnreachableError("no drivable path between two planned positions")
        seq: list[int] = []
        k = target
        while k != source:
            if k < self.n_arcs:
                seq.append(k)
            k = int(pred[k])
            if k < 0:
                raise UnreachableError("no drivable path between two planned positions")
        seq.reverse()
        return seq

    def minutes(self, source: int, target: int, profile: int = 0) -> float:
        """Driving minutes along the shortest path of :meth:`dist` (deadhead speeds of
        ``profile``), including the target arc when it is an arc state.  O(N log N) once
        per source."""
        if source == target:
            if source >= self.n_arcs:
                return 0.0
            p = self._cycle_pred(source)
            if p is None:
                return np.inf
            return self.minutes(source, p, profile) + float(self.profiles[profile][source])
        return float(self.minutes_row(source, profile)[target])

    def _cycle_pred(self, arc: int) -> int | None:
        """The state before ``arc`` on the shortest closed walk from ``arc`` back into it
        (``arc`` itself when it may follow itself, e.g. a loop).  O(in-degree)."""
        if arc in self._cycles:
            return self._cycles[arc]
        self.rows([arc])
        d = self._rows[arc][0]
        col = self.graph_t.getrow(arc)
        best, best_p = np.inf, None
        for p, w in zip(col.indices.tolist(), col.data.tolist(), strict=True):
            if p >= self.n_arcs:
                continue
            c = (0.0 if p == arc else float(d[p])) + w
            if c < best:
                best, best_p = c, p
        self._cycles[arc] = best_p
        return best_p

    def minutes_row(self, source: int, profile: int = 0) -> np.ndarray:
        """Minutes from ``source`` to every state (see :meth:`minutes`), at the speeds of
        ``profile`` (:meth:`profile_of`)."""
        key = (source, profile)
        if key not in self._mins:
            self.rows([source])
            dist, pred = self._rows[source]
            self._mins[key] = tree_minutes(self, source, dist, pred, self.profiles[profile])
        return self._mins[key]

    def deadhead(self, source: int, arc: int) -> float:
        """Deadhead length from ``source`` to the start of servicing ``arc``."""
        d = self.dist(source, arc)
        return d - self.arc_len[arc] if np.isfinite(d) else np.inf

    def step(self, arc: int, service: bool) -> Step:
        seg = self.arc_seg[arc]
        return Step(
            seg,
            self.node_ids[int(self.arc_from[arc])],
            self.node_ids[int(self.arc_to[arc])],
            service,
            float(self.arc_len[arc]),
            self.arc_fwd[arc],
        )


def uturn_places(network: Network) -> dict[str, bool]:
    """Per node, whether a U-turn is allowed there: a turning place, or a dead end (one
    neighbouring node, loops aside).  O(n + m)."""
    neighbours: dict[str, set[str]] = {n: set() for n in network.nodes}
    for seg in network.segments.values():
        if seg.start != seg.end:
            neighbours[seg.start].add(seg.end)
            neighbours[seg.end].add(seg.start)
    return {n: node.turning_place or len(neighbours[n]) <= 1 for n, node in network.nodes.items()}


def build_tasks(network: Network, graph: StateGraph, settings: FleetSettings) -> list[Task]:
    """The service tasks of the planned day.  O(m).

    Raises
    ------
    FleetError
        A single pass needs more than a full load of every vehicle type.
    """
    vehicle = settings.vehicles[0]
    tasks: list[Task] = []
    for seg in network.required():
        if not serviced_today(seg, settings.day):
            continue
        f, b, e = seg.required_passes()
        n = f + b + e
        prio = priority_of(seg)
        fa = graph.arc_of.get((seg.id, True))
        ba = graph.arc_of.get((seg.id, False))
        kinds = [(fa,)] * f + [(ba,)] * b + [tuple(x for x in (fa, ba) if x is not None)] * e
        if not any(
            v.capacity is None or v.pass_demand(seg, n) <= v.capacity * (1 + 1e-9)
            for v in settings.vehicles
        ):
            need = ", ".join(
                f"{v.pass_demand(seg, n):g} for {v.name!r} (a full load is {v.capacity:g})"
                for v in settings.vehicles
            )
            raise FleetError(
                f"street {seg.label} needs more per pass than any vehicle carries: {need}"
            )
        for arcs in kinds:
            demand = vehicle.pass_demand(seg, n)
            tasks.append(
                Task(
                    len(tasks),
                    seg.id,
                    tuple(int(a) for a in arcs),
                    demand,
                    vehicle.pass_minutes(seg, True),
                    prio,
                )
            )
    return tasks


def task_demands(network: Network, tasks: Sequence[Task], vehicle: VehicleType) -> list[float]:
    """The load of each task for ``vehicle``'s demand model (its spread rate, width and
    unit; a street's own demand is the same for every vehicle).  O(n)."""
    out = []
    for t in tasks:
        seg = network.segments[t.segment]
        out.append(vehicle.pass_demand(seg, max(1, sum(seg.required_passes()))))
    return out


def task_minutes(network: Network, tasks: Sequence[Task], vehicle: VehicleType) -> list[float]:
    """The service minutes of each task at ``vehicle``'s speeds.  O(n)."""
    return [vehicle.pass_minutes(network.segments[t.segment], True) for t in tasks]


def check_reachable(graph: StateGraph, tasks: list[Task], starts: list[str]) -> None:
    """Raise :class:`UnreachableError` naming the streets no vehicle can reach and leave.

    O(S (E + N log N)) for the Dijkstra runs."""
    sources = [graph.free(s) for s in starts]
    graph.rows(sources)
    bad = []
    for t in tasks:
        ok = False
        for a in t.arcs:
            reach = any(np.isfinite(graph.dist(s, a)) for s in sources)
            back = any(np.isfinite(graph.dist(a, graph.terminal(s))) for s in starts)
            ok = ok or (reach and back)
        if not ok:
            bad.append(t.segment)
    if bad:
        names = graph.network.street_names()
        raise UnreachableError(
            "these streets cannot be serviced on a route from a depot and back (one-way "
            f"streets or turn rules): {describe_streets(sorted(set(bad)), names)}",
            segments=sorted(set(bad)),
        )


def tree_minutes(
    graph: StateGraph,
    source: int,
    d: np.ndarray,
    pred: np.ndarray,
    arc_min: np.ndarray | None = None,
) -> np.ndarray:
    """Minutes along the shortest-length paths of one Dijkstra tree (states in order of
    distance, each adding its arc's minutes, ``arc_min`` or the graph's, to its
    predecessor's).  O(N log N)."""
    m = np.full(len(d), np.inf)
    m[source] = 0.0
    order = np.argsort(d, kind="stable")
    na = graph.n_arcs
    arc_min = graph.arc_min if arc_min is None else arc_min
    for t in order.tolist():
        if t == source or not np.isfinite(d[t]):
            continue
        p = int(pred[t])
        if p < 0:
            continue
        m[t] = m[p] + (arc_min[t] if t < na else 0.0)
    return m
