"""An independent integer-programming model of the circuit problem, for tests.

Written from the problem statement, not from the engine: it reads the
:class:`~core.model.Network` objects directly and shares no code with
``core.solve``.  Solved with SciPy's ``milp`` (HiGHS).

Variables, per segment ``s`` and allowed direction ``d``: ``t[s,d]`` passes
(integer); per two-way segment with free-direction service: ``y[s]`` of its
``q`` service passes that go forward (integer, ``0..q``); per arc a
connectivity flow ``f[s,d] >= 0``.  Constraints: passes cover service in each
direction; as many passes into every node as out; the depot sends one unit of
flow to every other node that service touches, flow only on driven arcs
(single-commodity flow connectivity, Gavish & Graves 1978).  Objective: total
length driven.

Reference: B. Gavish and S. C. Graves, "The travelling salesman problem and
related problems", MIT Operations Research Center working paper OR-078-78
(1978) — the single-commodity flow formulation of connectivity.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.optimize import Bounds, LinearConstraint, milp

from core.model import Network, OneWay, Service


def reference_optimum(net: Network, depot: str, *, time_limit: float = 60.0) -> float:
    """Shortest closed walk from ``depot`` covering every service pass, or raise."""
    nodes = list(net.nodes)
    idx = {n: i for i, n in enumerate(nodes)}
    arcs: list[tuple[int, int, float, str, int]] = []  # (from, to, length, seg, +1/-1)
    for s in net.segments.values():
        u, v = idx[s.start], idx[s.end]
        if s.oneway in (OneWay.NO, OneWay.FORWARD):
            arcs.append((u, v, s.length, s.id, 1))
        if s.oneway in (OneWay.NO, OneWay.BACKWARD):
            arcs.append((v, u, s.length, s.id, -1))
    na = len(arcs)
    free = [
        s for s in net.segments.values() if s.service is Service.EITHER and s.oneway is OneWay.NO
    ]
    ny = len(free)
    yidx = {s.id: na + k for k, s in enumerate(free)}
    # variable layout: t (na) | y (ny) | f (na)
    nv = 2 * na + ny
    fo = na + ny
    rows: list[dict[int, float]] = []
    lo: list[float] = []
    hi: list[float] = []

    def add(row: dict[int, float], lb: float, ub: float) -> None:
        rows.append(row)
        lo.append(lb)
        hi.append(ub)

    # service coverage per arc
    for k, (_u, _v, _l, sid, d) in enumerate(arcs):
        s = net.segments[sid]
        p = s.passes
        fixed = 0
        if s.service is Service.BOTH:
            fixed = p if s.oneway is OneWay.NO else 2 * p
        elif s.service is Service.ALONG or (
            s.service is Service.EITHER and s.oneway is not OneWay.NO
        ):
            fixed = p
        if s.service is Service.EITHER and s.oneway is OneWay.NO:
            # t - (y or q - y) >= 0
            if d > 0:
                add({k: 1.0, yidx[sid]: -1.0}, 0, np.inf)
            else:
                add({k: 1.0, yidx[sid]: 1.0}, p, np.inf)
        elif fixed:
            add({k: 1.0}, fixed, np.inf)
    # balance
    for v in range(len(nodes)):
        row: dict[int, float] = {}
        for k, (a, b, *_rest) in enumerate(arcs):
            if a == b:
                continue
            if a == v:
                row[k] = row.get(k, 0.0) + 1.0
            if b == v:
                row[k] = row.get(k, 0.0) - 1.0
        if row:
            add(row, 0, 0)
    # connectivity flow
    touched = set()
    for s in net.segments.values():
        if s.service is not Service.NONE:
            touched.update((idx[s.start], idx[s.end]))
    dep = idx[depot]
    touched.discard(dep)
    big = float(len(touched) + 1)
    for v in range(len(nodes)):
        row = {}
        for k, (a, b, *_rest) in enumerate(arcs):
            if a == b:
                continue
            if a == v:
                row[fo + k] = row.get(fo + k, 0.0) + 1.0
            if b == v:
                row[fo + k] = row.get(fo + k, 0.0) - 1.0
        want = len(touched) if v == dep else (-1.0 if v in touched else 0.0)
        if row:
            add(row, want, want)
        elif want:
            raise ValueError("a node with service has no arcs")
    for k in range(na):
        add({fo + k: 1.0, k: -big}, -np.inf, 0)
    a = sp.lil_matrix((len(rows), nv))
    for r, row in enumerate(rows):
        for c, val in row.items():
            a[r, c] = val
    cost = np.zeros(nv)
    cost[:na] = [arc[2] for arc in arcs]
    ub = np.full(nv, np.inf)
    for s in free:
        ub[yidx[s.id]] = s.passes
    integrality = np.concatenate([np.ones(na + ny), np.zeros(na)])
    res = milp(
        cost,
        constraints=[LinearConstraint(a.tocsr(), lo, hi)],
        integrality=integrality,
        bounds=Bounds(np.zeros(nv), ub),
        # presolve off: HiGHS 1.x in SciPy 1.17 returned a non-optimal "optimal" value on a
        # small instance of this model with presolve on (found by the property tests).
        options={"time_limit": time_limit, "mip_rel_gap": 0.0, "presolve": False},
    )
    if res.status != 0:
        raise RuntimeError(f"reference model not solved: {res.message}")
    return float(res.fun)
