"""Synthetic street networks for benchmarks and tests.

Two generators, both deterministic for a given seed:

:func:`synthetic_network`
    An irregular town-like grid of about ``n_segments`` street segments:
    uneven block sizes, jittered junctions, some grid streets left out, short
    diagonal avenues and dead-end spurs, optionally with one-way streets and
    streets that need no service.  Builds 100 000 segments in a few seconds.
:func:`grid_network`
    A jittered ``rows`` x ``cols`` grid with some streets left out and whole
    metre lengths (40 x 40 gives ~1 600 nodes and ~2 600 segments), the network
    on which the engine is compared with a plain networkx pipeline.

Coordinates are metres in UTM zone 26N (``EPSG:32626``), which puts the
networks in the open North Atlantic.  Geometry is the straight two-point line
between the end nodes.  Connectivity is kept by construction: the streets
left out are never on a random spanning tree of the grid (scipy
``minimum_spanning_tree`` on random weights).  One-way streets are chosen at
random and then repaired until the drivable digraph is strongly connected
(scipy ``connected_components(connection="strong")``; see
:func:`_orient_one_way`).
"""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components, minimum_spanning_tree

from core.model import Network, Node, OneWay, Segment, Service

__all__ = ["CRS", "drivable_digraph", "grid_network", "synthetic_network"]

CRS = "EPSG:32626"
"""UTM zone 26N (30° W to 24° W): metres; the networks lie in the open ocean."""

_ORIGIN = (500_000.0, 5_205_000.0)
"""Easting/northing of the south-west corner (27° W, about 47° N)."""

_DIAGONAL_SHARE = 0.03
"""Diagonal streets per requested segment in :func:`synthetic_network`."""
_SPUR_SHARE = 0.06
"""Dead-end spurs per requested segment in :func:`synthetic_network`."""
_GRID_SURPLUS = 1.03
"""Grid streets laid out per requested segment before some are left out."""


def synthetic_network(
    n_segments: int,
    *,
    seed: int = 0,
    oneway_share: float = 0.0,
    optional_share: float = 0.0,
) -> Network:
    """Build an irregular grid town of about ``n_segments`` street segments.

    Method: a grid of junctions with random block widths (60–140 m) and
    heights (50–120 m), each junction jittered by up to 12 m; a random
    spanning tree of the grid streets is kept and enough of the other grid
    streets are left out to hit the requested size after adding diagonal
    avenues (runs of 2–8 block diagonals, about 3 % of the segments) and
    dead-end spurs (20–45 m, about 6 %).  For ``n_segments`` above a few
    dozen the count is exact.

    Parameters
    ----------
    n_segments
        Number of street segments wanted (at least 4).
    seed
        Seed of the random generator; the same seed gives the same network.
    oneway_share
        Share of segments made one-way (0–0.6), half of them drawn
        ``forward`` and half ``backward``.  Dead-end spurs are never one-way,
        and one-way streets that would leave part of the network unreachable
        are made two-way again (then others are drawn to make up the share),
        so the drivable digraph is strongly connected.
    optional_share
        Share of segments with :attr:`Service.NONE`; all others need
        :attr:`Service.EITHER`, one pass.

    Returns
    -------
    Network
        CRS ``EPSG:32626``, node ids ``n0…``, segment ids ``s0…``, depot at
        the junction nearest to the centre.  ``meta["generator"]`` records the
        arguments.
    """
    if n_segments < 4:
        raise ValueError(f"n_segments must be at least 4, not {n_segments}")
    if not 0.0 <= oneway_share <= 0.6:
        raise ValueError(f"oneway_share must be between 0 and 0.6, not {oneway_share}")
    if not 0.0 <= optional_share <= 1.0:
        raise ValueError(f"optional_share must be between 0 and 1, not {optional_share}")
    rng = np.random.default_rng(seed)

    # Grid size: r*(c-1) + c*(r-1) grid streets, a little over the target.
    target_grid = max(4.0, n_segments * _GRID_SURPLUS)
    side = (1.0 + math.sqrt(1.0 + 2.0 * target_grid)) / 2.0  # 2s² - 2s = target
    cols = max(2, round(side * 1.15))
    rows = max(2, math.ceil((target_grid + cols) / (2 * cols - 1)))
    widths = rng.uniform(60.0, 140.0, cols - 1)
    heights = rng.uniform(50.0, 120.0, rows - 1)
    xs, ys = _grid_coordinates(rng, rows, cols, widths, heights, jitter=12.0)
    gu, gv = _grid_edges(rows, cols)

    n_diag = round(_DIAGONAL_SHARE * n_segments) if n_segments >= 50 else 0
    n_spur = round(_SPUR_SHARE * n_segments) if n_segments >= 20 else 0
    n_nodes_grid = rows * cols
    spare = len(gu) - (n_nodes_grid - 1)  # grid streets not on the spanning tree
    n_remove = len(gu) + n_diag + n_spur - n_segments
    if n_remove < 0:
        n_spur -= n_remove
        n_remove = 0
    n_remove = min(n_remove, spare)
    keep = _keep_mask(rng, n_nodes_grid, gu, gv, n_remove)
    us, vs = [gu[keep]], [gv[keep]]

    du, dv = _diagonals(rng, rows, cols, n_diag)
    us.append(du)
    vs.append(dv)

    spur_from = rng.choice(n_nodes_grid, size=n_spur, replace=n_spur > n_nodes_grid)
    angle = rng.uniform(0.0, 2.0 * math.pi, n_spur)
    reach = rng.uniform(20.0, 45.0, n_spur)
    xs = np.concatenate([xs, xs[spur_from] + reach * np.cos(angle)])
    ys = np.concatenate([ys, ys[spur_from] + reach * np.sin(angle)])
    us.append(spur_from)
    vs.append(np.arange(n_nodes_grid, n_nodes_grid + n_spur))
    u = np.concatenate(us).astype(np.int64)
    v = np.concatenate(vs).astype(np.int64)
    # Draw half the streets from v to u, so segment direction carries no pattern.
    flip = rng.random(len(u)) < 0.5
    u, v = np.where(flip, v, u), np.where(flip, u, v)

    m = len(u)
    can_be_oneway = np.ones(m, dtype=bool)
    can_be_oneway[m - n_spur :] = False
    direction = _orient_one_way(rng, len(xs), u, v, can_be_oneway, oneway_share)
    optional = np.zeros(m, dtype=bool)
    optional[rng.permutation(m)[: round(optional_share * m)]] = True

    net = _assemble(
        f"synthetic-{n_segments}-seed{seed}",
        xs,
        ys,
        u,
        v,
        direction=direction,
        optional=optional,
        lengths=None,
    )
    net.meta["generator"] = {
        "function": "synthetic_network",
        "n_segments": n_segments,
        "seed": seed,
        "oneway_share": oneway_share,
        "optional_share": optional_share,
    }
    return net


def grid_network(
    rows: int = 40,
    cols: int = 40,
    seed: int = 0,
    *,
    removed_share: float = 1 / 6,
) -> Network:
    """A jittered street grid with some streets left out, lengths in whole metres.

    Method: junctions 100 m apart jittered by up to 20 m and rounded to whole
    metres; a random spanning tree of the grid streets is kept and
    ``removed_share`` of all grid streets is left out from the rest.  Every
    segment is two-way, :attr:`Service.EITHER`, and has its length given as
    the straight distance rounded to whole metres, so optimal costs are exact
    integers and two solvers can be compared to the millimetre.

    Parameters
    ----------
    rows, cols
        Junctions down and across; 40 x 40 gives 1 600 nodes and, with the
        default ``removed_share``, 2 600 segments.
    seed
        Seed of the random generator.
    removed_share
        Share of the ``rows*(cols-1) + cols*(rows-1)`` grid streets left out
        (at most the share not on the spanning tree).

    Returns
    -------
    Network
        CRS ``EPSG:32626``, depot at the junction nearest to the centre.
    """
    if rows < 2 or cols < 2:
        raise ValueError(f"a grid needs at least 2 x 2 junctions, not {rows} x {cols}")
    rng = np.random.default_rng(seed)
    widths = np.full(cols - 1, 100.0)
    heights = np.full(rows - 1, 100.0)
    xs, ys = _grid_coordinates(rng, rows, cols, widths, heights, jitter=20.0)
    xs, ys = np.round(xs), np.round(ys)
    gu, gv = _grid_edges(rows, cols)
    spare = len(gu) - (rows * cols - 1)
    n_remove = min(spare, round(removed_share * len(gu)))
    keep = _keep_mask(rng, rows * cols, gu, gv, n_remove)
    u, v = gu[keep], gv[keep]
    lengths = np.maximum(1.0, np.round(np.hypot(xs[u] - xs[v], ys[u] - ys[v])))
    net = _assemble(
        f"grid-{rows}x{cols}-seed{seed}",
        xs,
        ys,
        u,
        v,
        direction=np.zeros(len(u), dtype=np.int8),
        optional=np.zeros(len(u), dtype=bool),
        lengths=lengths,
    )
    net.meta["generator"] = {
        "function": "grid_network",
        "rows": rows,
        "cols": cols,
        "seed": seed,
        "removed_share": removed_share,
    }
    return net


def drivable_digraph(network: Network) -> nx.DiGraph:
    """The networkx ``DiGraph`` of allowed driving moves between nodes.

    A two-way segment gives arcs both ways, a one-way segment one arc in its
    direction of traffic.  Used to check strong connectivity with
    ``networkx.is_strongly_connected``.
    """
    g = nx.DiGraph()
    g.add_nodes_from(network.nodes)
    for s in network:
        if s.oneway is not OneWay.BACKWARD:
            g.add_edge(s.start, s.end)
        if s.oneway is not OneWay.FORWARD:
            g.add_edge(s.end, s.start)
    return g


# -- building blocks ------------------------------------------------------------


def _grid_coordinates(
    rng: np.random.Generator,
    rows: int,
    cols: int,
    widths: np.ndarray,
    heights: np.ndarray,
    *,
    jitter: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Junction coordinates, row-major (node ``r*cols + c``), jittered."""
    cx = np.concatenate([[0.0], np.cumsum(widths)])
    cy = np.concatenate([[0.0], np.cumsum(heights)])
    xs = np.tile(cx, rows) + rng.uniform(-jitter, jitter, rows * cols) + _ORIGIN[0]
    ys = np.repeat(cy, cols) + rng.uniform(-jitter, jitter, rows * cols) + _ORIGIN[1]
    return xs, ys


def _grid_edges(rows: int, cols: int) -> tuple[np.ndarray, np.ndarray]:
    """End nodes of the grid streets: first the across ones, then the up ones."""
    idx = np.arange(rows * cols).reshape(rows, cols)
    across_u, across_v = idx[:, :-1].ravel(), idx[:, 1:].ravel()
    up_u, up_v = idx[:-1, :].ravel(), idx[1:, :].ravel()
    return np.concatenate([across_u, up_u]), np.concatenate([across_v, up_v])


def _keep_mask(
    rng: np.random.Generator, n_nodes: int, u: np.ndarray, v: np.ndarray, n_remove: int
) -> np.ndarray:
    """Which edges to keep: all of a random spanning tree and all but
    ``n_remove`` of the others (scipy ``minimum_spanning_tree`` on random
    weights in (1, 2), which are distinct so the tree is unique)."""
    m = len(u)
    weights = 1.0 + rng.random(m)
    mst = minimum_spanning_tree(coo_matrix((weights, (u, v)), shape=(n_nodes, n_nodes)))
    tree = mst.tocoo()
    # Recover the tree's edges by their (unique) weight.
    order = np.argsort(weights)
    on_tree = np.zeros(m, dtype=bool)
    on_tree[order[np.searchsorted(weights[order], tree.data)]] = True
    keep = np.ones(m, dtype=bool)
    spare = np.flatnonzero(~on_tree)
    keep[rng.permutation(spare)[:n_remove]] = False
    return keep


def _diagonals(rng: np.random.Generator, rows: int, cols: int, count: int):
    """``count`` block diagonals in runs of 2–8 blocks, at most one per block."""
    used = np.zeros((rows - 1, cols - 1), dtype=bool)
    du: list[int] = []
    dv: list[int] = []
    attempts = 0
    while len(du) < count and attempts < 20 * count + 20:
        attempts += 1
        r = int(rng.integers(0, rows - 1))
        c = int(rng.integers(0, cols - 1))
        rising = bool(rng.integers(0, 2))
        for _ in range(int(rng.integers(2, 9))):
            if not (0 <= r < rows - 1 and 0 <= c < cols - 1) or used[r, c]:
                break
            used[r, c] = True
            if rising:  # south-west to north-east corner of the block
                du.append(r * cols + c)
                dv.append((r + 1) * cols + c + 1)
                r, c = r + 1, c + 1
            else:  # north-west to south-east corner
                du.append((r + 1) * cols + c)
                dv.append(r * cols + c + 1)
                r, c = r - 1, c + 1
            if len(du) == count:
                break
    return np.array(du, dtype=np.int64), np.array(dv, dtype=np.int64)


def _strong_labels(
    n_nodes: int, u: np.ndarray, v: np.ndarray, direction: np.ndarray
) -> tuple[int, np.ndarray]:
    """Strongly connected components of the drivable digraph (scipy).

    ``direction`` is 0 for two-way, 1 for one-way ``u → v``, -1 for ``v → u``.
    """
    fwd = direction >= 0
    bwd = direction <= 0
    tails = np.concatenate([u[fwd], v[bwd]])
    heads = np.concatenate([v[fwd], u[bwd]])
    adj = coo_matrix((np.ones(len(tails), dtype=np.int8), (tails, heads)), shape=(n_nodes,) * 2)
    return connected_components(adj.tocsr(), directed=True, connection="strong")


def _orient_one_way(
    rng: np.random.Generator,
    n_nodes: int,
    u: np.ndarray,
    v: np.ndarray,
    allowed: np.ndarray,
    share: float,
) -> np.ndarray:
    """Choose one-way streets and keep the drivable digraph strongly connected.

    Method: draw the missing number of one-way streets at random among the
    allowed two-way ones, each direction with probability 1/2; then, while the
    digraph has more than one strongly connected component, make every one-way
    street joining two different components two-way again (a street between
    components is necessarily one-way, so each round merges components).
    Repeat the draw up to eight times to make up the share.
    """
    m = len(u)
    direction = np.zeros(m, dtype=np.int8)
    target = round(share * m)
    if target == 0:
        return direction
    tried = ~allowed.copy()
    for _ in range(8):
        missing = target - int(np.count_nonzero(direction))
        pool = np.flatnonzero(~tried)
        if missing <= 0 or len(pool) == 0:
            break
        pick = rng.permutation(pool)[:missing]
        tried[pick] = True
        direction[pick] = np.where(rng.random(len(pick)) < 0.5, 1, -1)
        while True:
            n_comp, labels = _strong_labels(n_nodes, u, v, direction)
            if n_comp == 1:
                break
            across = (direction != 0) & (labels[u] != labels[v])
            direction[across] = 0
    return direction


def _assemble(
    name: str,
    xs: np.ndarray,
    ys: np.ndarray,
    u: np.ndarray,
    v: np.ndarray,
    *,
    direction: np.ndarray,
    optional: np.ndarray,
    lengths: np.ndarray | None,
) -> Network:
    """Make :class:`Node` and :class:`Segment` objects from the arrays.

    Segments are valid by construction (distinct end nodes, positive
    lengths), so they go straight into ``network.segments`` without the
    per-segment :func:`core.model.check_segment` call.
    """
    net = Network(name, crs=CRS)
    node_ids = [f"n{i}" for i in range(len(xs))]
    xl, yl = xs.tolist(), ys.tolist()
    net.nodes = {nid: Node(nid, x, y) for nid, x, y in zip(node_ids, xl, yl, strict=True)}
    ways = {0: OneWay.NO, 1: OneWay.FORWARD, -1: OneWay.BACKWARD}
    segments: dict[str, Segment] = {}
    length_list = lengths.tolist() if lengths is not None else [math.nan] * len(u)
    for k, (a, b, d, opt, length) in enumerate(
        zip(
            u.tolist(),
            v.tolist(),
            direction.tolist(),
            optional.tolist(),
            length_list,
            strict=True,
        )
    ):
        sid = f"s{k}"
        segments[sid] = Segment(
            sid,
            node_ids[a],
            node_ids[b],
            length,
            ((xl[a], yl[a]), (xl[b], yl[b])),
            oneway=ways[d],
            service=Service.NONE if opt else Service.EITHER,
        )
    net.segments = segments
    cx, cy = (xs.min() + xs.max()) / 2.0, (ys.min() + ys.max()) / 2.0
    net.depot = node_ids[int(np.argmin(np.hypot(xs - cx, ys - cy)))]
    return net
