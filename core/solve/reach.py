"""Can every street that needs service be reached from the depot, and left again?

A closed circuit from the depot exists exactly when every node the service
passes touch lies in the depot's strongly connected component of the drivable
graph.  We tell apart the two ways this fails, because the fix differs:
streets that cannot be reached at all, and one-way traps (streets you can
drive into but never get back from).

Breadth-first search forwards and backwards from the depot with SciPy's
compiled graph routines: O(n + m).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import breadth_first_order

from core.errors import OneWayTrapError, UnreachableError, describe_streets
from core.solve.arcs import ArcProblem


def drivable_matrix(p: ArcProblem) -> sp.csr_matrix:
    """Sparse adjacency of the drivable digraph (any arc gives a 1)."""
    n = p.n_nodes
    data = np.ones(len(p.arc_from), dtype=np.int8)
    return sp.csr_matrix((data, (p.arc_from, p.arc_to)), shape=(n, n))


def reach_masks(p: ArcProblem) -> tuple[np.ndarray, np.ndarray]:
    """Masks of nodes reachable from the depot and of nodes that can reach it."""
    adj = drivable_matrix(p)
    n = p.n_nodes
    fwd = np.zeros(n, dtype=bool)
    fwd[breadth_first_order(adj, p.depot, directed=True, return_predecessors=False)] = True
    back = np.zeros(n, dtype=bool)
    back[breadth_first_order(adj.T.tocsr(), p.depot, directed=True, return_predecessors=False)] = (
        True
    )
    return fwd, back


def check_reachable(p: ArcProblem, names: dict[str, str]) -> None:
    """Raise if some service pass cannot be part of a circuit from the depot.

    Raises
    ------
    UnreachableError
        Streets that need service but cannot be reached from the depot.
    OneWayTrapError
        Streets that can be reached but from which the depot cannot be
        regained (one-way traps).
    """
    fwd, back = reach_masks(p)
    req = np.nonzero(p.required)[0]
    if len(req) == 0:
        return
    ends_reached = fwd[p.tail[req]] & fwd[p.head[req]]
    ends_return = back[p.tail[req]] & back[p.head[req]]
    unreached = req[~ends_reached]
    if len(unreached):
        ids = [p.seg_ids[i] for i in unreached]
        raise UnreachableError(
            f"{len(ids)} street(s) that need service cannot be reached from depot "
            f"{p.node_ids[p.depot]}: {describe_streets(ids, names)}. Check one-way "
            "directions and missing connections.",
            segments=ids,
        )
    trapped = req[~ends_return]
    if len(trapped):
        ids = [p.seg_ids[i] for i in trapped]
        raise OneWayTrapError(
            f"{len(ids)} street(s) that need service are one-way traps: a vehicle can drive "
            f"in but can never get back to depot {p.node_ids[p.depot]}: "
            f"{describe_streets(ids, names)}. Check one-way directions near them.",
            segments=ids,
        )
