"""Turn rules: the Eulerian circuit of given passes that drives best.

Every Eulerian circuit of the same passes has the same length, but not the
same turns.  This module picks one with few U-turns and few turns across
oncoming traffic, and goes round the block where a U-turn is not allowed:

1. **Pairing.**  At every node each arriving pass is paired with a leaving
   pass by a minimum-cost assignment over turn penalties (straight on costs
   nothing, turns across traffic more than turns to the kerb side, U-turns
   most).  This is the transition step of the turn-penalty methods for arc
   routing (Benavent & Soler 1999): a transition system in the sense of
   Kotzig (1968).  Small nodes are solved by enumerating the permutations
   in numpy; larger ones by :func:`scipy.optimize.linear_sum_assignment`.
2. **Joining.**  The pairing splits the passes into closed trails.  Two
   trails through the same node become one when the successors of one pass
   of each are swapped there (Kotzig 1968; Fleischner 1990, ch. VI); the
   swaps are taken cheapest first, Kruskal-style over a union-find of the
   trails, re-pricing a swap lazily when an earlier one changed its passes.
3. **Exchange.**  A U-turn that remains at a node where it is not allowed is
   removed, where possible, by re-ordering the chains of the circuit between
   the visits of a node, alone or after a swap that splits the circuit in two
   (any cyclic order of the chains at a node is again one circuit); where no
   such move removes it, it is moved to another node (an ejection chain,
   Glover 1996) a limited number of times.  The length does not change.
   Circuits of up to :data:`EXACT_MAX_PASSES` passes that still have a
   forbidden U-turn are then searched exhaustively (branch and bound, with an
   effort cap), so small networks get the fewest possible.
4. **Detours.**  What still remains is replaced, when asked, by the shortest
   way round: a Dijkstra search over arc states (the line graph, in which a
   U-turn is a forbidden transition) from arriving on the street to leaving
   back along it (Caldwell 1961; the turn-restricted shortest path of
   Kirby & Potts 1969).  The detour is deadhead and its length is reported.
   Where no way round exists (a one-way trap) the U-turn stays and is named.

U-turns are allowed at dead ends (a node with one street) and at nodes marked
``turning_place``.  The end of the circuit at the depot is where the vehicle
parks: the last pass and the first are not a turn (modelled by a virtual
"parking" pass at the depot).

Steps 1, 2 and 4 are near-linear: O(m log m) for m passes (nodes of bounded
degree; each way round is a Dijkstra search that stops at the first way back).
Step 3 works within a budget of 10 m + 20,000 units, so it stays linear.

For undirected graphs Kotzig (1968) shows that local conditions at each node
suffice for a circuit avoiding forbidden transitions; with directed passes they
do not (a triangle driven once each way round has a U-turn-free pairing at every
node but no U-turn-free circuit), and we use no exact method for large
networks: steps 2 and 3 are heuristics, checked in ``tests/test_turn_rules.py``
against a brute force over all transition systems of small graphs.

References
----------
E. Benavent, D. Soler, "The directed rural postman problem with turn
penalties", Transportation Science 33(4) (1999) 408–418.
A. Kotzig, "Moves without forbidden transitions in a graph", Matematický
časopis 18(1) (1968) 76–80.
H. Fleischner, *Eulerian Graphs and Related Topics*, Part 1 Vol. 1,
North-Holland (1990).
T. Caldwell, "On finding minimum routes in a network with turn penalties",
Communications of the ACM 4(2) (1961) 107–108.
R. F. Kirby, R. B. Potts, "The minimum route problem for networks with turn
penalties and prohibitions", Transportation Research 3 (1969) 397–408.
F. Glover, "Ejection chains, reference structures and alternating path methods
for traveling salesman problems", Discrete Applied Mathematics 65 (1996) 223–253.
"""

from __future__ import annotations

import heapq
import itertools
import math
from collections import deque
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import linear_sum_assignment

from core.errors import SolverError
from core.model import Network
from core.plan import TurnCounts
from core.solve.arcs import ArcProblem
from core.turns import (
    BEAR_MAX,
    SHARP_MAX,
    STRAIGHT_MAX,
    TURN_MAX,
    DriveSide,
    Turn,
    crosses_traffic,
    leaving_bearing,
    parse_drive_side,
    segment_coords,
)

TURN_CODES: tuple[Turn, ...] = (
    Turn.STRAIGHT,
    Turn.BEAR_LEFT,
    Turn.BEAR_RIGHT,
    Turn.LEFT,
    Turn.RIGHT,
    Turn.SHARP_LEFT,
    Turn.SHARP_RIGHT,
    Turn.UTURN,
)
"""Turn kinds by their integer code in this module's arrays."""
_U = 7

U_FORBIDDEN = 10_000.0
"""Penalty of a U-turn where none is allowed: above any sum of other penalties at a node."""


@dataclass(frozen=True)
class TurnPenalties:
    """Penalties of each manoeuvre, in the units of one bear (our own scale:
    common practice ranks straight < bear < kerb-side turn < turn across
    traffic < U-turn; the numbers are our choice)."""

    straight: float = 0.0
    bear: float = 1.0
    turn: float = 2.0
    sharp: float = 3.0
    across: float = 4.0
    sharp_across: float = 6.0
    uturn_allowed: float = 20.0
    """At a dead end or turning place; elsewhere a U-turn costs :data:`U_FORBIDDEN`."""

    def table(self, drive: DriveSide) -> np.ndarray:
        """Penalty per turn code (U-turn: the allowed price; see :func:`_costs`)."""
        out = np.empty(len(TURN_CODES), dtype=np.float64)
        for k, t in enumerate(TURN_CODES):
            if t is Turn.STRAIGHT:
                out[k] = self.straight
            elif t in (Turn.BEAR_LEFT, Turn.BEAR_RIGHT):
                out[k] = self.bear
            elif t is Turn.UTURN:
                out[k] = self.uturn_allowed
            elif t in (Turn.SHARP_LEFT, Turn.SHARP_RIGHT):
                out[k] = self.sharp_across if crosses_traffic(t, drive) else self.sharp
            else:
                out[k] = self.across if crosses_traffic(t, drive) else self.turn
        return out


# -- what the rules need to know about arcs and nodes ----------------------------------------------
@dataclass
class TurnGeometry:
    """Per arc (plus one virtual parking arc at the end): bearings and identity; per node:
    whether a U-turn is allowed.  Built once per plan in O(n + m)."""

    arrive: np.ndarray  # float64 per arc: bearing arriving at its head (NaN: no geometry)
    leave: np.ndarray  # float64 per arc: bearing leaving its tail
    seg: np.ndarray  # int64 per arc: segment index (-1 for the parking arc)
    dir: np.ndarray  # int8 per arc
    loop: np.ndarray  # bool per arc: the segment is a loop
    uturn_ok: np.ndarray  # bool per node: dead end or turning place
    has_geometry: bool
    park: int  # index of the virtual parking arc


def turn_geometry(p: ArcProblem, network: Network) -> TurnGeometry:
    """Bearings of every arc from the street geometry (see :mod:`core.turns`). O(n + m)."""
    n_seg = p.n_segments
    b_start = np.full(n_seg, np.nan)
    b_end = np.full(n_seg, np.nan)
    # The end points and their neighbours along the line, bearings in one numpy call
    # (the formula of core.turns.bearing); lines whose second or last-but-one point
    # coincides with the end go through core.turns one by one.
    ends = np.full((n_seg, 8), np.nan)
    for k, sid in enumerate(p.seg_ids):
        coords = segment_coords(network, network.segments[sid])
        if coords is None:
            continue
        a, b, y, z = coords[0], coords[1], coords[-2], coords[-1]
        if a != b and y != z:
            ends[k] = (*a, *b, *y, *z)
            continue
        try:
            b_start[k] = leaving_bearing(coords, True)
            b_end[k] = (leaving_bearing(coords, False) + 180.0) % 360.0
        except ValueError:  # all points coincide: no bearing
            continue
    fast = ~np.isnan(ends[:, 0])
    e = ends[fast]
    b_start[fast] = np.degrees(np.arctan2(e[:, 2] - e[:, 0], e[:, 3] - e[:, 1])) % 360.0
    b_end[fast] = np.degrees(np.arctan2(e[:, 6] - e[:, 4], e[:, 7] - e[:, 5])) % 360.0
    s = p.arc_seg
    fwd = p.arc_dir > 0
    arrive = np.where(fwd, b_end[s], (b_start[s] + 180.0) % 360.0)
    leave = np.where(fwd, b_start[s], (b_end[s] + 180.0) % 360.0)
    deg = np.bincount(p.tail, minlength=p.n_nodes) + np.bincount(p.head, minlength=p.n_nodes)
    turning = np.fromiter(
        (network.nodes[nid].turning_place for nid in p.node_ids), dtype=bool, count=p.n_nodes
    )
    return TurnGeometry(
        arrive=np.append(arrive, np.nan),
        leave=np.append(leave, np.nan),
        seg=np.append(s, -1).astype(np.int64),
        dir=np.append(p.arc_dir, 0).astype(np.int8),
        loop=np.append(p.tail[s] == p.head[s], False),
        uturn_ok=(deg == 1) | turning,
        has_geometry=bool(np.any(~np.isnan(b_start))),
        park=len(s),
    )


def turn_codes(g: TurnGeometry, a_in: np.ndarray, a_out: np.ndarray) -> np.ndarray:
    """Turn code (index into :data:`TURN_CODES`) from arc ``a_in`` into arc ``a_out``,
    elementwise; the same rules as :func:`core.turns.pass_turn`.  O(len)."""
    a_in = np.asarray(a_in, dtype=np.int64)
    a_out = np.asarray(a_out, dtype=np.int64)
    angle = (g.leave[a_out] - g.arrive[a_in]) % 360.0
    angle = np.where(angle > 180.0, angle - 360.0, angle)
    mag = np.abs(angle)
    right = angle > 0
    code = np.where(right, 2, 1)  # bear
    code = np.where(mag > BEAR_MAX, np.where(right, 4, 3), code)
    code = np.where(mag > TURN_MAX, np.where(right, 6, 5), code)
    code = np.where(mag > SHARP_MAX, _U, code)
    code = np.where((mag <= STRAIGHT_MAX) | np.isnan(angle), 0, code)
    s_in = g.seg[a_in]
    reverse = (s_in == g.seg[a_out]) & (s_in >= 0) & (g.dir[a_in] != g.dir[a_out]) & ~g.loop[a_in]
    return np.where(reverse, _U, code).astype(np.int8)


def _costs(
    g: TurnGeometry, table: np.ndarray, a_in: np.ndarray, a_out: np.ndarray, node: np.ndarray
) -> np.ndarray:
    code = turn_codes(g, a_in, a_out)
    cost = table[code]
    return np.where((code == _U) & ~g.uturn_ok[node], U_FORBIDDEN, cost)


class _Pricer:
    """Scalar penalty of a transition between passes (hand-written: called once per
    candidate swap, where numpy's per-call overhead would dominate)."""

    def __init__(self, g: TurnGeometry, table: np.ndarray, pass_arc: Sequence[int]):
        self.arrive = g.arrive.tolist()
        self.leave = g.leave.tolist()
        self.seg = g.seg.tolist()
        self.dir = g.dir.tolist()
        self.loop = g.loop.tolist()
        self.ok = g.uturn_ok.tolist()
        self.table = table.tolist()
        self.pass_arc = list(pass_arc)

    def code(self, a: int, b: int) -> int:
        s = self.seg[a]
        if s >= 0 and s == self.seg[b] and self.dir[a] != self.dir[b] and not self.loop[a]:
            return _U
        ang = (self.leave[b] - self.arrive[a]) % 360.0
        if ang != ang:  # NaN: no geometry
            return 0
        if ang > 180.0:
            ang -= 360.0
        m = abs(ang)
        if m <= STRAIGHT_MAX:
            return 0
        if m > SHARP_MAX:
            return _U
        r = ang > 0
        if m <= BEAR_MAX:
            return 2 if r else 1
        if m <= TURN_MAX:
            return 4 if r else 3
        return 6 if r else 5

    def cost(self, i: int, o: int, node: int) -> float:
        """Penalty of driving pass ``i`` then pass ``o`` through ``node``."""
        c = self.code(self.pass_arc[i], self.pass_arc[o])
        if c == _U and not self.ok[node]:
            return U_FORBIDDEN
        return self.table[c]


# -- step 1: pairing at every node -----------------------------------------------------------------
_ENUMERATE_MAX = 4
"""Up to this many passes in (and out), all pairings are enumerated in numpy (4! = 24)."""


def pair_at_nodes(
    g: TurnGeometry,
    table: np.ndarray,
    pass_arc: np.ndarray,
    frm: np.ndarray,
    to: np.ndarray,
    n_nodes: int,
) -> tuple[np.ndarray, list[np.ndarray]]:
    """Successor of every pass: a minimum-penalty pairing of arriving with leaving passes
    at each node (linear assignment; Benavent & Soler 1999's transition step).

    Returns the successor array and, per node, its arriving passes.  O(m) for nodes of
    up to four passes each way; O(d^3) per node above (Jonker-Volgenant in SciPy).
    """
    m = len(pass_arc)
    order_in = np.argsort(to, kind="stable")
    order_out = np.argsort(frm, kind="stable")
    d = np.bincount(to, minlength=n_nodes)
    start = np.concatenate([[0], np.cumsum(d)[:-1]])
    succ = np.full(m, -1, dtype=np.int64)
    for k in np.unique(d[d > 0]).tolist():
        nodes = np.nonzero(d == k)[0]
        idx = start[nodes][:, None] + np.arange(k)[None, :]
        ins, outs = order_in[idx], order_out[idx]  # (G, k) pass indices
        if k == 1:
            succ[ins[:, 0]] = outs[:, 0]
            continue
        cost = _costs(
            g,
            table,
            pass_arc[ins][:, :, None].repeat(k, axis=2),
            pass_arc[outs][:, None, :].repeat(k, axis=1),
            nodes[:, None, None].repeat(k, axis=1).repeat(k, axis=2),
        )  # (G, k, k)
        if k <= _ENUMERATE_MAX:
            perms = np.array(list(itertools.permutations(range(k))), dtype=np.int64)
            total = cost[:, np.arange(k)[None, :], perms].sum(axis=2)  # (G, P)
            best = perms[np.argmin(total, axis=1)]  # (G, k)
            succ[ins] = np.take_along_axis(outs, best, axis=1)
        else:
            for r in range(len(nodes)):
                row, col = linear_sum_assignment(cost[r])
                succ[ins[r, row]] = outs[r, col]
    ins_by_node = np.split(order_in, np.cumsum(d)[:-1])
    return succ, ins_by_node


def trail_labels(succ: np.ndarray) -> np.ndarray:
    """Label of the closed trail (cycle of ``succ``) each pass is on.  O(m)."""
    s = succ.tolist()
    label = [-1] * len(s)
    c = 0
    for i in range(len(s)):
        if label[i] >= 0:
            continue
        j = i
        while label[j] < 0:
            label[j] = c
            j = s[j]
        c += 1
    return np.asarray(label, dtype=np.int64)


# -- step 2: joining the trails --------------------------------------------------------------------
_ALL_PAIRS_MAX = 12
"""Nodes with up to this many arriving passes offer every pair as a swap; larger ones a
chain and a star, which still connect every trail through the node."""


def _swap_delta(
    cost: Callable[[int, int, int], float], s: list[int], i1: int, i2: int, v: int
) -> float:
    """Change of penalty when passes ``i1`` and ``i2`` (both arriving at ``v``) swap
    successors."""
    return cost(i1, s[i2], v) + cost(i2, s[i1], v) - cost(i1, s[i1], v) - cost(i2, s[i2], v)


def _swap_pairs(k: int) -> list[tuple[int, int]]:
    if k <= _ALL_PAIRS_MAX:
        return list(itertools.combinations(range(k), 2))
    return [(a, a + 1) for a in range(k - 1)] + [(0, b) for b in range(2, k)]


def join_trails(
    succ: np.ndarray, ins_by_node: list[np.ndarray], to: Sequence[int], price: _Pricer
) -> list[int]:
    """Join the closed trails of ``succ`` into one by swapping successors at shared nodes,
    cheapest swap first (Kotzig 1968; Kruskal's greedy over a union-find, with lazy
    re-pricing).  O(m log m) for nodes of bounded degree.

    Returns the successor list of one circuit.

    Raises
    ------
    SolverError
        If the passes are not connected (a bug upstream).
    """
    s = succ.tolist()
    label = trail_labels(succ).tolist()
    n_trails = max(label) + 1 if label else 0
    parent = list(range(n_trails))

    def find(x: int) -> int:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    heap: list[tuple[float, int, int]] = []
    cost = price.cost
    for v, ins_arr in enumerate(ins_by_node):
        if len(ins_arr) < 2:
            continue
        ins = ins_arr.tolist()
        if len({label[i] for i in ins}) < 2:
            continue
        for a, b in _swap_pairs(len(ins)):
            i1, i2 = ins[a], ins[b]
            if label[i1] == label[i2]:
                continue
            heap.append((_swap_delta(cost, s, i1, i2, v), i1, i2))
    heapq.heapify(heap)
    joined = 1
    while heap and joined < n_trails:
        delta, i1, i2 = heapq.heappop(heap)
        r1, r2 = find(label[i1]), find(label[i2])
        if r1 == r2:
            continue
        v = to[i1]
        now = _swap_delta(cost, s, i1, i2, v)
        if now > delta + 1e-9:
            heapq.heappush(heap, (now, i1, i2))
            continue
        s[i1], s[i2] = s[i2], s[i1]
        parent[r1] = r2
        joined += 1
    if joined < n_trails:
        raise SolverError("the passes do not form one connected circuit; this is a bug")
    return s


# -- step 3: exchanges that remove U-turns at no extra length -------------------------------------
def _sequence(s: list[int], first: int) -> list[int]:
    seq = [first]
    j = s[first]
    while j != first:
        seq.append(j)
        j = s[j]
    return seq


_NEAR = 64
"""Passes of the split-off trail, at each end, whose nodes are tried for the rejoin."""
_REORDER_MAX = 6
"""Chains at a node are re-ordered by enumerating all (d-1)! cyclic orders up to this d."""


def _chains(
    s: list[int], visits: list[int], pos: list[int], lo: int, hi: int
) -> list[tuple[int, int]]:
    """The chains ``(first pass, last pass)`` between consecutive visits of one node, when
    the circuit is split into the trail at positions ``lo+1..hi`` and the rest (``lo=hi``:
    not split).  ``visits`` are the passes arriving at the node, in circuit order."""
    inner = [j for j in visits if lo < pos[j] <= hi]
    outer = [j for j in visits if not lo < pos[j] <= hi]
    out: list[tuple[int, int]] = []
    for group in (inner, outer):
        k = len(group)
        out += [(s[group[a]], group[(a + 1) % k]) for a in range(k)]
    return out


def _best_cyclic_order(
    chains: list[tuple[int, int]], w: int, cost: Callable[[int, int, int], float]
) -> tuple[float, list[int]]:
    """The cyclic order of the chains through node ``w`` with the least transition penalty
    (a tiny asymmetric travelling salesman problem, solved by enumeration).  O((d-1)! d)."""
    d = len(chains)
    c = [[cost(chains[a][1], chains[b][0], w) for b in range(d)] for a in range(d)]
    best = (math.inf, list(range(d)))
    for rest in itertools.permutations(range(1, d)):
        order = (0, *rest)
        total = sum(c[order[k]][order[(k + 1) % d]] for k in range(d))
        if total < best[0]:
            best = (total, list(order))
    return best


def remove_uturns_by_exchange(
    s: list[int],
    to: Sequence[int],
    price: _Pricer,
    park: int,
    *,
    budget: int | None = None,
) -> list[int]:
    """Remove forbidden U-turns, keeping the circuit whole and its length unchanged.

    Two moves, for a U-turn at node ``v``: re-order the chains of the circuit between
    its visits of ``v``; or swap the successors of the U-turn's pass and another pass at
    ``v`` (which splits the circuit in two) and join the two again by re-ordering the
    chains at a node both visit.  Every cyclic order of the chains at a node is again
    one Eulerian circuit (the splicing argument of Hierholzer 1873 and Kotzig 1968).

    Cost: O(m) to find the U-turns, O(m) to renumber the circuit after each accepted
    exchange, and per U-turn the nodes within ``_NEAR`` passes of the split (orders
    enumerated at nodes of up to ``_REORDER_MAX`` visits); the whole is capped by
    ``budget`` units of work (default ``10 m + 20,000``), which keeps it linear.
    """
    s = list(s)
    m = len(s)
    cost = price.cost
    forb = U_FORBIDDEN - 1.0
    spent = 0
    limit = 10 * m + 20_000 if budget is None else budget
    n_visits = [0] * (max(to) + 1)
    for w in to:
        n_visits[w] += 1
    queue = deque(i for i in range(m) if n_visits[to[i]] > 1 and cost(i, s[i], to[i]) >= forb)
    spent += m
    seq: list[int] = []
    pos: list[int] = []
    visits: dict[int, list[int]] = {}
    dirty = True
    # A U-turn that no exchange removes may be moved to another node where one does (an
    # ejection chain, Glover 1996): a limited number of such sideways moves, never back
    # to a node the U-turn has just left.
    sideways = 20 * len(queue) + 50
    recent: deque[int] = deque(maxlen=8)
    while queue and spent < limit:
        i = queue.popleft()
        v = to[i]
        if cost(i, s[i], v) < forb:
            continue  # removed by an earlier exchange
        if dirty:
            seq = _sequence(s, park)
            pos = [0] * m
            visits = {}
            for k, j in enumerate(seq):
                pos[j] = k
                visits.setdefault(to[j], []).append(j)
            spent += 3 * m
            dirty = False
        # (gain, split pair or None, node, chains, order)
        Move = tuple[float, tuple[int, int] | None, int, list[tuple[int, int]], list[int]]
        best: Move | None = None
        side: Move | None = None

        def consider(
            split: tuple[int, int] | None,
            delta: float,
            w: int,
            lo: int,
            hi: int,
            visits: dict[int, list[int]] = visits,
            pos: list[int] = pos,
            here: int = v,
        ) -> int:
            nonlocal best, side
            vis = visits[w]
            if len(vis) > _REORDER_MAX:
                return 0
            chains = _chains(s, vis, pos, lo, hi)
            now = sum(cost(j, s[j], w) for j in vis)
            total, order = _best_cyclic_order(chains, w, cost)
            gain = delta + total - now
            if best is None or gain < best[0]:
                best = (gain, split, w, chains, order)
            if (
                -forb / 2 <= gain < forb / 2
                and w != here
                and w not in recent
                and (side is None or gain < side[0])
            ):
                side = (gain, split, w, chains, order)
            return math.factorial(len(vis))

        spent += consider(None, 0.0, v, 0, 0)
        for i2 in visits[v]:
            if i2 == i:
                continue
            o1, o2 = s[i], s[i2]
            delta = cost(i, o2, v) + cost(i2, o1, v) - cost(i, o1, v) - cost(i2, o2, v)
            lo, hi = sorted((pos[i], pos[i2]))
            s[i], s[i2] = o2, o1  # tentatively split: positions lo+1..hi are one trail
            inner = hi - lo <= len(seq) // 2  # look at the nodes of the shorter trail
            part = seq[lo + 1 : hi + 1] if inner else seq[hi + 1 :] + seq[: lo + 1]
            if len(part) > 2 * _NEAR:  # the nodes nearest the split along the circuit
                part = part[:_NEAR] + part[-_NEAR:]
            spent += len(part)
            seen: set[int] = set()
            for j in part:
                w = to[j]
                if w in seen:
                    continue
                seen.add(w)
                vis = visits[w]
                n_in = sum(1 for x in vis if lo < pos[x] <= hi)
                if 0 < n_in < len(vis):  # both trails pass through w
                    spent += consider((i, i2), delta, w, lo, hi)
            s[i], s[i2] = o1, o2  # undo
        if best is not None and best[0] < -forb / 2:
            move = best
        elif side is not None and sideways > 0:
            move = side
            sideways -= 1
            recent.append(v)
        else:
            continue
        _gain, split, w, chains, order = move
        if split is not None:
            a, b = split
            s[a], s[b] = s[b], s[a]
        d = len(order)
        for k in range(d):
            s[chains[order[k]][1]] = chains[order[(k + 1) % d]][0]
        dirty = True
        queue.extendleft(j for j in (*visits[v], *visits[w]) if cost(j, s[j], to[j]) >= forb)
    return s


EXACT_MAX_PASSES = 40
"""Below this many passes a circuit that still has forbidden U-turns is searched for
exhaustively (with an effort cap), so small networks get the fewest possible."""


def _forced_uturns(
    frm: Sequence[int], to: Sequence[int], pass_arc: Sequence[int], price: _Pricer
) -> int:
    """A lower bound on the forbidden U-turns of any circuit of these passes: at a node
    where U-turns are not allowed, the passes arriving on a street can only be paired
    with passes leaving by other streets (Hall's condition), so at least
    ``in_s + out_s - d`` of them turn back along street ``s``.  O(m)."""
    seg, loop, ok = price.seg, price.loop, price.ok
    d: dict[int, int] = {}
    per: dict[tuple[int, int], int] = {}
    for k in range(len(to)):
        a = pass_arc[k]
        d[to[k]] = d.get(to[k], 0) + 1
        if seg[a] < 0 or loop[a]:
            continue
        for v in (frm[k], to[k]):
            per[(v, seg[a])] = per.get((v, seg[a]), 0) + 1
    worst: dict[int, int] = {}
    for (v, _s), n in per.items():
        if not ok[v]:
            worst[v] = max(worst.get(v, 0), n - d[v])
    return sum(worst.values())


def fewest_uturns_search(
    s: list[int],
    frm: Sequence[int],
    to: Sequence[int],
    pass_arc: Sequence[int],
    price: _Pricer,
    park: int,
    *,
    max_expansions: int = 200_000,
) -> list[int] | None:
    """Depth-first branch and bound over the Eulerian circuits from the depot for the
    fewest forbidden U-turns (cheapest turns tried first; identical parallel passes
    tried once).  Exponential in the worst case, hence only for small networks and
    within ``max_expansions``; returns a better successor list, or ``None``."""
    cost = price.cost
    forb = U_FORBIDDEN - 1.0
    m = len(s)
    best = sum(1 for i in range(m) if cost(i, s[i], to[i]) >= forb)
    if best <= _forced_uturns(frm, to, pass_arc, price):
        return None  # already the fewest: nothing to search for
    outs: dict[int, list[int]] = {}
    for k in range(m):
        if k != park:
            outs.setdefault(frm[k], []).append(k)
    used = [False] * m
    used[park] = True
    path: list[int] = []
    found: list[int] | None = None
    expansions = 0

    def dfs(last: int, count: int) -> None:
        nonlocal best, found, expansions
        if len(path) == m - 1:
            if count < best:
                best, found = count, path.copy()
            return
        v = to[last]
        tried: set[int] = set()
        options = sorted((cost(last, o, v), o) for o in outs.get(v, ()) if not used[o])
        for c, o in options:
            if pass_arc[o] in tried:
                continue
            tried.add(pass_arc[o])
            add = 1 if c >= forb else 0
            if count + add >= best or expansions >= max_expansions:
                continue
            expansions += 1
            used[o] = True
            path.append(o)
            dfs(o, count + add)
            path.pop()
            used[o] = False
            if best == 0:
                return

    dfs(park, 0)
    if found is None:
        return None
    out = list(s)
    seq = [park, *found]
    for k in range(len(seq)):
        out[seq[k]] = seq[(k + 1) % len(seq)]
    return out


# -- step 4: detours round the block ---------------------------------------------------------------
@dataclass
class Detour:
    """A way round instead of a U-turn at ``node`` (arc indices, in driving order)."""

    node: int
    arcs: list[int]
    length: float


@dataclass
class Roads:
    """Drivable arcs leaving each node, with every arc's length and head, as lists."""

    out_arcs: list[list[int]]
    length: list[float]
    head: list[int]
    uturn: set[int]
    """``a * n_arcs + b`` for every pair of arcs where ``a`` then ``b`` is a U-turn."""
    n_arcs: int
    ok: list[bool]
    """Per node: a U-turn is allowed."""

    @classmethod
    def of(cls, p: ArcProblem, g: TurnGeometry) -> Roads:
        """Lists and the U-turn pairs of every node (all arriving x leaving arcs, classified
        at once in numpy).  O(sum of in-degree x out-degree)."""
        n_arcs = len(p.arc_seg)
        out_arcs: list[list[int]] = [[] for _ in range(p.n_nodes)]
        for a, f in enumerate(p.arc_from.tolist()):
            out_arcs[f].append(a)
        order = np.argsort(p.arc_from, kind="stable")
        d_out = np.bincount(p.arc_from, minlength=p.n_nodes)
        first = np.concatenate([[0], np.cumsum(d_out)[:-1]])
        count = d_out[p.arc_to]
        a_in = np.repeat(np.arange(n_arcs), count)
        offset = np.arange(len(a_in)) - np.repeat(np.cumsum(count) - count, count)
        a_out = order[np.repeat(first[p.arc_to], count) + offset]
        u = turn_codes(g, a_in, a_out) == _U
        keys = a_in[u] * n_arcs + a_out[u]
        return cls(
            out_arcs,
            p.arc_cost.tolist(),
            p.arc_to.tolist(),
            set(keys.tolist()),
            n_arcs,
            g.uturn_ok.tolist(),
        )


def find_detour(
    roads: Roads,
    a_in: int,
    a_out: int,
    v: int,
    *,
    max_length: float = math.inf,
    max_pops: int = 200_000,
    strict: bool = False,
) -> Detour | None:
    """Shortest closed walk from ``v`` to ``v`` that can be driven between arriving on arc
    ``a_in`` and leaving on ``a_out`` with no forbidden U-turn: Dijkstra over arc states
    (the line graph; Caldwell 1961, Kirby & Potts 1969).  O(k log k) for the k arc states
    nearer than the answer; ``None`` when there is no way round within ``max_length``.
    With ``strict`` the way round makes no U-turn at all, not even where one is allowed."""
    length, head, out_arcs = roads.length, roads.head, roads.out_arcs
    uturn, n, ok = roads.uturn, roads.n_arcs, roads.ok

    def banned(a: int, b: int, w: int) -> bool:
        return a * n + b in uturn and (strict or not ok[w])

    dist: dict[int, float] = {}
    back: dict[int, int] = {}
    heap: list[tuple[float, int]] = []
    for y in out_arcs[v]:
        if not banned(a_in, y, v) and length[y] < dist.get(y, math.inf):
            dist[y] = length[y]
            back[y] = -1
            heapq.heappush(heap, (length[y], y))
    pops = 0
    while heap and pops < max_pops:
        d, x = heapq.heappop(heap)
        if d > max_length:
            break
        if d > dist[x]:
            continue
        pops += 1
        w = head[x]
        if w == v and not banned(x, a_out, v):
            arcs = [x]
            while back[arcs[-1]] >= 0:
                arcs.append(back[arcs[-1]])
            arcs.reverse()
            return Detour(v, arcs, d)
        for y in out_arcs[w]:
            if banned(x, y, w):
                continue
            nd = d + length[y]
            if nd < dist.get(y, math.inf):
                dist[y] = nd
                back[y] = x
                heapq.heappush(heap, (nd, y))
    return None


# -- the whole -------------------------------------------------------------------------------------
@dataclass
class TurnCircuit:
    """The circuit as arc indices in driving order from the depot, and what the rules did."""

    arcs: list[int]
    detours: list[Detour] = field(default_factory=list)
    unavoidable: list[int] = field(default_factory=list)
    """Nodes (indices) of forbidden U-turns that no detour could remove."""


def turn_circuit(
    p: ArcProblem,
    x: np.ndarray,
    network: Network,
    *,
    drive: DriveSide | str = DriveSide.RIGHT,
    detours: bool = True,
    penalties: TurnPenalties | None = None,
    geometry: TurnGeometry | None = None,
    check: Callable[[], None] | None = None,
) -> TurnCircuit:
    """An Eulerian circuit from the depot over the passes ``x`` (count per arc) that
    prefers straight on, avoids turns across traffic and U-turns; with ``detours``,
    forbidden U-turns that remain are replaced by the shortest way round.

    Parameters
    ----------
    p, x
        The network's arrays and the passes per arc (balanced and connected).
    network
        For the geometry and the turning places.
    drive
        The side of the road traffic keeps to.
    detours
        Replace U-turns where none is allowed by a way round (adds deadhead).
    penalties
        Turn penalties (defaults: :class:`TurnPenalties`).
    geometry
        Precomputed :func:`turn_geometry`.
    check
        Called between steps; raises to cancel.

    Returns
    -------
    TurnCircuit
        The arcs in driving order, the detours and the U-turns that remain.
    """
    drive = parse_drive_side(drive)
    g = geometry if geometry is not None else turn_geometry(p, network)
    table = (penalties or TurnPenalties()).table(drive)
    x = np.asarray(x, dtype=np.int64)
    arc = np.repeat(np.arange(len(x)), x)
    if len(arc) == 0:
        return TurnCircuit([])
    pass_arc = np.append(arc, g.park)  # the parking pass at the depot
    frm = np.append(p.arc_from[arc], p.depot)
    to = np.append(p.arc_to[arc], p.depot)
    if not np.array_equal(
        np.bincount(frm, minlength=p.n_nodes), np.bincount(to, minlength=p.n_nodes)
    ):
        raise SolverError("the passes are not balanced at every junction; this is a bug")
    park = len(arc)
    succ, ins_by_node = pair_at_nodes(g, table, pass_arc, frm, to, p.n_nodes)
    price = _Pricer(g, table, pass_arc.tolist())
    to_l = to.tolist()
    if check is not None:
        check()
    s = join_trails(succ, ins_by_node, to_l, price)
    if check is not None:
        check()
    s = remove_uturns_by_exchange(s, to_l, price, park)
    if len(s) <= EXACT_MAX_PASSES:
        exact = fewest_uturns_search(s, frm.tolist(), to_l, pass_arc.tolist(), price, park)
        s = exact if exact is not None else s
    seq = _sequence(s, park)[1:]
    arcs = [int(pass_arc[i]) for i in seq]
    result = TurnCircuit(arcs)
    a = np.asarray(arcs, dtype=np.int64)
    at = p.arc_to[a[:-1]]
    bad = (turn_codes(g, a[:-1], a[1:]) == _U) & ~g.uturn_ok[at]
    forbidden = np.nonzero(bad)[0].tolist()
    if not forbidden:
        return result
    if not detours:
        result.unavoidable = [int(p.arc_to[arcs[k]]) for k in forbidden]
        return result
    roads = Roads.of(p, g)
    pieces: list[list[int]] = []
    last = 0
    for k in forbidden:
        if check is not None:
            check()
        v = int(p.arc_to[arcs[k]])
        # The shortest way round with U-turns only where allowed; if it makes one (at a dead
        # end or turning place), a way round with none at all is preferred unless it is
        # more than twice as long plus 1 km (our own trade-off).
        det = find_detour(roads, arcs[k], arcs[k + 1], v)
        if det is not None and any(
            (a * roads.n_arcs + b) in roads.uturn for a, b in itertools.pairwise(det.arcs)
        ):
            cap = 2.0 * det.length + 1000.0
            det = find_detour(roads, arcs[k], arcs[k + 1], v, strict=True, max_length=cap) or det
        if det is None:
            result.unavoidable.append(v)
            continue
        pieces.append(arcs[last : k + 1])
        pieces.append(det.arcs)
        last = k + 1
        result.detours.append(det)
    pieces.append(arcs[last:])
    result.arcs = [a for piece in pieces for a in piece]
    return result


def count_turns(
    p: ArcProblem,
    g: TurnGeometry,
    arcs: Sequence[int],
    drive: DriveSide | str,
    node_ids: Sequence[str],
) -> TurnCounts:
    """Turns between consecutive passes of a circuit in driving order (the return to the
    depot at the end is parking, not a turn).  O(m)."""
    drive = parse_drive_side(drive)
    a = np.asarray(arcs, dtype=np.int64)
    if len(a) < 2:
        return TurnCounts(drive=str(drive), geometry=g.has_geometry)
    code = turn_codes(g, a[:-1], a[1:])
    at = p.arc_to[a[:-1]]
    n = np.bincount(code, minlength=len(TURN_CODES))
    across = sum(int(n[k]) for k, t in enumerate(TURN_CODES) if crosses_traffic(t, drive))
    uturn = code == _U
    bad = uturn & ~g.uturn_ok[at]
    return TurnCounts(
        straight=int(n[0]),
        bear_left=int(n[1]),
        bear_right=int(n[2]),
        left=int(n[3]),
        right=int(n[4]),
        sharp_left=int(n[5]),
        sharp_right=int(n[6]),
        uturns=int(n[_U]),
        across_traffic=across - int(n[_U]),
        uturn_nodes=[node_ids[v] for v in at[bad].tolist()],
        drive=str(drive),
        geometry=g.has_geometry,
    )
