"""One closed circuit from the depot that services every street that needs it.

:func:`plan_circuit` is the engine's front door.  It checks the network,
picks the exact method that fits and falls back to a published heuristic,
with a proven lower bound, only where exactness is out of reach:

===========================  ===========================================  ==========
streets                      method                                       result
===========================  ===========================================  ==========
all two-way                  T-join by sparse-blossom matching            exact
                             (Edmonds & Johnson 1973)
one-way passes only          minimum-cost flow on HiGHS                    exact
                             (Edmonds & Johnson 1973; Beltrami & Bodin
                             1974)
mixed                        parity T-join, LP-guided orientation and     exact, or
                             minimum-cost flow, then (up to 20,000 arcs)  bound + gap
                             an integer program on HiGHS within the
                             time budget
service in separate pieces   integer program with connectivity flow,      exact, or
(rural postman)              else Frederickson's (1979) spanning-tree     bound + gap
                             links
===========================  ===========================================  ==========

Then an Eulerian circuit of the passes is built from the depot: by default the
one that drives best under the turn rules (:mod:`core.solve.turn_rules`:
straight on preferred, few turns across traffic, U-turns only at dead ends and
turning places, ways round the block where asked), else Hierholzer's (1873)
walk.  Each pass is marked service or deadhead: a segment is serviced as many
times as its requirement asks, by the first passes in the allowed direction;
later passes are deadhead.

The network is never modified.
"""

from __future__ import annotations

import math
import threading
import time
from collections.abc import Callable
from dataclasses import replace

import numpy as np

from core.errors import Cancelled, SolverError
from core.model import Network
from core.plan import Plan, Step, TurnCounts
from core.solve.arcs import ArcProblem, compile_network
from core.solve.connect import linking_arcs, required_pieces
from core.solve.euler import euler_circuit, orient_even
from core.solve.mixed_ip import (
    arc_model,
    balance_fixed,
    flow_relaxation,
    orient_by_relaxation,
    pieces_without_depot,
    solve_arc_ip,
)
from core.solve.reach import check_reachable
from core.solve.tjoin import min_tjoin
from core.solve.turn_rules import count_turns, turn_circuit, turn_geometry
from core.turns import DriveSide, parse_drive_side

ProgressFn = Callable[[str, float], None]
StopFlag = Callable[[], bool] | threading.Event

METHOD_TJOIN = "T-join by sparse-blossom matching (Edmonds & Johnson 1973)"
METHOD_FLOW = "minimum-cost flow (Edmonds & Johnson 1973)"
METHOD_IP = "integer program (HiGHS)"
METHOD_IP_LINKED = "integer program with connectivity flow (HiGHS)"
METHOD_ROUND = "LP-guided orientation and minimum-cost flow"
METHOD_EVEN_ROUND = "parity T-join, LP-guided orientation and minimum-cost flow"
METHOD_LINKS = "Frederickson (1979) spanning-tree links, then "

_IP_MAX_ARCS = 20_000
"""Integer programs are tried only up to this many arcs (about 10,000 two-way streets):
beyond it HiGHS does not close the gap within minutes, and the heuristics' gap is ~1 %."""


STRATEGIES = ("auto", "heuristic")


class Stopwatch:
    """Seconds left of a budget."""

    def __init__(self, budget: float) -> None:
        self.t0 = time.perf_counter()
        self.budget = budget

    def left(self) -> float:
        return self.budget - (time.perf_counter() - self.t0)


class _Ctx:
    def __init__(
        self, progress: ProgressFn | None, stop: StopFlag | None, budget: float, strategy: str
    ):
        self.progress = progress
        self.stop = stop
        self.watch = Stopwatch(budget)
        self.heuristic_only = strategy == "heuristic"

    def say(self, what: str, fraction: float) -> None:
        if self.progress is not None:
            self.progress(what, fraction)

    def stopped(self) -> bool:
        s = self.stop
        if s is None:
            return False
        return s.is_set() if isinstance(s, threading.Event) else bool(s())

    def check(self) -> None:
        if self.stopped():
            raise Cancelled("planning was cancelled")


def plan_circuit(
    network: Network,
    depot: str | None = None,
    *,
    time_limit: float = 30.0,
    progress: ProgressFn | None = None,
    stop: StopFlag | None = None,
    strategy: str = "auto",
    drive: str | DriveSide = DriveSide.RIGHT,
    turn_rules: bool = True,
    uturn_detours: bool | None = None,
) -> Plan:
    """Plan the shortest closed circuit from the depot over every required pass.

    Parameters
    ----------
    network
        The street network; not modified.
    depot
        Node id of the depot; defaults to ``network.depot``.
    time_limit
        Seconds the integer programs may use in all (mixed and rural cases).
    progress
        Called as ``progress(what, fraction)`` between phases.
    stop
        A callable returning True, or a :class:`threading.Event` that is set,
        to cancel between phases (raises :class:`~core.errors.Cancelled`).
    strategy
        ``"auto"`` (exact where the time budget allows) or ``"heuristic"``
        (skip the integer programs: mixed and rural cases use the heuristics
        straight away, still with a lower bound).
    drive
        ``"right"`` or ``"left"``: the side of the road traffic keeps to (which
        turns cross oncoming traffic).
    turn_rules
        Among the Eulerian circuits of the optimal passes, build one that prefers
        straight on and avoids turns across traffic and U-turns
        (:mod:`core.solve.turn_rules`); the length is unchanged.  When False the
        circuit is Hierholzer's walk as found.  Turns are counted either way.
    uturn_detours
        Replace U-turns that remain where none is allowed (not a dead end or
        turning place) by the shortest way round, which adds deadhead.  ``None``
        (default): only on networks with coordinates (real street maps); abstract
        research instances are planned as their problem states them.

    Returns
    -------
    Plan
        The circuit with totals, a proven lower bound, the method and timings.

    Raises
    ------
    DepotError, UnreachableError, OneWayTrapError
        With the streets at fault named.
    """
    if strategy not in STRATEGIES:
        raise ValueError(f"strategy {strategy!r} is not one of {', '.join(map(repr, STRATEGIES))}")
    side = parse_drive_side(drive)
    ctx = _Ctx(progress, stop, time_limit, strategy)
    timings: dict[str, float] = {}
    t = time.perf_counter()
    ctx.say("checking the network", 0.0)
    p = compile_network(network, depot)
    check_reachable(p, network.street_names())
    timings["check_s"] = time.perf_counter() - t
    depot_id = p.node_ids[p.depot]
    if not np.any(p.required):
        return Plan(
            depot_id,
            [],
            0.0,
            "nothing needs service",
            True,
            timings,
            ["No street in this network needs service."],
            network.name,
        )
    ctx.check()
    t = time.perf_counter()
    ctx.say("finding the least deadhead", 0.1)
    kind = p.kind()
    label = required_pieces(p)
    notes: list[str] = []
    if int(label.max()) == 0:
        x, bound, exact, method = _solve_connected(p, kind, None, ctx)
    else:
        x, bound, exact, method = _solve_pieces(p, kind, label, ctx, notes)
    timings["solve_s"] = time.perf_counter() - t
    ctx.check()
    t = time.perf_counter()
    ctx.say("walking the circuit", 0.9)
    total = float(np.dot(x, p.arc_cost))
    if exact or bound > total:
        bound = total
    detours = network.has_coordinates if uturn_detours is None else bool(uturn_detours)
    steps, turns, turns_s = _walk_with_turns(p, x, network, side, turn_rules, detours, ctx, notes)
    timings["circuit_s"] = time.perf_counter() - t
    timings["total_s"] = sum(timings.values())
    timings["turn_rules_s"] = turns_s  # part of circuit_s: pairing, joining, detours, counts
    if turns.extra_m > 0:
        exact = False  # proven shortest before the detours; the gap now shows their cost
        method += "; detours for turn rules"
    plan = Plan(
        depot_id, steps, bound, f"{kind}: {method}", exact, timings, notes, network.name, turns
    )
    ctx.say("done", 1.0)
    return plan


# -- the connected case ---------------------------------------------------------------------------
def _loop_passes(p: ArcProblem) -> np.ndarray:
    """Per arc, the service passes of loop segments (which no balancing needs)."""
    x = np.zeros(len(p.arc_seg), dtype=np.int64)
    loops = np.nonzero((p.tail == p.head) & p.required)[0]
    if len(loops):
        fwd, bwd = p.segment_arcs()
        f, b = fwd[loops], bwd[loops]
        # each pass goes round the loop the way its requirement says; free passes go forward
        # where allowed.  A one-way loop has only one arc and its needs are all on it.
        x[np.where(f >= 0, f, b)] += p.need_fwd[loops] + p.need_any[loops]
        x[np.where(b >= 0, b, f)] += p.need_bwd[loops]
    return x


def _undirected(p: ArcProblem, forced: np.ndarray | None) -> np.ndarray:
    """Passes per arc for a network with no one-way street: exact by T-join.

    ``forced`` (per arc) adds passes that must be driven (links between
    pieces); on a two-way network their direction is free.
    """
    non_loop = p.tail != p.head
    q = np.where(non_loop, p.need_any, 0).astype(np.int64)
    if forced is not None:
        q = q + np.bincount(p.arc_seg, weights=forced, minlength=p.n_segments).astype(np.int64)
    deg = np.bincount(p.tail, weights=q, minlength=p.n_nodes) + np.bincount(
        p.head, weights=q, minlength=p.n_nodes
    )
    odd = (deg.astype(np.int64) % 2) == 1
    join = min_tjoin(p.n_nodes, p.tail, p.head, p.length, odd)
    und = q.copy()
    und[join] += 1
    rep = np.repeat(np.arange(p.n_segments), und)
    dirs = orient_even(p.n_nodes, p.tail[rep], p.head[rep])
    fwd_n = np.bincount(rep[dirs > 0], minlength=p.n_segments)
    bwd_n = np.bincount(rep[dirs < 0], minlength=p.n_segments)
    fwd, bwd = p.segment_arcs()
    x = p.fixed_lower() + _loop_passes(p)
    np.add.at(x, fwd[fwd_n > 0], fwd_n[fwd_n > 0])
    np.add.at(x, bwd[bwd_n > 0], bwd_n[bwd_n > 0])
    return x


def _directed(p: ArcProblem, forced: np.ndarray | None) -> np.ndarray:
    lower = p.fixed_lower()
    if forced is not None:
        lower = np.maximum(lower, forced)
    return balance_fixed(p, lower) + _loop_passes(p)


def parity_join(p: ArcProblem) -> np.ndarray:
    """Segments of a shortest T-join of the street graph with directions ignored, where T
    is the nodes touched by an odd number of service passes (loops aside)."""
    return min_tjoin(p.n_nodes, p.tail, p.head, p.length, p.service_degree() % 2 == 1)


def parity_bound(p: ArcProblem, join: np.ndarray | None = None) -> float:
    """A lower bound on any circuit: service plus a shortest parity-fixing T-join.

    Every closed walk, seen without directions, meets each node an even
    number of times, so the passes beyond service form a T-join of the
    street graph (Edmonds & Johnson 1973).  Valid for mixed networks and for
    service in several pieces; exact for connected two-way networks.
    """
    if join is None:
        join = parity_join(p)
    return p.service_length + float(p.length[join].sum())


def _with_join(p: ArcProblem, join: np.ndarray) -> ArcProblem:
    """``p`` with one more pass needed on every segment of ``join``: free-direction on
    two-way streets, along the street on one-way ones."""
    need_any = p.need_any.copy()
    need_fwd = p.need_fwd.copy()
    need_bwd = p.need_bwd.copy()
    ow = p.oneway[join]
    np.add.at(need_any, join[ow == 0], 1)
    np.add.at(need_fwd, join[ow > 0], 1)
    np.add.at(need_bwd, join[ow < 0], 1)
    return replace(p, need_any=need_any, need_fwd=need_fwd, need_bwd=need_bwd)


def _round_and_balance(
    q: ArcProblem, forced: np.ndarray | None, ctx: _Ctx
) -> tuple[np.ndarray, float]:
    """LP-guided orientation, then minimum-cost flow; returns passes and the LP value."""
    mod = arc_model(q, forced)
    relax = solve_arc_ip(
        q, mod, time_limit=max(ctx.watch.left(), 5.0), relax=True, stop=ctx.stopped
    )
    # where the LP ran out of time (very large towns) a min-cost-flow relaxation guides
    guide = relax.x if relax.x is not None else flow_relaxation(q, mod)
    lower = orient_by_relaxation(q, mod, np.asarray(guide, dtype=np.float64))
    if forced is not None:
        lower = np.maximum(lower, forced)
    x = balance_fixed(q, lower) + _loop_passes(q)
    return x, (relax.objective if relax.x is not None else 0.0)


def _mixed(
    p: ArcProblem, forced: np.ndarray | None, ctx: _Ctx, budget: float
) -> tuple[np.ndarray, float, bool, str]:
    """Mixed network: heuristic with a bound first, then the integer program if it may pay."""
    loops = _loop_passes(p)
    # Heuristic starts, the better kept: orientation guided by the LP relaxation of the
    # problem whose parity was first fixed by a T-join with directions ignored
    # (Frederickson's 1979 EvenDegree step before his InOutDegree step), and, on networks
    # small enough for a second LP to be cheap, of the problem itself.
    join = parity_join(p)
    x, lp_value = _round_and_balance(_with_join(p, join), forced, ctx)
    method = METHOD_EVEN_ROUND
    small = len(p.arc_seg) <= _IP_MAX_ARCS
    if small:
        x_plain, lp_value = _round_and_balance(p, forced, ctx)
        if np.dot(x_plain, p.arc_cost) < np.dot(x, p.arc_cost):
            x, method = x_plain, METHOD_ROUND
    bound = 0.0
    if forced is None:  # with links forced in, these would bound a different problem
        bound = max(parity_bound(p, join), lp_value if small else 0.0)
    cost = float(np.dot(x, p.arc_cost))
    if forced is None and cost <= bound * (1 + 1e-12):
        return x, cost, True, method
    ctx.check()
    if ctx.heuristic_only or not small or ctx.watch.left() < 0.5:
        return x, bound, False, method
    mod = arc_model(p, forced)
    res = solve_arc_ip(p, mod, time_limit=min(budget, ctx.watch.left()), stop=ctx.stopped)
    if res.x is not None:
        cand = loops.copy()
        cand[mod.arcs] += res.x
        if res.optimal:
            return cand, res.objective, True, METHOD_IP
        if np.dot(cand, p.arc_cost) < cost:
            x, method = cand, METHOD_IP + " (stopped at the time limit)"
    return x, max(bound, res.bound), False, method


def _solve_connected(
    p: ArcProblem, kind: str, forced: np.ndarray | None, ctx: _Ctx, budget: float | None = None
) -> tuple[np.ndarray, float, bool, str]:
    """Passes per arc, lower bound, exactness and method when the service is one piece."""
    if kind == "undirected":
        x = _undirected(p, forced)
        return x, float(np.dot(x, p.arc_cost)), True, METHOD_TJOIN
    if kind == "directed":
        x = _directed(p, forced)
        return x, float(np.dot(x, p.arc_cost)), True, METHOD_FLOW
    return _mixed(p, forced, ctx, ctx.watch.left() if budget is None else budget)


# -- service in several pieces (rural postman) ----------------------------------------------------
def _solve_pieces(
    p: ArcProblem, kind: str, label: np.ndarray, ctx: _Ctx, notes: list[str]
) -> tuple[np.ndarray, float, bool, str]:
    n_pieces = int(label.max()) + 1
    loops_at = p.tail[(p.tail == p.head) & p.required]
    mod = arc_model(p)
    loops = _loop_passes(p)
    bound = 0.0
    # 1. Without the links: exact and quick for two-way and one-way networks, a lower bound,
    #    and sometimes connected already (deadhead that pairs odd junctions may link pieces).
    if kind != "mixed" or ctx.heuristic_only:
        x0, bound, exact0, method0 = _solve_connected(p, kind, None, ctx)
        if not pieces_without_depot(p, mod, x0[mod.arcs], loops_required=loops_at):
            return x0, bound, exact0, method0
    ctx.check()
    # 2. Exact: the integer program with a connectivity flow from the depot to every piece.
    best_x: np.ndarray | None = None
    small = len(p.arc_seg) <= _IP_MAX_ARCS
    if small and not ctx.heuristic_only and ctx.watch.left() > 0.5:
        ctx.say(f"linking {n_pieces} separate pieces of service", 0.3)
        depot_piece = label[p.depot]
        reach = np.array(
            [int(np.argmax(label == c)) for c in range(n_pieces) if c != depot_piece],
            dtype=np.int64,
        )
        # Cuts around each piece and around the depot's piece are implied by the flow but
        # tighten its weak linear relaxation (the flow's big-M links).
        cuts = [label == c for c in range(n_pieces)]
        res = solve_arc_ip(
            p, mod, reach=reach, cuts=cuts, time_limit=ctx.watch.left() * 0.8, stop=ctx.stopped
        )
        bound = max(bound, res.bound)
        if res.x is not None:
            best_x = loops.copy()
            best_x[mod.arcs] += res.x
            if res.optimal:
                return best_x, float(np.dot(best_x, p.arc_cost)), True, METHOD_IP_LINKED
    # 3. Heuristic: Frederickson's links, then the connected-case method.
    ctx.check()
    bound = max(bound, parity_bound(p))
    links = linking_arcs(p, label)
    forced = np.zeros(len(p.arc_seg), dtype=np.int64)
    forced[links] = 1
    x, _bound, _exact, method = _solve_connected(p, kind, forced, ctx, max(ctx.watch.left(), 1.0))
    method = METHOD_LINKS + method
    if best_x is not None and np.dot(best_x, p.arc_cost) < np.dot(x, p.arc_cost):
        x, method = best_x, METHOD_IP_LINKED + " (stopped at the time limit)"
    notes.append(
        f"The streets that need service form {n_pieces} separate pieces; the links between "
        "them are not proven shortest (see the gap)."
    )
    return x, bound, False, method


# -- the walk -------------------------------------------------------------------------------------
def _walk_with_turns(
    p: ArcProblem,
    x: np.ndarray,
    network: Network,
    drive: DriveSide,
    turn_rules: bool,
    detours: bool,
    ctx: _Ctx,
    notes: list[str],
) -> tuple[list[Step], TurnCounts, float]:
    """The steps of the circuit, its turn counts and the seconds the turn work took; with
    ``turn_rules`` the circuit is built by :func:`core.solve.turn_rules.turn_circuit`,
    else by Hierholzer's walk."""
    t0 = time.perf_counter()
    geo = turn_geometry(p, network)
    if turn_rules:
        tc = turn_circuit(
            p, x, network, drive=drive, detours=detours, geometry=geo, check=ctx.check
        )
        arcs = tc.arcs
    else:
        arcs = circuit_arcs(p, x)
    turns = count_turns(p, geo, arcs, drive, p.node_ids)
    seconds = time.perf_counter() - t0
    steps = steps_of(p, arcs)
    if turn_rules and tc.detours:
        extra = math.fsum(d.length for d in tc.detours)
        turns.detours, turns.extra_m = len(tc.detours), extra
        where = ", ".join(sorted({p.node_ids[d.node] for d in tc.detours}, key=_natural)[:8])
        notes.append(
            f"Turn rules: {len(tc.detours)} way(s) round the block instead of a U-turn "
            f"(at {where}{', ...' if len(tc.detours) > 8 else ''}) add "
            f"{extra:,.1f}{' m' if network.crs else ' (length units)'} of deadhead."
        )
    if turns.uturn_nodes:
        where = ", ".join(sorted(set(turns.uturn_nodes), key=_natural)[:8])
        why = (
            "no way round was found (a one-way trap or a street with no way back)"
            if turn_rules and detours
            else "ways round were not asked for"
            if turn_rules
            else "turn rules were off"
        )
        notes.append(
            f"{len(turns.uturn_nodes)} U-turn(s) remain where none is allowed (at {where}"
            f"{', ...' if len(set(turns.uturn_nodes)) > 8 else ''}): {why}."
        )
    return steps, turns, seconds


def _natural(s: str) -> tuple[int, str]:
    return (int(s), "") if s.isdigit() else (1 << 62, s)


def circuit_arcs(p: ArcProblem, x: np.ndarray) -> list[int]:
    """The passes ``x`` (count per arc) as arcs in the order of Hierholzer's walk from the
    depot (no turn rules).  O(m)."""
    x = np.asarray(x, dtype=np.int64)
    arc = np.repeat(np.arange(len(x)), x)
    frm = p.arc_from[arc]
    to = p.arc_to[arc]
    if not np.array_equal(
        np.bincount(frm, minlength=p.n_nodes), np.bincount(to, minlength=p.n_nodes)
    ):
        raise SolverError("the passes are not balanced at every junction; this is a bug")
    order = euler_circuit(p.n_nodes, frm, to, p.depot)
    return arc[order].tolist()


def walk(p: ArcProblem, x: np.ndarray) -> list[Step]:
    """Walk the passes ``x`` (count per arc) as one circuit from the depot and mark service
    (Hierholzer's walk, no turn rules).  O(m)."""
    return steps_of(p, circuit_arcs(p, x))


def steps_of(p: ArcProblem, arcs: list[int]) -> list[Step]:
    """The steps of a circuit given as arcs in driving order, with service marked.

    Each segment is serviced by its first passes in an allowed direction,
    exactly as many times as it needs; later passes are deadhead.  O(m).
    """
    frm_l = p.arc_from[arcs].tolist() if arcs else []
    to_l = p.arc_to[arcs].tolist() if arcs else []
    need_f = p.need_fwd.tolist()
    need_b = p.need_bwd.tolist()
    need_a = p.need_any.tolist()
    arc_seg = p.arc_seg.tolist()
    arc_dir = p.arc_dir.tolist()
    length = p.length.tolist()
    seg_ids = p.seg_ids
    node_ids = p.node_ids
    steps: list[Step] = []
    for k, a in enumerate(arcs):
        s = arc_seg[a]
        service = False
        if arc_dir[a] > 0 and need_f[s] > 0:
            need_f[s] -= 1
            service = True
        elif arc_dir[a] < 0 and need_b[s] > 0:
            need_b[s] -= 1
            service = True
        elif need_a[s] > 0:
            need_a[s] -= 1
            service = True
        steps.append(
            Step(
                seg_ids[s],
                node_ids[frm_l[k]],
                node_ids[to_l[k]],
                service,
                length[s],
                arc_dir[a] > 0,
            )
        )
    if any(need_f) or any(need_b) or any(need_a):
        missing = [seg_ids[i] for i in range(len(seg_ids)) if need_f[i] or need_b[i] or need_a[i]]
        raise SolverError(f"the circuit misses service on {missing[:5]}; this is a bug")
    return steps
