"""Eulerian circuits: orienting an even multigraph and walking a balanced one.

Both follow Hierholzer (1873): walk until stuck (which can only happen at the
start), then splice in sub-circuits from the nodes on the stack that still
have unused passes.  Each pass is looked at a constant number of times:
O(n + m).

Written here rather than taken from ``networkx.eulerian_circuit`` because we
walk arrays of pass indices (tens of thousands of passes per district, each
carrying its segment and direction) and need the undirected variant only to
orient passes; building a networkx multigraph for that costs more than the
walk itself.  ``tests/test_engine_reference.py`` checks every circuit with
networkx.

References
----------
C. Hierholzer, "Ueber die Möglichkeit, einen Linienzug ohne Wiederholung
und ohne Unterbrechung zu umfahren", Mathematische Annalen 6 (1873) 30–32.
"""

from __future__ import annotations

import numpy as np

from core.errors import SolverError


def orient_even(n_nodes: int, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Directions for the edges of an even-degree multigraph that balance every node.

    Walks an Euler circuit of every connected piece and orients each edge the
    way it was walked.

    Parameters
    ----------
    n_nodes
        Number of nodes.
    u, v
        End nodes of each edge (loops allowed).

    Returns
    -------
    numpy.ndarray
        ``+1`` where the edge is walked ``u``→``v``, ``-1`` where ``v``→``u``.
    """
    m = len(u)
    uu = u.tolist()
    vv = v.tolist()
    adj: list[list[int]] = [[] for _ in range(n_nodes)]
    for e in range(m - 1, -1, -1):
        adj[uu[e]].append(e)
        if vv[e] != uu[e]:
            adj[vv[e]].append(e)
    used = [False] * m
    direction = [0] * m
    ptr = [len(a) for a in adj]
    for start in range(n_nodes):
        if ptr[start] == 0:
            continue
        stack = [start]
        while stack:
            x = stack[-1]
            lst = adj[x]
            p = ptr[x]
            while p and used[lst[p - 1]]:
                p -= 1
            ptr[x] = p
            if p == 0:
                stack.pop()
                continue
            e = lst[p - 1]
            used[e] = True
            if uu[e] == x:
                direction[e] = 1
                stack.append(vv[e])
            else:
                direction[e] = -1
                stack.append(uu[e])
    out = np.asarray(direction, dtype=np.int8)
    # check balance: a mistake here would make the later walk fail far from its cause
    frm = np.where(out > 0, u, v)
    to = np.where(out > 0, v, u)
    if not np.array_equal(np.bincount(frm, minlength=n_nodes), np.bincount(to, minlength=n_nodes)):
        raise SolverError("orienting the passes left a node unbalanced (odd degree); this is a bug")
    return out


def euler_circuit(n_nodes: int, frm: np.ndarray, to: np.ndarray, start: int) -> list[int]:
    """Order of the passes in a closed walk from ``start`` that uses each exactly once.

    Parameters
    ----------
    n_nodes
        Number of nodes.
    frm, to
        Tail and head of each pass of a balanced directed multigraph.
    start
        The node the circuit begins and ends at.

    Returns
    -------
    list[int]
        Pass indices in walking order.  Passes leaving a node are taken in
        index order, so the result is deterministic.

    Raises
    ------
    SolverError
        If the passes are unbalanced or not all connected to ``start``.
    """
    m = len(frm)
    if m == 0:
        return []
    ff = frm.tolist()
    tt = to.tolist()
    out: list[list[int]] = [[] for _ in range(n_nodes)]
    for a in range(m - 1, -1, -1):  # reversed, so pop() yields the lowest index first
        out[ff[a]].append(a)
    stack_node = [start]
    stack_arc = [-1]
    circuit: list[int] = []
    while stack_node:
        x = stack_node[-1]
        lst = out[x]
        if lst:
            a = lst.pop()
            stack_node.append(tt[a])
            stack_arc.append(a)
        else:
            stack_node.pop()
            a = stack_arc.pop()
            if a >= 0:
                circuit.append(a)
    circuit.reverse()
    if len(circuit) != m:
        raise SolverError(
            f"the passes do not form one circuit from the depot ({len(circuit)} of {m} "
            "reachable); this is a bug"
        )
    return circuit
