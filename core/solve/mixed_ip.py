"""Integer programs for mixed networks and for optional streets, with HiGHS.

The model counts the passes ``x_a`` along every drivable arc ``a`` (a
two-way street has an arc each way, a one-way street one):

* ``x_a >= r_a``: the service passes whose direction is fixed;
* ``x_uv + x_vu >= q_e`` for a two-way street ``e`` whose ``q_e`` passes may
  go either way;
* as many passes into every node as out of it;
* odd-degree cuts: at a node touched by an odd number of service passes, at
  least one more pass (the single-node odd cuts of Nobert & Picard 1996);
* optionally, cuts ``sum(x_a for a leaving S) >= 1`` for node sets ``S``
  that hold service but not the depot, and a single-commodity connectivity
  flow from the depot to every separate piece of service (Gavish & Graves
  1978).

Minimising ``sum(c_a x_a)`` gives the mixed Chinese postman optimum (the
arc formulation of Christofides, Benavent, Campos, Corberán & Mota 1984 and
Nobert & Picard 1996).  When the streets needing service and the depot are
connected, every optimal solution is a connected Eulerian multigraph and so
a circuit.  When they are not (the rural postman problem), the connectivity
flow makes every solution connected, so one solve is exact.  HiGHS's dual
bound is a valid lower bound when the time budget runs out.

Solved by HiGHS's branch-and-cut through ``highspy`` (see :mod:`core.solve.highs`).

References
----------
N. Christofides, E. Benavent, V. Campos, A. Corberán and E. Mota, "An optimal
method for the mixed postman problem", in System Modelling and Optimization,
LNCIS 59, Springer (1984) 641–649.
Y. Nobert and J.-C. Picard, "An optimal algorithm for the mixed Chinese
postman problem", Networks 27 (1996) 95–108.
G. N. Frederickson, "Approximation algorithms for some postman problems",
Journal of the ACM 26 (1979) 538–554.
B. Gavish and S. C. Graves, "The travelling salesman problem and related
problems", Working Paper OR 078-78, Operations Research Center, MIT (1978).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse.csgraph import connected_components

from core.errors import SolverError
from core.solve import highs
from core.solve.arcs import ArcProblem
from core.solve.euler import orient_even
from core.solve.flow import incidence, min_cost_balance


@dataclass(frozen=True)
class ArcModel:
    """The non-loop arcs of a problem with their fixed and free service passes."""

    arcs: np.ndarray  # indices into p.arc_* of the arcs in the model
    frm: np.ndarray
    to: np.ndarray
    cost: np.ndarray
    lower: np.ndarray  # fixed-direction passes each arc must carry
    cover_segs: np.ndarray  # two-way segments with free-direction passes
    cover_need: np.ndarray  # total passes each such segment needs
    cover_fwd: np.ndarray  # model index of its forward arc
    cover_bwd: np.ndarray  # model index of its backward arc


def arc_model(p: ArcProblem, extra_lower: np.ndarray | None = None) -> ArcModel:
    """Collect the arcs and bounds of the arc formulation.  O(m)."""
    arcs = p.non_loop_arcs()
    seg = p.arc_seg[arcs]
    lower = p.fixed_lower()[arcs]
    if extra_lower is not None:
        lower = np.maximum(lower, extra_lower[arcs])
    # segments with free-direction passes are two-way: both arcs are in the model
    position = np.full(len(p.arc_seg), -1, dtype=np.int64)
    position[arcs] = np.arange(len(arcs))
    fwd, bwd = p.segment_arcs()
    cover = np.nonzero((p.need_any > 0) & (p.tail != p.head))[0]
    need = p.need_any[cover] + p.need_fwd[cover] + p.need_bwd[cover]
    return ArcModel(
        arcs=arcs,
        frm=p.arc_from[arcs],
        to=p.arc_to[arcs],
        cost=p.length[seg],
        lower=lower,
        cover_segs=cover,
        cover_need=need,
        cover_fwd=position[fwd[cover]],
        cover_bwd=position[bwd[cover]],
    )


@dataclass(frozen=True)
class IPResult:
    x: np.ndarray | None  # passes per model arc, or None when nothing feasible was found
    objective: float
    bound: float
    optimal: bool
    message: str


def _odd_degree_rows(p: ArcProblem, mod: ArcModel):
    """Rows ``sum(x_a for a touching v) >= d_v + 1`` for nodes of odd service degree ``d_v``."""
    deg = p.service_degree()
    odd_nodes = np.nonzero(deg % 2 == 1)[0]
    row_of = np.full(p.n_nodes, -1, dtype=np.int64)
    row_of[odd_nodes] = np.arange(len(odd_nodes))
    k = np.arange(len(mod.arcs))
    r1, r2 = row_of[mod.frm], row_of[mod.to]
    rows = np.concatenate([r1[r1 >= 0], r2[r2 >= 0]])
    cols = np.concatenate([k[r1 >= 0], k[r2 >= 0]])
    return odd_nodes, rows, cols, (deg[odd_nodes] + 1).astype(np.float64)


def _constraints(p: ArcProblem, mod: ArcModel, cuts: list[np.ndarray]) -> list[LinearConstraint]:
    k = len(mod.arcs)
    cons = [LinearConstraint(incidence(p.n_nodes, mod.frm, mod.to), 0, 0)]
    if len(mod.cover_segs):
        r = np.arange(len(mod.cover_segs))
        c = sp.csr_matrix(
            (
                np.ones(2 * len(r)),
                (np.concatenate([r, r]), np.concatenate([mod.cover_fwd, mod.cover_bwd])),
            ),
            shape=(len(r), k),
        )
        cons.append(LinearConstraint(c, mod.cover_need, np.inf))
    # Odd-degree cuts (Nobert & Picard 1996, for single nodes): every pass into a node
    # leaves it, so the passes touching a node are even in number; where the service passes
    # touching it are odd, at least one more must.  Implied by integrality, but they make the
    # LP relaxation far tighter and HiGHS finds no such cuts itself.
    odd_nodes, odd_rows, odd_cols, odd_rhs = _odd_degree_rows(p, mod)
    if len(odd_nodes):
        m = sp.csr_matrix((np.ones(len(odd_rows)), (odd_rows, odd_cols)), shape=(len(odd_nodes), k))
        cons.append(LinearConstraint(m, odd_rhs, np.inf))
    if cuts:
        rows, cols = [], []
        for i, inside in enumerate(cuts):
            leaving = np.nonzero(inside[mod.frm] & ~inside[mod.to])[0]
            rows.append(np.full(len(leaving), i))
            cols.append(leaving)
        m = sp.csr_matrix(
            (np.ones(sum(len(c) for c in cols)), (np.concatenate(rows), np.concatenate(cols))),
            shape=(len(cuts), k),
        )
        cons.append(LinearConstraint(m, 1, np.inf))
    return cons


def solve_arc_ip(
    p: ArcProblem,
    mod: ArcModel,
    *,
    cuts: list[np.ndarray] | None = None,
    reach: np.ndarray | None = None,
    time_limit: float = 30.0,
    relax: bool = False,
    stop: Callable[[], bool] | None = None,
) -> IPResult:
    """Solve the arc formulation (or its LP relaxation with ``relax=True``).

    ``reach`` lists nodes (one per separate piece of service) that the depot
    must reach over driven arcs.  It is enforced by a single-commodity flow
    (Gavish & Graves 1978): the depot sends one unit to each such node, and
    flow may use an arc only if the arc is driven, ``f_a <= len(reach) * x_a``.
    Each piece is connected inside by its own service passes, so this makes
    the circuit connected in one solve, with no loop of cuts.

    Cost: NP-hard in general (the mixed postman problem is NP-hard,
    Papadimitriou 1976); HiGHS's branch-and-cut solves district-sized
    networks in seconds.  ``time_limit`` bounds the wall time; the best
    solution found and HiGHS's dual bound are returned when it runs out.
    """
    cuts = cuts or []
    k = len(mod.arcs)
    if k == 0:
        return IPResult(np.zeros(0, dtype=np.int64), 0.0, 0.0, True, "empty")
    cons = _constraints(p, mod, cuts)
    lower = mod.lower.astype(np.float64)
    cost = mod.cost
    n_flow = 0
    if reach is not None and len(reach):
        n_flow = k
        big = float(len(reach))
        cons = [
            LinearConstraint(sp.hstack([c.A, sp.csr_matrix((c.A.shape[0], k))]), c.lb, c.ub)
            for c in cons
        ]
        supply = np.zeros(p.n_nodes)
        supply[reach] = -1.0
        supply[p.depot] += big
        inc = incidence(p.n_nodes, mod.frm, mod.to)
        cons.append(
            LinearConstraint(sp.hstack([sp.csr_matrix((p.n_nodes, k)), inc]), supply, supply)
        )
        link = sp.hstack([-big * sp.identity(k), sp.identity(k)])
        cons.append(LinearConstraint(link, -np.inf, 0.0))
        lower = np.concatenate([lower, np.zeros(k)])
        cost = np.concatenate([cost, np.zeros(k)])
    if relax:
        # Linear programs go to SciPy's HiGHS in this process: twice as fast as HiGHS 1.16
        # on our 100,000-street relaxations (12 s against over 30 s), and the presolve fault
        # that drove the integer programs away from it concerns integer programs only.
        lp = milp(
            cost,
            constraints=cons,
            integrality=np.zeros(k + n_flow),
            bounds=Bounds(lower, np.full(k + n_flow, np.inf)),
            options={"time_limit": max(time_limit, 0.5), "disp": False},
        )
        if lp.status != 0 or lp.x is None:
            return IPResult(None, np.inf, 0.0, False, str(lp.message))
        return IPResult(lp.x[:k], float(lp.fun), float(lp.fun), True, "optimal")
    integer = np.zeros(k + n_flow, dtype=bool)
    integer[:k] = True
    res = highs.solve(
        cost,
        sp.vstack([c.A for c in cons]).tocsc(),
        np.concatenate([np.broadcast_to(c.lb, (c.A.shape[0],)) for c in cons]),
        np.concatenate([np.broadcast_to(c.ub, (c.A.shape[0],)) for c in cons]),
        lower,
        np.full(k + n_flow, np.inf),
        integer,
        time_limit=time_limit,
        stop=stop,
    )
    if res.status == "infeasible":
        raise SolverError("the integer program is infeasible; a street cannot be reached")
    if res.x is None:
        return IPResult(None, np.inf, res.bound, False, res.status)
    x = np.rint(res.x[:k]).astype(np.int64)
    objective = float(np.dot(mod.cost, x))
    bound = max(res.bound, objective) if res.optimal else res.bound
    return IPResult(x, objective, bound, res.optimal, res.status)


def pieces_without_depot(
    p: ArcProblem, mod: ArcModel, x: np.ndarray, *, loops_required: np.ndarray
) -> list[np.ndarray]:
    """Node sets to cut: the solution's pieces that hold service but not the depot,
    and (when there are any) all nodes outside the depot's piece.

    ``loops_required`` marks nodes carrying a required loop segment (which
    the arc model leaves out).  O(n + m).
    """
    used = x > 0
    n = p.n_nodes
    g = sp.csr_matrix((np.ones(int(used.sum())), (mod.frm[used], mod.to[used])), shape=(n, n))
    _ncomp, label = connected_components(g, directed=False)
    has_service = np.zeros(n, dtype=bool)
    req = p.required
    has_service[p.tail[req]] = True
    has_service[loops_required] = True
    comps = np.unique(label[has_service])
    depot_label = label[p.depot]
    sets = [label == c for c in comps if c != depot_label]
    if len(sets) > 0:
        # Also everything outside the depot's piece: some pass must leave it and so reach the
        # depot's piece.  Stronger than the single pieces when the depot's piece is small.
        outside = label != depot_label
        if not any(np.array_equal(outside, s) for s in sets):
            sets.append(outside)
    return sets


def orient_by_relaxation(p: ArcProblem, mod: ArcModel, x: np.ndarray) -> np.ndarray:
    """Fix the direction of every free pass, guided by a (fractional) solution ``x``.

    Passes on streets where ``x`` clearly leans one way go that way.  The
    rest, where ``x`` is undecided (typically half each way round a block),
    are oriented along Euler circuits of the undecided streets, so that they
    balance each other and leave at most one pass of imbalance at the nodes
    where an odd number of them meet (the idea of Frederickson's 1979
    EvenParity step); minimum-cost flow then settles that imbalance.

    Returns per-arc lower bounds (over ``p``'s arcs): the fixed-direction
    passes plus the newly fixed free passes.  O(m).
    """
    lower = np.zeros(len(p.arc_seg), dtype=np.int64)
    lower[mod.arcs] = mod.lower
    if not len(mod.cover_segs):
        return lower
    xf = x[mod.cover_fwd]
    xb = x[mod.cover_bwd]
    extra = mod.cover_need - mod.lower[mod.cover_fwd] - mod.lower[mod.cover_bwd]
    extra = np.maximum(extra, 0)
    lean = xf - xb
    go_fwd = lean > 0.25
    go_bwd = lean < -0.25
    lower[mod.arcs[mod.cover_fwd[go_fwd]]] += extra[go_fwd]
    lower[mod.arcs[mod.cover_bwd[go_bwd]]] += extra[go_bwd]
    tied = np.nonzero(~go_fwd & ~go_bwd & (extra > 0))[0]
    if len(tied):
        rep = np.repeat(tied, extra[tied])
        segs = mod.cover_segs[rep]
        u, v = p.tail[segs], p.head[segs]
        # join the odd-degree nodes to one extra node so every degree is even, walk, drop it
        deg = np.bincount(u, minlength=p.n_nodes) + np.bincount(v, minlength=p.n_nodes)
        odd = np.nonzero(deg % 2 == 1)[0]
        hub = p.n_nodes
        uu = np.concatenate([u, odd])
        vv = np.concatenate([v, np.full(len(odd), hub)])
        direction = orient_even(p.n_nodes + 1, uu, vv)[: len(rep)]
        fwd = direction > 0
        np.add.at(lower, mod.arcs[mod.cover_fwd[rep[fwd]]], 1)
        np.add.at(lower, mod.arcs[mod.cover_bwd[rep[~fwd]]], 1)
    return lower


def flow_relaxation(p: ArcProblem, mod: ArcModel) -> np.ndarray:
    """The linear relaxation of the arc model without odd cuts, solved as a min-cost flow.

    With ``x_f >= l_f``, ``x_b >= l_b`` and ``x_f + x_b >= N`` on a street
    whose ``F = N - l_f - l_b`` passes have a free direction, the cheapest
    cover of a net flow ``y = (x_f - l_f) - (x_b - l_b)`` costs
    ``c * max(F, |y|)``: free up to ``F`` units either way, full length
    beyond.  So the relaxation is a min-cost flow with ``F`` units of free
    capacity each way on such a street.  Much faster than the LP, but its
    solution guides orientation less well (measured: 12 % gap against 1 % on
    50,000-street towns), so it is the fallback when the LP runs out of time.
    Returns passes per model arc.
    """
    free_cap = np.zeros(len(mod.arcs), dtype=np.int64)
    if len(mod.cover_segs):
        free = mod.cover_need - mod.lower[mod.cover_fwd] - mod.lower[mod.cover_bwd]
        free = np.maximum(free, 0)
        free_cap[mod.cover_fwd] = free
        free_cap[mod.cover_bwd] = free
    low = mod.lower
    excess_in = np.bincount(mod.to, weights=low, minlength=p.n_nodes) - np.bincount(
        mod.frm, weights=low, minlength=p.n_nodes
    )
    extra = min_cost_balance(
        p.n_nodes, mod.frm, mod.to, mod.cost, excess_in, free_capacity=free_cap
    )
    return (low + extra).astype(np.float64)


def balance_fixed(p: ArcProblem, lower: np.ndarray) -> np.ndarray:
    """Passes per arc: the fixed passes ``lower`` plus the cheapest balancing deadhead.

    Exact for the directed problem (minimum-cost flow, see
    :mod:`core.solve.flow`).
    """
    mod_arcs = p.non_loop_arcs()
    frm = p.arc_from[mod_arcs]
    to = p.arc_to[mod_arcs]
    low = lower[mod_arcs]
    excess_in = np.bincount(to, weights=low, minlength=p.n_nodes) - np.bincount(
        frm, weights=low, minlength=p.n_nodes
    )
    extra = min_cost_balance(p.n_nodes, frm, to, p.length[p.arc_seg[mod_arcs]], excess_in)
    total = lower.copy()
    total[mod_arcs] += extra
    return total
