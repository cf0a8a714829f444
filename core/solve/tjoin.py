"""Minimum-weight T-join on an undirected graph, by sparse-blossom matching.

Making the odd-degree nodes of a street graph even at least cost is the
minimum T-join problem (T = the odd nodes).  Edmonds & Johnson (1973) solve it
as a minimum-weight perfect matching on the complete graph of shortest-path
distances between the nodes of T; that complete graph has |T|²/2 edges and
is what makes the classic pipeline slow at city scale.

PyMatching's sparse blossom (Higgott & Gidney 2023) solves the *same*
matching without ever building the complete graph: it grows regions over the
sparse graph itself and returns the set of edges whose odd-degree nodes are
exactly the flagged ones (its "syndrome") at minimum total weight, which is
the minimum T-join.  We use it as the matching engine.

Exactness.  PyMatching rounds weights to integers after scaling by
``max_weight / 2**24``.  We hand it integer weights (lengths in a whole
unit: the network's own unit when all lengths are whole numbers, else
millimetres), and pin the largest weight to 2**23 by an isolated dummy edge,
so the scaling is by exactly 4 and no rounding happens: the matching is
exact for the lengths in that unit.  (Pinning also keeps PyMatching's
internal sums small; letting the longest street set the scale made a
100,000-segment network 80 times slower.)  ``tests/test_engine_*``
check it against networkx's complete-graph matching and against an integer
program.

References
----------
J. Edmonds and E. L. Johnson, "Matching, Euler tours and the Chinese
postman", Mathematical Programming 5 (1973) 88–124.
O. Higgott and C. Gidney, "Sparse Blossom: correcting a million errors per
core second with minimum-weight matching", arXiv:2303.15933 (2023).
"""

from __future__ import annotations

import numpy as np
import pymatching
import scipy.sparse as sp

from core.errors import SolverError
from core.solve.weights import MAX_INT_WEIGHT, integer_weights


def _shortest_of_parallels(u: np.ndarray, v: np.ndarray, length: np.ndarray) -> np.ndarray:
    """Indices of the non-loop edges, keeping only the shortest of parallel edges.

    A T-join never needs two parallel edges (they cancel in parity), and we
    want to know which segment the matcher chose.  O(m log m).
    """
    lo = np.minimum(u, v)
    hi = np.maximum(u, v)
    idx = np.nonzero(lo != hi)[0]
    order = idx[np.lexsort((length[idx], hi[idx], lo[idx]))]
    if len(order) == 0:
        return order
    first = np.ones(len(order), dtype=bool)
    first[1:] = (lo[order[1:]] != lo[order[:-1]]) | (hi[order[1:]] != hi[order[:-1]])
    return np.sort(order[first])


def peel_leaves(
    n_nodes: int, u: np.ndarray, v: np.ndarray, odd: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Settle the tree-like fringes of the graph exactly before matching.

    A node of degree one (the end of a cul-de-sac) that is in T can only be
    served by its one edge, so that edge is in every T-join; one that is not
    in T never needs it.  Removing the leaf and flipping its neighbour's
    membership of T when the edge is taken repeats until no leaf is left.
    Exact; O(n + m).  Sparse blossom is much slower on graphs with many
    cul-de-sacs (measured: 11 s against 0.3 s on a 70,000-segment town), so
    the fringes are settled here, by hand, as no library offers this step.

    Returns
    -------
    (keep, taken, odd_left)
        ``keep``: mask of the edges left for matching; ``taken``: indices of
        the edges already in the T-join; ``odd_left``: T on the rest.
    """
    m = len(u)
    uu = u.tolist()
    vv = v.tolist()
    adj: list[list[int]] = [[] for _ in range(n_nodes)]
    for e in range(m):
        adj[uu[e]].append(e)
        adj[vv[e]].append(e)
    deg = [len(a) for a in adj]
    alive = [True] * m
    t = odd.tolist()
    taken: list[int] = []
    stack = [x for x in range(n_nodes) if deg[x] == 1]
    while stack:
        x = stack.pop()
        if deg[x] != 1:
            continue
        e = next(e for e in adj[x] if alive[e])
        alive[e] = False
        y = vv[e] if uu[e] == x else uu[e]
        deg[x] -= 1
        deg[y] -= 1
        if t[x]:
            taken.append(e)
            t[x] = False
            t[y] = not t[y]
        if deg[y] == 1:
            stack.append(y)
    return (
        np.asarray(alive, dtype=bool),
        np.asarray(taken, dtype=np.int64),
        np.asarray(t, dtype=bool),
    )


def min_tjoin(n_nodes: int, u: np.ndarray, v: np.ndarray, length: np.ndarray, odd: np.ndarray):
    """Edges of a minimum-weight T-join.

    Parameters
    ----------
    n_nodes
        Number of nodes (ids ``0..n_nodes-1``).
    u, v
        End nodes of the candidate edges (loops are ignored).
    length
        Non-negative edge lengths.
    odd
        Boolean mask of the nodes in T; each connected component must hold an
        even number of them.

    Returns
    -------
    numpy.ndarray
        Indices into ``u``/``v`` of the edges in the T-join (each at most once).

    Notes
    -----
    Cost: sparse blossom's running time is close to linear in the size of the
    graph in practice (Higgott & Gidney 2023); building the check matrix is
    O(n + m).
    """
    m = len(u)
    if not np.any(odd):
        return np.zeros(0, dtype=np.int64)
    keep = _shortest_of_parallels(u, v, length)
    alive, taken, odd = peel_leaves(n_nodes, u[keep], v[keep], odd)
    settled = keep[taken]
    keep = keep[alive]
    if not np.any(odd):
        return np.sort(settled)
    w, _unit = integer_weights(length[keep])
    # The pin fixes PyMatching's scale factor at 2**25 / 2**23 = 4: a whole number, so no
    # rounding, and small, so region radii (sums of scaled weights, unsigned 32-bit inside
    # PyMatching) stay far from overflow: 2**30 units, over 1,000 km at millimetre resolution.
    pin = MAX_INT_WEIGHT
    k = len(keep)
    rows = np.concatenate([u[keep], v[keep], [n_nodes, n_nodes + 1]])
    cols = np.concatenate([np.arange(k), np.arange(k), [k, k]])
    h = sp.csc_matrix(
        (np.ones(len(rows), dtype=np.uint8), (rows, cols)), shape=(n_nodes + 2, k + 1)
    )
    weights = np.concatenate([w, [pin]]).astype(np.float64)
    matcher = pymatching.Matching.from_check_matrix(h, weights=weights)
    syndrome = np.zeros(n_nodes + 2, dtype=np.uint8)
    syndrome[:n_nodes] = odd
    try:
        correction = matcher.decode(syndrome)
    except ValueError as exc:  # no perfect matching: an odd number of T nodes in a component
        raise SolverError(f"the pairing of odd junctions failed: {exc}") from exc
    chosen = keep[np.nonzero(correction[:k])[0]]
    assert m == 0 or chosen.max(initial=0) < m
    return np.sort(np.concatenate([settled, chosen]))
