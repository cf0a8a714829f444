"""The import report: what a street file brought in, and what to check.

After a file is read (GeoPackage, OpenStreetMap, GeoJSON...), the supervisor
sees a short report: how many street segments, kilometres by road class,
one-way segments, dead ends, and whether the network falls apart into
disconnected pieces.  A network in several pieces cannot be driven as one
circuit; :func:`keep_largest_piece` keeps the biggest one, and
:attr:`ImportReport.other_piece_segments` lists the segment ids of the others
so the window can show them.

Features the reader skipped (``on_error="skip"``) are listed too: readers
record them in ``network.meta[SKIPPED_KEY]`` as ``{"feature": index, "id":
..., "reason": ...}``.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from core.errors import InputError
from core.model import Network, OneWay

ON_ERROR_CHOICES: tuple[str, ...] = ("reject", "skip")
"""What a reader does with a broken feature: refuse the whole file naming the
feature (``"reject"``), or leave the feature out and list it (``"skip"``)."""

SKIPPED_KEY = "skipped_features"
"""The ``Network.meta`` key under which readers list the features they skipped."""

NO_CLASS = "(no class)"
"""The road-class label of segments without an ``attrs["road_class"]``."""

CONNECTIONS: tuple[str, ...] = ("weak", "strong")
"""How pieces are formed: ``"weak"`` ignores one-way rules (streets touching
are one piece), ``"strong"`` keeps together only places that can each be
driven to from the others, obeying one-way streets."""


def check_on_error(value: Any, source: str | None = None) -> str:
    """Return ``value`` if it is one of :data:`ON_ERROR_CHOICES`, else raise
    :class:`InputError` listing them."""
    if value not in ON_ERROR_CHOICES:
        raise InputError(
            f"on_error must be one of {', '.join(map(repr, ON_ERROR_CHOICES))}, not {value!r}",
            source=source,
        )
    return str(value)


@dataclass(frozen=True, slots=True)
class Piece:
    """One connected piece of the network."""

    segments: tuple[str, ...]
    """Segment ids, in network order."""
    length_m: float


@dataclass(slots=True)
class ImportReport:
    """Figures of a freshly read network (see the module description)."""

    name: str
    segments: int
    nodes: int
    length_km: float
    km_by_class: dict[str, float]
    """Kilometres per ``attrs["road_class"]`` (:data:`NO_CLASS` for none), longest first."""
    one_way_segments: int
    dead_ends: tuple[str, ...]
    """Node ids where exactly one street end meets (a loop counts twice)."""
    pieces: tuple[Piece, ...]
    """Connected pieces, largest (by segments, then length) first."""
    connection: str
    skipped: tuple[Mapping[str, Any], ...] = field(default_factory=tuple)

    @property
    def other_piece_segments(self) -> tuple[str, ...]:
        """Segment ids of every piece but the largest, for the window to show."""
        return tuple(s for piece in self.pieces[1:] for s in piece.segments)

    def text(self) -> str:
        """The report as lines of text for people."""
        return report_text(self)


def _check_connection(connection: str) -> None:
    if connection not in CONNECTIONS:
        raise InputError(
            f"connection must be one of {', '.join(map(repr, CONNECTIONS))}, not {connection!r}"
        )


def piece_labels(network: Network, connection: str = "weak") -> tuple[list[str], np.ndarray]:
    """Label every node with its connected piece.

    Uses SciPy's ``connected_components`` (Pearce 2005 for strong
    components): O(V + E).  With ``connection="strong"`` a two-way segment
    joins its ends both ways and a one-way segment only in its direction.

    Returns the node ids and, per node, the piece label.
    """
    _check_connection(connection)
    ids = list(network.nodes)
    index = {n: i for i, n in enumerate(ids)}
    rows: list[int] = []
    cols: list[int] = []
    for seg in network:
        a, b = index[seg.start], index[seg.end]
        if seg.oneway is OneWay.BACKWARD:
            a, b = b, a
        rows.append(a)
        cols.append(b)
        if seg.oneway is OneWay.NO:
            rows.append(b)
            cols.append(a)
    n = len(ids)
    graph = sp.csr_matrix((np.ones(len(rows)), (rows, cols)), shape=(n, n))
    _, labels = connected_components(graph, directed=True, connection=connection)
    return ids, labels


def _pieces(network: Network, connection: str) -> tuple[Piece, ...]:
    ids, labels = piece_labels(network, connection)
    label_of = dict(zip(ids, labels.tolist(), strict=True))
    members: dict[int, list[str]] = defaultdict(list)
    lengths: dict[int, float] = defaultdict(float)
    for seg in network:
        a, b = label_of[seg.start], label_of[seg.end]
        if a != b:
            continue  # a one-way link between strong pieces belongs to neither
        members[a].append(seg.id)
        lengths[a] += seg.length
    pieces = [Piece(tuple(m), lengths[k]) for k, m in members.items()]
    pieces.sort(key=lambda p: (-len(p.segments), -p.length_m, p.segments[0]))
    return tuple(pieces)


def import_report(network: Network, *, connection: str = "weak") -> ImportReport:
    """Count what a network holds: O(V + E).

    Parameters
    ----------
    network
        The network, not modified.
    connection
        One of :data:`CONNECTIONS`.
    """
    _check_connection(connection)
    by_class: dict[str, float] = defaultdict(float)
    degree: dict[str, int] = dict.fromkeys(network.nodes, 0)
    for seg in network:
        road_class = seg.attrs.get("road_class")
        by_class[str(road_class) if road_class else NO_CLASS] += seg.length / 1000.0
        degree[seg.start] += 1
        degree[seg.end] += 1
    skipped = network.meta.get(SKIPPED_KEY) or ()
    return ImportReport(
        name=network.name,
        segments=len(network.segments),
        nodes=len(network.nodes),
        length_km=sum(s.length for s in network) / 1000.0,
        km_by_class=dict(sorted(by_class.items(), key=lambda kv: (-kv[1], kv[0]))),
        one_way_segments=sum(1 for s in network if s.oneway is not OneWay.NO),
        dead_ends=tuple(n for n, d in degree.items() if d == 1),
        pieces=_pieces(network, connection) if network.segments else (),
        connection=connection,
        skipped=tuple(skipped) if isinstance(skipped, Iterable) else (),
    )


def report_text(report: ImportReport, *, limit: int = 8) -> str:
    """The report as text; at most ``limit`` pieces and skipped features are listed."""
    lines = [
        f"{report.name or 'Network'}: {report.segments} street segments, "
        f"{report.nodes} nodes, {report.length_km:.2f} km",
        f"  one-way segments  {report.one_way_segments}",
        f"  dead ends         {len(report.dead_ends)}",
        "  kilometres by road class:",
    ]
    lines += [f"    {name:<16} {km:9.2f} km" for name, km in report.km_by_class.items()]
    kind = "pieces" if report.connection == "weak" else "pieces (one-way rules obeyed)"
    sizes = [len(p.segments) for p in report.pieces]
    if len(sizes) <= 1:
        lines.append(f"  connected {kind}: {len(sizes)}")
    else:
        shown = ", ".join(str(s) for s in sizes[:limit])
        more = f" and {len(sizes) - limit} more" if len(sizes) > limit else ""
        lines.append(
            f"  connected {kind}: {len(sizes)} (segments each: {shown}{more}); "
            "keep only the largest, or join the others before planning"
        )
    if report.skipped:
        lines.append(f"  skipped features: {len(report.skipped)}")
        for item in report.skipped[:limit]:
            lines.append(f"    feature {item.get('feature')}: {item.get('reason')}")
        if len(report.skipped) > limit:
            lines.append(f"    and {len(report.skipped) - limit} more")
    return "\n".join(lines)


def keep_largest_piece(network: Network, *, connection: str = "weak") -> Network:
    """A new network holding only the largest connected piece: O(V + E).

    With ``connection="strong"`` the piece is the largest set of places that
    can all be driven between obeying one-way streets, so a circuit can be
    planned over all of it.  The depot is kept if it is in the piece, else
    unset.  The input is not modified.
    """
    pieces = _pieces(network, connection)
    out = Network(network.name, network.crs)
    out.meta = dict(network.meta)
    if not pieces:
        return out
    keep = pieces[0].segments
    for sid in keep:
        seg = network.segments[sid]
        for end in (seg.start, seg.end):
            if end not in out.nodes:
                out.add_node(network.nodes[end])
        out.add_segment(seg)
    out.depot = network.depot if network.depot in out.nodes else None
    return out
