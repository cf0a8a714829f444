"""District boundaries: cut a street network out along a polygon.

A supervisor's district is a polygon (drawn on the canvas, or read from a
GeoJSON or GeoPackage polygon file).  :func:`clip_to_boundary` returns a new
network holding

* every street inside the polygon, as it was (service unchanged);
* streets that cross the boundary, cut where they cross it (a new node at
  each crossing): their inside parts keep their service;
* outside parts that *connect the district*: a part is kept, as deadhead
  only (``Service.NONE``), when it lies on a shortest drivable path (obeying
  one-way streets) that runs wholly outside from one place where the
  district's streets meet the outside ones (an *attachment*: a crossing of
  the boundary, or a node on it) to another.  Such paths are the short cuts
  a vehicle may take between two parts of its district; everything else
  outside (spurs leading away, the rest of the town) is dropped.
  ``max_outside_m`` bounds the length of such a path.

The input network is never modified.  Lengths given in the file (rather than
measured) and demands are shared among the parts of a cut street in
proportion to their drawn lengths.
"""

from __future__ import annotations

import itertools
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import scipy.sparse as sp
import shapely
import shapely.ops
from scipy.sparse.csgraph import dijkstra
from shapely.geometry import LineString, MultiPolygon, Polygon, shape

from core import geo
from core.errors import InputError
from core.files._jsonio import load_json, read_text, source_label
from core.model import Network, Node, OneWay, Segment, Service

OUTSIDE_CHOICES: tuple[str, ...] = ("connecting", "drop")
"""What happens to street parts outside the district: keep those that connect
it as deadhead (``"connecting"``), or drop them all (``"drop"``)."""

_EPS = 1e-9


@dataclass(frozen=True, slots=True)
class ClipSummary:
    """What clipping did, with ids for the window to show."""

    inside: tuple[str, ...]
    """Segment ids (in the new network) inside the district, service unchanged."""
    outside_kept: tuple[str, ...]
    """Segment ids (in the new network) outside, kept as deadhead only."""
    cut: tuple[str, ...]
    """Ids of the original streets that crossed the boundary and were cut."""
    dropped: tuple[str, ...]
    """Ids of the original streets of which nothing was kept."""
    boundary_nodes: tuple[str, ...]
    """The new nodes where the boundary cuts streets."""
    depot_dropped: bool
    """The network had a depot outside what was kept (the new one has none)."""


@dataclass(slots=True)
class ClipResult:
    network: Network
    summary: ClipSummary


Polygonal = Polygon | MultiPolygon


def boundary_polygon(boundary: Any) -> Polygonal:
    """A valid polygon from a shapely geometry or a ring of ``(x, y)`` points.

    Self-crossing rings are repaired with ``shapely.make_valid`` (GEOS's
    structure-preserving repair) and their polygonal parts kept.

    Raises
    ------
    InputError
        Fewer than three distinct points, or no area.
    """
    if isinstance(boundary, shapely.Geometry):
        geom = boundary
    else:
        try:
            points = [(float(x), float(y)) for x, y in boundary]
        except (TypeError, ValueError):
            raise InputError("a district boundary is a list of (x, y) points") from None
        if len(set(points)) < 3 or not np.isfinite(points).all():
            raise InputError(
                "a district boundary needs at least three distinct points with finite coordinates"
            )
        geom = Polygon(points)
    if not geom.is_valid:
        geom = shapely.make_valid(geom)
    parts = [g for g in getattr(geom, "geoms", [geom]) if isinstance(g, Polygon | MultiPolygon)]
    area = shapely.union_all(parts) if parts else Polygon()
    if area.is_empty or area.area <= 0 or not isinstance(area, Polygon | MultiPolygon):
        raise InputError("the district boundary encloses no area")
    return area


def read_boundary(path: str | os.PathLike[str], crs: str, *, layer: str | None = None) -> Polygonal:
    """Read a district polygon from a GeoJSON or GeoPackage file, in ``crs``.

    GeoJSON (RFC 7946) Polygon/MultiPolygon geometries, Features or a
    FeatureCollection are longitude/latitude unless a ``"crs"`` member names
    another CRS; a GeoPackage polygon layer carries its CRS.  All polygons
    are joined into one area and projected to ``crs`` (the network's) with
    pyproj.
    """
    from core.files.gpkg import sniff_gpkg

    source = source_label(path)
    try:
        with open(path, "rb") as handle:
            head = handle.read(100)
    except OSError as exc:
        raise InputError(f"the boundary file cannot be read: {exc}", source=source) from None
    if sniff_gpkg(head):
        polygons, from_crs = _gpkg_polygons(path, layer, source)
    else:
        polygons, from_crs = _geojson_polygons(read_text(path), source)
    return _placed(polygons, from_crs, crs, source)


def boundary_from_json(text: str, crs: str, *, source: str = "boundary") -> Polygonal:
    """A boundary polygon from GeoJSON text, in ``crs`` (as :func:`read_boundary`)."""
    return _placed(*_geojson_polygons(text, source), crs, source)


def _placed(polygons: list[Any], from_crs: str | None, crs: str, source: str) -> Polygonal:
    """Join the polygons and project them from ``from_crs`` (``None``:
    longitude/latitude) to ``crs`` with pyproj."""
    if not polygons:
        raise InputError("the file holds no Polygon or MultiPolygon", source=source)
    area = shapely.union_all(polygons)
    if from_crs is None or geo.crs_code(from_crs) != geo.crs_code(crs):
        to_lonlat = geo.to_lonlat(from_crs) if from_crs is not None else None
        to_net = geo.from_lonlat(crs)

        def move(xy: np.ndarray) -> np.ndarray:
            x, y = xy[:, 0], xy[:, 1]
            if to_lonlat is not None:
                x, y = to_lonlat.transform(x, y)
            return np.column_stack(to_net.transform(x, y))

        area = shapely.transform(area, move)
    if not np.isfinite(shapely.get_coordinates(area)).all():
        raise InputError("the boundary cannot be placed in the network's CRS", source=source)
    try:
        return boundary_polygon(area)
    except InputError as exc:
        raise InputError(exc.message, source=source) from None


def _geojson_polygons(text: str, source: str) -> tuple[list[Any], str | None]:
    from core.files.geojson import _declared_crs

    doc = load_json(text, source=source)
    if not isinstance(doc, dict):
        raise InputError("a boundary file must hold a GeoJSON object", source=source)
    crs = _declared_crs(doc, source)
    if doc.get("type") == "FeatureCollection":
        items = doc.get("features")
        geometries = [f.get("geometry") for f in items or [] if isinstance(f, dict)]
    elif doc.get("type") == "Feature":
        geometries = [doc.get("geometry")]
    else:
        geometries = [doc]
    polygons = []
    for k, g in enumerate(geometries):
        if not isinstance(g, dict) or g.get("type") not in ("Polygon", "MultiPolygon"):
            continue
        try:
            polygons.append(shape(g))
        except Exception as exc:  # shapely reports broken coordinates in several types
            raise InputError(
                f"the polygon cannot be read: {exc} (RFC 7946 section 3.1.6)",
                source=source,
                feature=k,
            ) from None
    return polygons, crs


def _gpkg_polygons(
    path: str | os.PathLike[str], layer: str | None, source: str
) -> tuple[list[Any], str | None]:
    import pyogrio

    from core.files.gpkg import _ogr, line_layers

    layers = line_layers(path)
    areas = [n for n, t in layers if "Polygon" in t]
    if layer is None:
        if len(areas) != 1:
            raise InputError(
                f"choose the boundary layer among the polygon layers: {', '.join(areas) or 'none'}",
                source=source,
            )
        layer = areas[0]
    elif layer not in areas:
        raise InputError(
            f"{layer!r} is not a polygon layer; the polygon layers are: "
            f"{', '.join(areas) or 'none'}",
            source=source,
        )
    meta, _, wkb, _ = _ogr(
        lambda: pyogrio.raw.read(os.fspath(path), layer=layer, columns=[]),
        source,
        "cannot read the boundary layer",
    )
    geoms = [g for g in shapely.from_wkb(wkb, on_invalid="ignore") if g is not None]
    if not meta.get("crs"):
        raise InputError(f"layer {layer!r} has no coordinate reference system", source=source)
    return [g for g in geoms if isinstance(g, Polygon | MultiPolygon)], meta["crs"]


# -- clipping -----------------------------------------------------------------


def _line(network: Network, seg: Segment) -> LineString:
    if seg.geometry is not None:
        return LineString(seg.geometry)
    a, b = network.nodes[seg.start], network.nodes[seg.end]
    return LineString([(a.x, a.y), (b.x, b.y)])


def _intervals(line: LineString, area: Any, edge: Any) -> list[tuple[float, float, bool]]:
    """The stretches ``(from, to, inside)`` of ``line`` (distances along it),
    cut where the inside/outside state changes."""
    hits = line.intersection(edge)
    marks = {0.0, line.length}
    for p in shapely.get_coordinates(hits):
        marks.add(float(line.project(shapely.Point(p))))
    cuts = sorted(marks)
    out: list[tuple[float, float, bool]] = []
    for a, b in itertools.pairwise(cuts):
        if b - a <= _EPS:
            continue
        inside = bool(area.covers(line.interpolate((a + b) / 2.0)))
        if out and out[-1][2] == inside:
            out[-1] = (out[-1][0], b, inside)
        else:
            out.append((a, b, inside))
    return out


def clip_to_boundary(
    network: Network,
    boundary: Any,
    *,
    outside: str = "connecting",
    max_outside_m: float | None = None,
) -> ClipResult:
    """Cut a network out along a district boundary.

    Parameters
    ----------
    network
        The network (not modified); it needs node coordinates.
    boundary
        A shapely (Multi)Polygon or a ring of ``(x, y)`` points, in the
        network's coordinates.
    outside
        One of :data:`OUTSIDE_CHOICES`.
    max_outside_m
        Longest outside connecting path kept (metres); ``None`` for no limit.

    Notes
    -----
    Cutting uses GEOS (shapely) intersections and ``substring``: O(E log E).
    Connecting parts are found with one Dijkstra search (Dijkstra 1959,
    SciPy) from each of the k attachments over the outside part of the
    network: O(k (E + V log V)).
    """
    if outside not in OUTSIDE_CHOICES:
        raise InputError(
            f"outside must be one of {', '.join(map(repr, OUTSIDE_CHOICES))}, not {outside!r}"
        )
    if max_outside_m is not None and not (
        isinstance(max_outside_m, int | float) and max_outside_m >= 0
    ):
        raise InputError(f"max_outside_m must be metres of at least 0, not {max_outside_m!r}")
    if not network.has_coordinates:
        raise InputError("this network has no coordinates, so it cannot be cut along a boundary")
    area = boundary_polygon(boundary)
    shapely.prepare(area)
    edge = area.boundary

    out = Network(network.name, network.crs)
    out.meta = dict(network.meta)
    node_ids = set(network.nodes)
    seg_ids = set(network.segments)
    counter = {"node": 0}

    def new_node(x: float, y: float) -> Node:
        while True:
            counter["node"] += 1
            nid = f"b{counter['node']}"
            if nid not in node_ids:
                node_ids.add(nid)
                return Node(nid, x, y)

    inside_segs: list[Segment] = []
    outside_segs: list[Segment] = []
    cut: list[str] = []
    boundary_nodes: list[str] = []
    nodes: dict[str, Node] = dict(network.nodes)
    for seg in network:
        line = _line(network, seg)
        if area.covers(line):
            inside_segs.append(seg)
            continue
        if not area.intersects(line):
            outside_segs.append(seg)
            continue
        stretches = _intervals(line, area, edge)
        if len(stretches) == 1:
            (inside_segs if stretches[0][2] else outside_segs).append(seg)
            continue
        cut.append(seg.id)
        ends = [seg.start]
        for _a, b, _inside in stretches[:-1]:
            p = line.interpolate(b)
            node = new_node(p.x, p.y)
            nodes[node.id] = node
            boundary_nodes.append(node.id)
            ends.append(node.id)
        ends.append(seg.end)
        for k, (a, b, inside) in enumerate(stretches, 1):
            piece = _piece(seg, line, a, b, ends[k - 1], ends[k], nodes, k, seg_ids)
            (inside_segs if inside else outside_segs).append(piece)

    kept_outside: list[Segment] = []
    if outside == "connecting" and outside_segs:
        touched = {e for s in inside_segs for e in (s.start, s.end)}
        kept_outside = _connecting(outside_segs, touched, max_outside_m)

    for seg in inside_segs + kept_outside:
        for end in (seg.start, seg.end):
            if end not in out.nodes:
                out.add_node(nodes[end])
    for seg in inside_segs:
        out.add_segment(seg)
    outside_ids = []
    for seg in kept_outside:
        out.add_segment(replace(seg, service=Service.NONE))
        outside_ids.append(seg.id)

    kept_from = {_origin(s.id, network) for s in out}
    dropped = tuple(s for s in network.segments if s not in kept_from)
    depot_dropped = network.depot is not None and network.depot not in out.nodes
    out.depot = None if depot_dropped else network.depot
    summary = ClipSummary(
        inside=tuple(s.id for s in inside_segs),
        outside_kept=tuple(outside_ids),
        cut=tuple(cut),
        dropped=dropped,
        boundary_nodes=tuple(n for n in boundary_nodes if n in out.nodes),
        depot_dropped=depot_dropped,
    )
    out.meta["clip"] = {
        "inside": len(summary.inside),
        "outside_kept": len(summary.outside_kept),
        "cut": len(summary.cut),
        "dropped": len(summary.dropped),
    }
    return ClipResult(out, summary)


_ORIGIN_SEP = "/"


def _origin(seg_id: str, network: Network) -> str:
    if seg_id in network.segments:
        return seg_id
    return seg_id.rsplit(_ORIGIN_SEP, 1)[0]


def _piece(
    seg: Segment,
    line: LineString,
    a: float,
    b: float,
    start: str,
    end: str,
    nodes: dict[str, Node],
    k: int,
    seg_ids: set[str],
) -> Segment:
    """The part of ``seg`` from distance ``a`` to ``b``, as a new segment."""
    part = shapely.ops.substring(line, a, b)
    coords = [tuple(map(float, c)) for c in shapely.get_coordinates(part)]
    sa, sb = nodes[start], nodes[end]
    coords[0] = (float(sa.x), float(sa.y))  # type: ignore[arg-type]
    coords[-1] = (float(sb.x), float(sb.y))  # type: ignore[arg-type]
    share = (b - a) / line.length
    new_id = f"{seg.id}{_ORIGIN_SEP}{k}"
    while new_id in seg_ids:
        new_id += "'"
    seg_ids.add(new_id)
    return replace(
        seg,
        id=new_id,
        start=start,
        end=end,
        geometry=tuple(coords),  # type: ignore[arg-type]
        length=seg.length * share if seg.length_given else math.nan,
        length_given=seg.length_given,
        demand=seg.demand * share,
    )


def _connecting(
    segs: Sequence[Segment], touched: set[str], max_outside_m: float | None
) -> list[Segment]:
    """Outside segments on a shortest outside path between two attachments."""
    ids = sorted({e for s in segs for e in (s.start, s.end)})
    index = {n: i for i, n in enumerate(ids)}
    attach = [index[n] for n in ids if n in touched]
    if len(attach) < 2:
        return []
    best: dict[tuple[int, int], tuple[float, int]] = {}
    for k, s in enumerate(segs):
        a, b = index[s.start], index[s.end]
        arcs = []
        if s.oneway is not OneWay.BACKWARD:
            arcs.append((a, b))
        if s.oneway is not OneWay.FORWARD:
            arcs.append((b, a))
        for arc in arcs:
            if arc[0] != arc[1] and (arc not in best or s.length < best[arc][0]):
                best[arc] = (s.length, k)
    n = len(ids)
    rows = [u for u, _ in best]
    cols = [v for _, v in best]
    weights = [max(w, _EPS) for w, _ in best.values()]
    graph = sp.csr_matrix((weights, (rows, cols)), shape=(n, n))
    limit = np.inf if max_outside_m is None else float(max_outside_m)
    dist, pred = dijkstra(
        graph, directed=True, indices=attach, return_predecessors=True, limit=limit
    )
    keep: set[int] = set()
    for row, source in enumerate(attach):
        for target in attach:
            if target == source or not np.isfinite(dist[row, target]):
                continue
            v = target
            while v != source:
                u = int(pred[row, v])
                keep.add(best[(u, v)][1])
                v = u
    return [s for k, s in enumerate(segs) if k in keep]


__all__ = [
    "OUTSIDE_CHOICES",
    "ClipResult",
    "ClipSummary",
    "boundary_from_json",
    "boundary_polygon",
    "clip_to_boundary",
    "read_boundary",
]
