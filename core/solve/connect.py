"""Pieces of required streets, and the cheapest deadhead that links them.

When the streets that need service fall into several pieces that do not
touch (the rural postman problem), a circuit must drive between them.
Frederickson's heuristic (1979), the one Christofides, Campos, Corberán &
Mota (1981) start from, links the pieces by a minimum spanning tree over the
shortest-path distances between them and then balances the result as in the
connected case.  Here the links are driven in their shortest direction and
later balancing (matching or flow) adds the way back where needed.

Shortest paths by SciPy's compiled Dijkstra, one multi-source run per piece:
O(k (m + n log n)) for k pieces.

References
----------
G. N. Frederickson, "Approximation algorithms for some postman problems",
Journal of the ACM 26 (1979) 538–554.
N. Christofides, V. Campos, A. Corberán and E. Mota, "An algorithm for the
rural postman problem", Report IC.O.R.81.5, Imperial College London (1981).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import dijkstra, minimum_spanning_tree

from core.solve.arcs import ArcProblem


class _UnionFind:
    def __init__(self, n: int) -> None:
        self.parent = list(range(n))

    def find(self, a: int) -> int:
        parent = self.parent
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[ra] = rb


def required_pieces(p: ArcProblem, extra_arcs: np.ndarray | None = None) -> np.ndarray:
    """Label per node of the piece it belongs to, or -1 if it touches no service.

    Pieces are the connected components (ignoring direction) of the required
    segments, the depot and, optionally, the arcs ``extra_arcs`` (indices into
    ``p``'s arcs).  O(n + m α(n)).
    """
    n = p.n_nodes
    uf = _UnionFind(n)
    req = np.nonzero(p.required)[0]
    touched = np.zeros(n, dtype=bool)
    touched[p.depot] = True
    touched[p.tail[req]] = True
    touched[p.head[req]] = True
    for a, b in zip(p.tail[req].tolist(), p.head[req].tolist(), strict=True):
        uf.union(a, b)
    if extra_arcs is not None:
        for a, b in zip(
            p.arc_from[extra_arcs].tolist(), p.arc_to[extra_arcs].tolist(), strict=True
        ):
            uf.union(a, b)
            touched[a] = touched[b] = True
    roots = {}
    label = np.full(n, -1, dtype=np.int64)
    for v in np.nonzero(touched)[0].tolist():
        r = uf.find(v)
        label[v] = roots.setdefault(r, len(roots))
    return label


def shortest_arc_matrix(p: ArcProblem) -> tuple[sp.csr_matrix, dict[tuple[int, int], int]]:
    """Drivable digraph as a sparse matrix keeping the shortest of parallel arcs.

    SciPy adds up duplicate entries, so parallel arcs are thinned first.
    Returns the matrix and a map from node pair to the arc index used.
    """
    cost = p.arc_cost
    keep = np.nonzero(p.arc_from != p.arc_to)[0]
    order = keep[np.lexsort((cost[keep], p.arc_to[keep], p.arc_from[keep]))]
    fr, to = p.arc_from[order], p.arc_to[order]
    first = np.ones(len(order), dtype=bool)
    first[1:] = (fr[1:] != fr[:-1]) | (to[1:] != to[:-1])
    best = order[first]
    mat = sp.csr_matrix(
        (cost[best], (p.arc_from[best], p.arc_to[best])), shape=(p.n_nodes, p.n_nodes)
    )
    lookup = dict(
        zip(
            zip(p.arc_from[best].tolist(), p.arc_to[best].tolist(), strict=True),
            best.tolist(),
            strict=True,
        )
    )
    return mat, lookup


def linking_arcs(p: ArcProblem, label: np.ndarray) -> np.ndarray:
    """Arc indices of Frederickson's minimum spanning tree of links between pieces.

    Returns an empty array when there is one piece.  A piece that cannot be
    reached at all cannot occur here: reachability is checked first.
    """
    k = int(label.max()) + 1 if label.size else 0
    if k <= 1:
        return np.zeros(0, dtype=np.int64)
    mat, lookup = shortest_arc_matrix(p)
    members = [np.nonzero(label == c)[0] for c in range(k)]
    dist_between = np.full((k, k), np.inf)
    for c in range(k):
        d = dijkstra(mat, directed=True, indices=members[c], min_only=True)
        reached = label >= 0
        per_piece = np.full(k, np.inf)
        np.minimum.at(per_piece, label[reached], d[reached])
        dist_between[c] = per_piece
    sym = np.minimum(dist_between, dist_between.T)
    np.fill_diagonal(sym, 0.0)
    # minimum_spanning_tree treats 0 as "no edge"; lengths are positive, so only the diagonal is 0
    tree = minimum_spanning_tree(sp.csr_matrix(np.where(np.isfinite(sym), sym, 0.0))).tocoo()
    arcs: list[int] = []
    for a, b in zip(tree.row.tolist(), tree.col.tolist(), strict=True):
        src, dst = (a, b) if dist_between[a, b] <= dist_between[b, a] else (b, a)
        d, pred, _sources = dijkstra(
            mat, directed=True, indices=members[src], min_only=True, return_predecessors=True
        )
        targets = members[dst]
        end = int(targets[np.argmin(d[targets])])
        node = end
        while pred[node] >= 0:
            prev = int(pred[node])
            arcs.append(lookup[(prev, node)])
            node = prev
    return np.asarray(sorted(set(arcs)), dtype=np.int64)
