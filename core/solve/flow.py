"""Balancing a directed street graph by minimum-cost flow.

When every service pass has a fixed direction, a closed circuit exists once
every node has as many passes in as out.  The cheapest deadhead that achieves
this is a minimum-cost flow from the nodes with surplus arrivals to the nodes
with surplus departures over the drivable arcs (Edmonds & Johnson 1973;
Beltrami & Bodin 1974).  We solve the network LP with SciPy's HiGHS dual
simplex: the node-arc incidence matrix is totally unimodular, so the basic
optimal solution HiGHS returns is integral.

References
----------
J. Edmonds and E. L. Johnson, "Matching, Euler tours and the Chinese
postman", Mathematical Programming 5 (1973) 88–124.
E. J. Beltrami and L. D. Bodin, "Networks and vehicle routing for municipal
waste collection", Networks 4 (1974) 65–94.
Q. Huangfu and J. A. J. Hall, "Parallelizing the dual revised simplex
method", Mathematical Programming Computation 10 (2018) 119–142 (HiGHS).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.optimize import linprog

from core.errors import SolverError


def incidence(n_nodes: int, arc_from: np.ndarray, arc_to: np.ndarray) -> sp.csr_matrix:
    """Node-arc incidence: +1 where an arc leaves a node, -1 where it enters."""
    k = len(arc_from)
    cols = np.arange(k)
    data = np.concatenate([np.ones(k), -np.ones(k)])
    return sp.csr_matrix(
        (data, (np.concatenate([arc_from, arc_to]), np.concatenate([cols, cols]))),
        shape=(n_nodes, k),
    )


def min_cost_balance(
    n_nodes: int,
    arc_from: np.ndarray,
    arc_to: np.ndarray,
    cost: np.ndarray,
    excess_in: np.ndarray,
) -> np.ndarray:
    """Extra passes per arc that balance every node at least cost.

    Parameters
    ----------
    n_nodes
        Number of nodes.
    arc_from, arc_to, cost
        The drivable arcs (no loops) and their lengths.
    excess_in
        Per node, passes in minus passes out of the fixed (service) passes.

    Returns
    -------
    numpy.ndarray
        Integer number of deadhead passes per arc.

    Notes
    -----
    Cost: one LP with n rows and m columns; HiGHS's dual simplex is fast in
    practice on network matrices (tens of thousands of arcs in well under a
    second on one core).
    """
    k = len(arc_from)
    if not np.any(excess_in):
        return np.zeros(k, dtype=np.int64)
    a = incidence(n_nodes, arc_from, arc_to)
    res = linprog(
        cost,
        A_eq=a,
        b_eq=excess_in.astype(np.float64),
        bounds=(0, None),
        method="highs-ds",
    )
    if res.status != 0 or res.x is None:
        raise SolverError(f"balancing the one-way streets failed: {res.message}")
    flow = np.rint(res.x).astype(np.int64)
    check = a @ flow
    if not np.array_equal(check.astype(np.int64), excess_in.astype(np.int64)):
        raise SolverError("the balancing flow came back fractional; this is a bug")
    return flow
