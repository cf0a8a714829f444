"""The solvers' view of a network: numbered nodes and drivable arcs in arrays.

Every solver in this package works on an :class:`ArcProblem`, compiled once
from a :class:`~core.model.Network`.  Node ids become ``0..n-1``; each
segment ``i`` has ``tail[i]``/``head[i]`` (its start and end node), a length,
whether it is one-way, and the service passes it needs forward
(start→end), backward and in either direction.  Drivable arcs are listed
separately: a two-way segment gives two arcs, a one-way segment one.

Compiling is O(n + m); nothing in the network is changed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from core.errors import DepotError
from core.model import Network, OneWay


@dataclass(frozen=True)
class ArcProblem:
    node_ids: list[str]
    seg_ids: list[str]
    tail: np.ndarray  # int64 per segment: start node index
    head: np.ndarray  # int64 per segment: end node index
    length: np.ndarray  # float64 per segment
    oneway: np.ndarray  # int8 per segment: 0 two-way, 1 forward only, -1 backward only
    need_fwd: np.ndarray  # int64 per segment: passes start→end that must service
    need_bwd: np.ndarray  # int64 per segment: passes end→start that must service
    need_any: np.ndarray  # int64 per segment: passes either way that must service
    depot: int
    # drivable arcs
    arc_seg: np.ndarray  # segment index of each arc
    arc_dir: np.ndarray  # +1 start→end, -1 end→start
    arc_from: np.ndarray
    arc_to: np.ndarray

    @property
    def n_nodes(self) -> int:
        return len(self.node_ids)

    @property
    def n_segments(self) -> int:
        return len(self.seg_ids)

    @property
    def arc_cost(self) -> np.ndarray:
        return self.length[self.arc_seg]

    @property
    def required(self) -> np.ndarray:
        """Boolean mask of segments that need any service."""
        return (self.need_fwd + self.need_bwd + self.need_any) > 0

    @property
    def service_length(self) -> float:
        passes = self.need_fwd + self.need_bwd + self.need_any
        return float(np.dot(passes, self.length))

    def segment_arcs(self) -> tuple[np.ndarray, np.ndarray]:
        """Per segment, the index of its forward and its backward arc (-1 where the
        segment cannot be driven that way).  O(m)."""
        fwd = np.full(self.n_segments, -1, dtype=np.int64)
        bwd = np.full(self.n_segments, -1, dtype=np.int64)
        k = np.arange(len(self.arc_seg))
        fwd[self.arc_seg[self.arc_dir > 0]] = k[self.arc_dir > 0]
        bwd[self.arc_seg[self.arc_dir < 0]] = k[self.arc_dir < 0]
        return fwd, bwd

    def non_loop_arcs(self) -> np.ndarray:
        """Indices of the arcs between two different nodes (the ones balancing uses)."""
        return np.nonzero(self.arc_from != self.arc_to)[0]

    def fixed_lower(self) -> np.ndarray:
        """Per arc, the service passes whose direction is fixed; 0 on loops, whose
        passes need no balancing."""
        seg = self.arc_seg
        lower = np.where(self.arc_dir > 0, self.need_fwd[seg], self.need_bwd[seg])
        return np.where(self.arc_from != self.arc_to, lower, 0).astype(np.int64)

    def service_degree(self) -> np.ndarray:
        """Per node, the service passes that start or end there (loops aside, as they
        add two and never change parity)."""
        passes = np.where(self.tail != self.head, self.need_fwd + self.need_bwd + self.need_any, 0)
        deg = np.bincount(self.tail, weights=passes, minlength=self.n_nodes) + np.bincount(
            self.head, weights=passes, minlength=self.n_nodes
        )
        return deg.astype(np.int64)

    def kind(self) -> str:
        """``"undirected"``, ``"directed"`` or ``"mixed"``: which exact method fits.

        Undirected when no street is one-way (then passes in each direction
        of a two-way street keep every node balanced and parity is all that
        matters); directed when no pass may choose its direction; mixed
        otherwise.
        """
        if not np.any(self.oneway):
            return "undirected"
        if not np.any(self.need_any > 0):
            return "directed"
        return "mixed"


def compile_network(network: Network, depot: str | None = None) -> ArcProblem:
    """Number the network's nodes and list its arcs.  O(n + m).

    Raises
    ------
    DepotError
        If no depot is given or set on the network, or it is not a node.
    """
    depot_id = depot if depot is not None else network.depot
    if depot_id is None:
        raise DepotError(
            "no depot is set: give one with --depot NODE or x,y, or mark it in the file"
        )
    if depot_id not in network.nodes:
        raise DepotError(f"the depot {depot_id!r} is not a node of this network", nodes=[depot_id])
    node_ids = list(network.nodes)
    index = {nid: k for k, nid in enumerate(node_ids)}
    segs = list(network.segments.values())
    m = len(segs)
    tail = np.fromiter((index[s.start] for s in segs), dtype=np.int64, count=m)
    head = np.fromiter((index[s.end] for s in segs), dtype=np.int64, count=m)
    length = np.fromiter((s.length for s in segs), dtype=np.float64, count=m)
    ow_code = {OneWay.NO: 0, OneWay.FORWARD: 1, OneWay.BACKWARD: -1}
    oneway = np.fromiter((ow_code[s.oneway] for s in segs), dtype=np.int8, count=m)
    needs = np.array([s.required_passes() for s in segs], dtype=np.int64).reshape(m, 3)
    # Arcs: forward for two-way and forward one-way; backward for two-way and backward one-way.
    seg_idx = np.arange(m, dtype=np.int64)
    fwd = oneway >= 0
    bwd = oneway <= 0
    arc_seg = np.concatenate([seg_idx[fwd], seg_idx[bwd]])
    arc_dir = np.concatenate(
        [np.ones(int(fwd.sum()), dtype=np.int8), -np.ones(int(bwd.sum()), dtype=np.int8)]
    )
    arc_from = np.where(arc_dir > 0, tail[arc_seg], head[arc_seg])
    arc_to = np.where(arc_dir > 0, head[arc_seg], tail[arc_seg])
    return ArcProblem(
        node_ids=node_ids,
        seg_ids=[s.id for s in segs],
        tail=tail,
        head=head,
        length=length,
        oneway=oneway,
        need_fwd=needs[:, 0].copy(),
        need_bwd=needs[:, 1].copy(),
        need_any=needs[:, 2].copy(),
        depot=index[depot_id],
        arc_seg=arc_seg,
        arc_dir=arc_dir,
        arc_from=arc_from,
        arc_to=arc_to,
    )
