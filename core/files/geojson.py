"""GeoJSON street networks (RFC 7946), in and out.

Reading
-------
A FeatureCollection (or a single Feature) of LineString and MultiLineString
features (RFC 7946 sections 3.1.4 and 3.1.6; every part of a MultiLineString
is a line of its own) becomes a :class:`~core.model.Network`:

* Positions are longitude, latitude on WGS 84 (RFC 7946 section 4).  They are
  projected to the UTM zone of the centre of all line positions, and
  ``network.crs`` names that zone (``"EPSG:326zz"``).  A document carrying a
  ``"crs"`` member of the 2008 GeoJSON specification naming a projected CRS
  in metres is read as metres in that CRS instead; any other named CRS is
  transformed to longitude/latitude first.
* Nodes are made at both ends of every line and at every interior vertex
  shared, within ``snap_tolerance`` metres, with a vertex of another line or
  of the same line elsewhere.  Lines that cross without a shared vertex
  (bridges, underpasses) are not joined.  Lines are split at their nodes; the
  ends of each piece are moved onto the node position.
* Properties: ``name``, ``oneway``, ``service``, ``passes``, ``length_m``
  (overrides the measured length) and ``demand``; everything else is kept in
  :attr:`Segment.attrs`.  Segment ids are the feature's ``id`` (the member of
  RFC 7946 section 3.2, else ``properties.id``) or ``f<index>``, with ``.1``,
  ``.2``... when the feature is split into several pieces.
* Point features with ``"depot": true`` (or ``"role": "depot"``) place the
  depot, and with ``"turning_place": true`` mark nodes where a U-turn is
  allowed; each snaps to the nearest node.

Every problem is an :class:`~core.errors.InputError` naming the file and the
0-based feature index.

Writing
-------
:func:`network_to_geojson` / :func:`write_geojson` produce a FeatureCollection
in longitude/latitude (7 decimals, about 1 cm) with one LineString per
segment, a Point for the depot and one for each turning place.
"""

from __future__ import annotations

import itertools
import json
import math
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyproj
import shapely

from core import geo
from core.errors import InputError, NetworkError
from core.files._jsonio import (
    NONFINITE_HINT,
    Fail,
    dump_records,
    find_nonfinite,
    is_number,
    load_json,
    read_text,
    source_label,
)
from core.files.atomic import atomic_write_text
from core.model import (
    Network,
    Node,
    OneWay,
    Segment,
    Service,
    parse_oneway,
    parse_service,
    polyline_length,
)
from core.report import SKIPPED_KEY, check_on_error

DEFAULT_SNAP_TOLERANCE = 0.5
"""Metres within which vertices of different lines are taken to be one junction."""

MAX_SCALE_ERROR = 0.01
"""Largest distance distortion (1 %) accepted from a declared projected CRS."""

DECIMALS = 7
"""Decimal places of written longitudes/latitudes by default.  1e-7 degree is
1.1 cm of latitude, so each written position is within 0.7 cm of the
network's; RFC 7946 section 11.2 suggests 6 places (about 10 cm) where file
size matters more than precision."""

STREET_KEYS = ("id", "name", "oneway", "service", "passes", "length_m", "demand")
"""Properties with a meaning to Roundsman; all others go to ``Segment.attrs``."""

_LINE_TYPES = ("LineString", "MultiLineString")


# -- reading ------------------------------------------------------------------


@dataclass(slots=True)
class _Street:
    """The parsed properties of one line feature."""

    feature: int
    base_id: str
    name: str
    oneway: OneWay
    service: Service
    passes: int
    length_m: float | None
    demand: float | None
    attrs: dict[str, Any]
    parts: list[list[tuple[float, float]]] = field(default_factory=list)


@dataclass(slots=True)
class _Marker:
    """A depot or turning-place Point feature."""

    feature: int
    position: tuple[float, float]
    depot: bool
    turning_place: bool


def read_geojson(
    path: str | os.PathLike[str],
    *,
    snap_tolerance: float = DEFAULT_SNAP_TOLERANCE,
    on_error: str = "reject",
) -> Network:
    """Read a GeoJSON file (RFC 7946) as a street network.

    Parameters
    ----------
    path
        The file; UTF-8 JSON.
    snap_tolerance
        Metres within which vertices are taken to be the same junction.
    on_error
        ``"reject"``: a broken feature stops the reading; ``"skip"``: it is left
        out and listed in ``network.meta["skipped_features"]``.

    Raises
    ------
    InputError
        Naming the file, the feature index and what is wrong.
    """
    return parse_geojson(
        read_text(path),
        source=source_label(path),
        snap_tolerance=snap_tolerance,
        name=Path(path).stem,
        on_error=on_error,
    )


def parse_geojson(
    data: str | Mapping[str, Any],
    *,
    source: str | None = None,
    snap_tolerance: float = DEFAULT_SNAP_TOLERANCE,
    name: str | None = None,
    on_error: str = "reject",
) -> Network:
    """Build a network from GeoJSON text or an already parsed document.

    ``source`` labels error messages (a file name); ``name`` is the network
    name when the document has no ``"name"`` member.  ``on_error="skip"``
    leaves out features that are broken in themselves (bad geometry or
    properties, a repeated id) and lists them in
    ``network.meta["skipped_features"]``; ``"reject"`` (the default) stops at
    the first.  The document is not modified.  See the module description for
    the rules.
    """
    check_on_error(on_error, source)
    if not (is_number(snap_tolerance) and math.isfinite(snap_tolerance) and snap_tolerance >= 0):
        raise InputError(
            f"the snapping tolerance must be a number of metres of at least 0, "
            f"not {snap_tolerance!r}",
            source=source,
        )
    doc = load_json(data, source=source) if isinstance(data, str) else data
    features = _features(doc, source)
    declared_crs = _declared_crs(doc, source)

    streets: list[_Street] = []
    markers: list[_Marker] = []
    seen_ids: dict[str, int] = {}
    skipped: list[dict[str, Any]] = []
    for index, feature in enumerate(features):
        try:
            item = _read_feature(feature, index, source)
            if isinstance(item, _Street) and item.base_id in seen_ids:
                raise InputError(
                    f"{_street_words(item)}the id {item.base_id!r} is also used by feature "
                    f"{seen_ids[item.base_id]}; street ids must be unique",
                    source=source,
                    feature=index,
                )
        except InputError as exc:
            if on_error == "reject":
                raise
            skipped.append({"feature": index, "id": _feature_id(feature), "reason": exc.message})
            continue
        if isinstance(item, _Marker):
            markers.append(item)
            continue
        seen_ids[item.base_id] = index
        streets.append(item)
    if not streets:
        raise InputError(
            "there are no LineString or MultiLineString features, so there are no streets "
            "(a street network needs at least one line, RFC 7946 sections 3.1.4 and 3.1.6)",
            source=source,
        )

    xy, crs, marker_xy = _project(streets, markers, declared_crs, source)
    doc_name = doc.get("name") if isinstance(doc, Mapping) else None
    network = Network(doc_name if isinstance(doc_name, str) and doc_name else (name or ""), crs)
    _build(network, streets, xy, snap_tolerance, source)
    _place_markers(network, markers, marker_xy, source)
    if skipped:
        network.meta[SKIPPED_KEY] = skipped
    return network


def _feature_id(feature: Any) -> str:
    """The feature's own ``id`` for the list of skipped features, or ``""``."""
    fid = feature.get("id") if isinstance(feature, Mapping) else None
    return str(fid) if isinstance(fid, str | int) and not isinstance(fid, bool) else ""


def _features(doc: Any, source: str | None) -> Sequence[Any]:
    if not isinstance(doc, Mapping):
        raise InputError(
            'a GeoJSON file must hold a JSON object with "type": "FeatureCollection" '
            'or "Feature" (RFC 7946 section 3)',
            source=source,
        )
    kind = doc.get("type")
    if kind == "FeatureCollection":
        features = doc.get("features")
        if not isinstance(features, list):
            raise InputError(
                'the FeatureCollection has no "features" array (RFC 7946 section 3.3)',
                source=source,
            )
        return features
    if kind == "Feature":
        return [doc]
    raise InputError(
        f"the GeoJSON object has type {kind!r}; Roundsman reads a FeatureCollection "
        "or a single Feature (RFC 7946 section 3)",
        source=source,
    )


def _declared_crs(doc: Mapping[str, Any], source: str | None) -> str | None:
    """The CRS named by an old-style ``"crs"`` member (GeoJSON 2008, section 3.1),
    or ``None`` for RFC 7946 longitude/latitude."""
    member = doc.get("crs")
    if member is None:
        return None
    props = member.get("properties") if isinstance(member, Mapping) else None
    crs_name = props.get("name") if isinstance(props, Mapping) else None
    if not (isinstance(member, Mapping) and member.get("type") == "name" and crs_name):
        raise InputError(
            'the "crs" member must be {"type": "name", "properties": {"name": ...}} '
            "(GeoJSON 2008 specification, section 3.1); linked CRS definitions are not "
            "read. Remove the member if the coordinates are longitude/latitude",
            source=source,
        )
    if not isinstance(crs_name, str):
        raise InputError(f'the "crs" name {crs_name!r} is not text', source=source)
    check_earth_crs(crs_name, source)
    return crs_name


def check_earth_crs(crs: str, source: str | None) -> None:
    """Refuse a CRS that pyproj does not know, or that is not a geographic or
    projected CRS convertible to WGS 84 (an engineering, geocentric or other
    planet's CRS cannot place streets on the map)."""
    try:
        parsed = pyproj.CRS.from_user_input(crs)
    except pyproj.exceptions.CRSError as exc:
        raise InputError(
            f"the coordinate reference system {crs!r} is not known: {exc}", source=source
        ) from None
    if not (parsed.is_geographic or parsed.is_projected) or parsed.is_geocentric:
        raise InputError(
            f"the coordinate reference system {parsed.name!r} is neither longitude/latitude "
            "nor a map projection, so the streets cannot be placed on the map",
            source=source,
        )
    try:
        geo.to_lonlat(crs)
    except (InputError, pyproj.exceptions.ProjError) as exc:
        raise InputError(
            f"the coordinate reference system {parsed.name!r} cannot be converted to "
            f"WGS 84 longitude/latitude ({exc})",
            source=source,
        ) from None


def _street_words(street: _Street) -> str:
    return f"street {street.name!r}: " if street.name else ""


def _read_feature(feature: Any, index: int, source: str | None) -> _Street | _Marker:
    def fail(message: str) -> InputError:
        return InputError(message, source=source, feature=index)

    if not isinstance(feature, Mapping) or feature.get("type") != "Feature":
        raise fail("this is not a GeoJSON Feature object (RFC 7946 section 3.2)")
    props = feature.get("properties")
    if props is None:
        props = {}
    if not isinstance(props, Mapping):
        raise fail('"properties" must be a JSON object or null (RFC 7946 section 3.2)')
    bad = find_nonfinite(props)
    if bad is not None:
        raise fail(f"property {bad} is not a finite number; {NONFINITE_HINT}")
    geometry = feature.get("geometry")
    if geometry is None:
        raise fail("the feature has no geometry; streets need a LineString or MultiLineString")
    if not isinstance(geometry, Mapping):
        raise fail('"geometry" must be a JSON object (RFC 7946 section 3.1)')
    kind = geometry.get("type")
    coords = geometry.get("coordinates")

    if kind == "Point":
        position = _position(coords, "the point", fail)
        depot = _flag(props.get("depot")) or str(props.get("role", "")).lower() == "depot"
        turning = _flag(props.get("turning_place"))
        if not (depot or turning):
            raise fail(
                'a Point feature must mark the depot ("depot": true) or a turning place '
                '("turning_place": true); other points are not part of a street network'
            )
        return _Marker(index, position, depot, turning)

    if kind not in _LINE_TYPES:
        raise fail(
            f"geometry type {kind!r} is not read; streets are LineString or MultiLineString "
            "features (RFC 7946 sections 3.1.4 and 3.1.6) and the depot and turning places "
            "are Point features"
        )
    street = _street_properties(feature, props, index, source)
    words = _street_words(street)
    if kind == "LineString":
        raw_parts = [coords]
    else:
        if not isinstance(coords, list) or not coords:
            raise fail(
                f"{words}a MultiLineString needs an array of line coordinate arrays "
                "(RFC 7946 section 3.1.6)"
            )
        raw_parts = coords
    for k, raw in enumerate(raw_parts):
        what = "the line" if kind == "LineString" else f"line {k} of the MultiLineString"
        street.parts.append(_line(raw, what, words, fail))
    return street


def _flag(value: Any) -> bool:
    if isinstance(value, str):
        return value.strip().lower() in ("true", "yes", "1")
    return value is True or (is_number(value) and value == 1)


def _position(raw: Any, what: str, fail: Fail) -> tuple[float, float]:
    # RFC 7946 section 3.1.1: a position is an array of two or more numbers,
    # longitude first; a third (altitude) and further elements are ignored.
    if not (isinstance(raw, list) and len(raw) >= 2 and is_number(raw[0]) and is_number(raw[1])):
        raise fail(
            f"{what} has a position {_short(raw)} that is not an array of two numbers "
            "[longitude, latitude] (RFC 7946 section 3.1.1)"
        )
    x, y = float(raw[0]), float(raw[1])
    if not (math.isfinite(x) and math.isfinite(y)):
        raise fail(
            f"{what} has a coordinate that is not a finite number ({_short(raw)}); {NONFINITE_HINT}"
        )
    return (x, y)


def _line(raw: Any, what: str, words: str, fail: Fail) -> list[tuple[float, float]]:
    if not isinstance(raw, list):
        raise fail(f"{words}{what} has no coordinate array (RFC 7946 section 3.1.4)")
    if len(raw) < 2:
        raise fail(
            f"{words}{what} has {len(raw)} position(s); a LineString needs two or more "
            "(RFC 7946 section 3.1.4)"
        )
    points = [_position(p, f"{words}{what}", fail) for p in raw]
    if len(set(points)) < 2:
        raise fail(f"{words}{what} has fewer than two distinct points, so it has no length")
    return points


def _short(value: Any) -> str:
    text = json.dumps(value, allow_nan=True, default=str)
    return text if len(text) <= 40 else text[:37] + "..."


def _number(value: Any, what: str, fail: Fail) -> float:
    if is_number(value):
        number = float(value)
    elif isinstance(value, str):
        try:
            number = float(value)
        except ValueError:
            raise fail(f"{what} {value!r} is not a number") from None
    else:
        raise fail(f"{what} {value!r} is not a number")
    if not math.isfinite(number):
        raise fail(f"{what} {value!r} is not a finite number")
    return number


def _street_properties(
    feature: Mapping[str, Any], props: Mapping[str, Any], index: int, source: str | None
) -> _Street:
    raw_name = props.get("name")
    name = "" if raw_name is None else str(raw_name)
    words = f"street {name!r}: " if name else ""

    def fail(message: str) -> InputError:
        return InputError(f"{words}{message}", source=source, feature=index)

    raw_id = feature.get("id")
    if raw_id is None or raw_id == "":
        raw_id = props.get("id")
    if raw_id is None or raw_id == "":
        base_id = f"f{index}"
    elif isinstance(raw_id, str) or is_number(raw_id):
        base_id = str(raw_id)
    else:
        # RFC 7946 section 3.2: "id" is either a JSON string or number.
        raise fail(f"the id {_short(raw_id)} is neither a string nor a number")

    try:
        oneway = parse_oneway(props.get("oneway"))
        service = parse_service(props.get("service"))
    except ValueError as exc:
        raise fail(str(exc)) from None

    passes_raw = props.get("passes")
    if passes_raw is None:
        passes = 1
    else:
        value = _number(passes_raw, "passes", fail)
        if not value.is_integer() or value < 1:
            raise fail(f"passes must be a whole number of at least 1, not {passes_raw!r}")
        passes = int(value)

    length_m = None
    if props.get("length_m") is not None:
        length_m = _number(props["length_m"], "length_m", fail)
        if length_m <= 0:
            raise fail(f"length_m must be a positive number of metres, not {props['length_m']!r}")

    demand = None
    if props.get("demand") is not None:
        demand = _number(props["demand"], "demand", fail)
        if demand < 0:
            raise fail(f"demand must not be negative ({props['demand']!r})")

    attrs = {k: v for k, v in props.items() if k not in STREET_KEYS}
    return _Street(index, base_id, name, oneway, service, passes, length_m, demand, attrs)


def _project(
    streets: list[_Street],
    markers: list[_Marker],
    declared_crs: str | None,
    source: str | None,
) -> tuple[np.ndarray, str, np.ndarray]:
    """Project all line vertices (in feature/part/vertex order) and markers to metres.

    Returns the (n, 2) vertex array, the CRS and the (m, 2) marker array.
    """
    raw = np.array([p for s in streets for part in s.parts for p in part], dtype=float)
    owner = np.array([s.feature for s in streets for part in s.parts for _ in part])
    mraw = np.array([m.position for m in markers], dtype=float).reshape(-1, 2)
    mowner = np.array([m.feature for m in markers], dtype=int)

    if declared_crs is not None:
        transformer = geo.to_lonlat(declared_crs)
        lon, lat = transformer.transform(raw[:, 0], raw[:, 1])
        mlon, mlat = transformer.transform(mraw[:, 0], mraw[:, 1])
        lonlat = np.column_stack([lon, lat])
        mlonlat = np.column_stack([mlon, mlat]).reshape(-1, 2)
        # Positions in a geographic CRS are checked as longitude/latitude.
        geographic = geo.is_geographic(declared_crs)
        _check_lonlat(lonlat, owner, None if geographic else raw, declared_crs, source)
        _check_lonlat(mlonlat, mowner, None if geographic else mraw, declared_crs, source)
        if geo.is_metric(declared_crs):
            # Metres in a projected CRS are used as they are, unless the CRS
            # stretches distances in this district by more than
            # MAX_SCALE_ERROR (Web Mercator, EPSG:3857, makes streets at 50°
            # latitude half as long again); then it is reprojected to UTM.
            centre_lon, centre_lat = _centre(lonlat)
            if geo.scale_error(declared_crs, centre_lon, centre_lat) <= MAX_SCALE_ERROR:
                return raw, geo.crs_code(declared_crs), mraw
        raw, mraw = lonlat, mlonlat
    else:
        _check_lonlat(raw, owner, None, None, source)
        _check_lonlat(mraw, mowner, None, None, source)

    crs = geo.utm_crs_for(*_centre(raw))
    transformer = geo.from_lonlat(crs)
    x, y = transformer.transform(raw[:, 0], raw[:, 1])
    mx, my = transformer.transform(mraw[:, 0], mraw[:, 1])
    return np.column_stack([x, y]), crs, np.column_stack([mx, my]).reshape(-1, 2)


def _centre(lonlat: np.ndarray) -> tuple[float, float]:
    """Centre of positions in degrees.  The mean longitude is taken on the
    circle (atan2 of the mean sine and cosine) so that a district astride the
    180th meridian is not put on the other side of the Earth."""
    rad = np.radians(lonlat[:, 0])
    lon = math.degrees(math.atan2(float(np.sin(rad).mean()), float(np.cos(rad).mean())))
    return lon, float(lonlat[:, 1].mean())


def _check_lonlat(
    lonlat: np.ndarray,
    owners: np.ndarray,
    raw: np.ndarray | None,
    crs: str | None,
    source: str | None,
) -> None:
    lon, lat = lonlat[:, 0], lonlat[:, 1]
    bad = ~(np.isfinite(lon) & np.isfinite(lat))
    bad |= ~((lon >= -180) & (lon <= 180) & (lat >= -90) & (lat <= 90))
    if not bad.any():
        return
    k = int(np.argmax(bad))
    if raw is not None:
        message = (
            f"the position ({raw[k, 0]:g}, {raw[k, 1]:g}) cannot be converted from {crs} "
            'to longitude/latitude; check the "crs" member'
        )
    else:
        message = (
            f"the position ({lon[k]:g}, {lat[k]:g}) is not a longitude in [-180, 180] and "
            "a latitude in [-90, 90] (RFC 7946 section 4: WGS 84, longitude first); for "
            'coordinates in metres, name their CRS in a "crs" member'
        )
    raise InputError(message, source=source, feature=int(owners[k]))


def cluster_vertices(xy: np.ndarray, tolerance: float) -> np.ndarray:
    """Group points lying within ``tolerance`` of each other.

    Returns ``label`` with ``label[i]`` the index of the first point of the
    group of point ``i`` (its leader).  Groups are formed greedily in index
    order: each point not yet grouped leads a new group and takes every
    ungrouped point within ``tolerance`` of it (found with a shapely STRtree,
    ``dwithin``).  Unlike a transitive closure this cannot chain a densely
    drawn line into one point: every point is within ``tolerance`` of its
    leader, and leaders are more than ``tolerance`` apart.
    """
    n = len(xy)
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    if tolerance == 0:
        _, first, inverse = np.unique(xy, axis=0, return_index=True, return_inverse=True)
        return first[inverse.reshape(-1)].astype(np.int64)
    points = shapely.points(xy)
    left, right = shapely.STRtree(points).query(points, predicate="dwithin", distance=tolerance)
    keep = left != right
    left, right = left[keep], right[keep]
    label = np.arange(n, dtype=np.int64)
    if len(left) == 0:
        return label
    order = np.lexsort((right, left))
    left, right = left[order], right[order]
    crowded, starts = np.unique(left, return_index=True)
    ends = np.append(starts[1:], len(left))
    # The greedy pass is sequential by nature; plain Python lists are faster
    # than element-wise numpy access here.
    lab = label.tolist()
    grouped = bytearray(n)
    neighbours = right.tolist()
    for i, start, end in zip(crowded.tolist(), starts.tolist(), ends.tolist(), strict=True):
        if grouped[i]:
            continue
        grouped[i] = 1
        for j in neighbours[start:end]:
            if not grouped[j]:
                grouped[j] = 1
                lab[j] = i
    return np.asarray(lab, dtype=np.int64)


def _build(
    network: Network,
    streets: list[_Street],
    xy: np.ndarray,
    tolerance: float,
    source: str | None,
) -> None:
    """Node the projected lines and add nodes and segments to ``network``."""
    label = cluster_vertices(xy, tolerance)

    # Each part as its sequence of vertex groups, runs of one group collapsed
    # to one entry (consecutive vertices closer than the tolerance are one
    # place on the line, not a junction).
    sizes = [len(part) for street in streets for part in street.parts]
    first = np.cumsum([0, *sizes[:-1]])
    keep = np.ones(len(label), dtype=bool)
    keep[1:] = label[1:] != label[:-1]
    keep[first] = True
    part_of = np.repeat(np.arange(len(sizes)), sizes)[keep]
    kept = label[keep]
    bounds = np.flatnonzero(np.diff(part_of)) + 1
    sequences = [seq.tolist() for seq in np.split(kept, bounds)]

    # Nodes: both ends of every line, and every group met more than once.
    is_node = np.bincount(kept, minlength=len(label)) >= 2
    is_node[kept[np.r_[0, bounds]]] = True
    is_node[kept[np.r_[bounds - 1, len(kept) - 1]]] = True

    node_id: dict[int, str] = {}
    for seq in sequences:
        for g in seq:
            if is_node[g] and g not in node_id:
                node_id[g] = f"n{len(node_id) + 1}"
                network.add_node(Node(node_id[g], float(xy[g, 0]), float(xy[g, 1])))

    coords = xy.tolist()
    k = 0
    for street in streets:
        pieces: list[tuple[str, str, tuple[tuple[float, float], ...]]] = []
        for _part in street.parts:
            seq = sequences[k]
            k += 1
            if len(seq) < 2:
                raise InputError(
                    f"{_street_words(street)}the line is shorter than the snapping tolerance "
                    f"of {tolerance:g} m and collapses to a point (zero length)",
                    source=source,
                    feature=street.feature,
                )
            cut = [i for i, g in enumerate(seq) if is_node[g]]
            for a, b in itertools.pairwise(cut):
                geometry = tuple((coords[g][0], coords[g][1]) for g in seq[a : b + 1])
                pieces.append((node_id[seq[a]], node_id[seq[b]], geometry))
        _add_pieces(network, street, pieces, source)


def _add_pieces(
    network: Network,
    street: _Street,
    pieces: list[tuple[str, str, tuple[tuple[float, float], ...]]],
    source: str | None,
) -> None:
    # A given length or demand belongs to the whole feature; split it over the
    # pieces in proportion to their drawn lengths.
    if len(pieces) > 1 and (street.length_m is not None or street.demand is not None):
        drawn = [polyline_length(g) for _, _, g in pieces]
        total = sum(drawn)
        shares = [d / total for d in drawn]
    else:
        shares = [1.0] * len(pieces)  # unused unless a length or demand is given
    for n, ((start, end, geometry), share) in enumerate(zip(pieces, shares, strict=True), 1):
        seg_id = street.base_id if len(pieces) == 1 else f"{street.base_id}.{n}"
        try:
            network.add_segment(
                Segment(
                    id=seg_id,
                    start=start,
                    end=end,
                    length=math.nan if street.length_m is None else street.length_m * share,
                    geometry=geometry,
                    name=street.name,
                    oneway=street.oneway,
                    service=street.service,
                    passes=street.passes,
                    demand=0.0 if street.demand is None else street.demand * share,
                    attrs=dict(street.attrs),
                )
            )
        except NetworkError as exc:
            raise InputError(exc.message, source=source, feature=street.feature) from None


def _place_markers(
    network: Network, markers: list[_Marker], xy: np.ndarray, source: str | None
) -> None:
    if not markers:
        return
    ids = list(network.nodes)
    nodes_xy = np.array([(network.nodes[i].x, network.nodes[i].y) for i in ids], dtype=float)
    tree = shapely.STRtree(shapely.points(nodes_xy))
    found, hits = tree.query_nearest(shapely.points(xy), all_matches=True)
    nearest: dict[int, int] = {}
    for m, h in zip(found.tolist(), hits.tolist(), strict=True):
        nearest[m] = min(h, nearest.get(m, h))  # ties: the first node, for determinism
    depot_feature: int | None = None
    for k, marker in enumerate(markers):
        node = network.nodes[ids[nearest[k]]]
        if marker.depot:
            if depot_feature is not None:
                raise InputError(
                    f"a second depot point; feature {depot_feature} already places the depot",
                    source=source,
                    feature=marker.feature,
                )
            depot_feature = marker.feature
            network.depot = node.id
        if marker.turning_place and not node.turning_place:
            network.nodes[node.id] = Node(node.id, node.x, node.y, turning_place=True)


# -- writing ------------------------------------------------------------------


def network_to_geojson(network: Network, *, decimals: int = DECIMALS) -> dict[str, Any]:
    """The network as an RFC 7946 FeatureCollection (longitude/latitude,
    rounded to ``decimals`` places).

    One LineString feature per segment with properties ``id``, ``name``,
    ``oneway``, ``service``, ``passes``, ``length_m`` (only when the length
    was given rather than measured), ``demand`` (when not zero) and the
    segment's further attributes; a Point feature ``{"depot": true, "node":
    id}`` for the depot and ``{"turning_place": true, "node": id}`` for each
    turning place.  The network name is kept as a foreign member ``"name"``
    (RFC 7946 section 6.1).

    Raises
    ------
    InputError
        The network has no coordinates or no CRS, or a street cannot be drawn
        or its attributes cannot be written as JSON.
    """
    if not network.has_coordinates:
        raise InputError("this network has no coordinates; save it as a Roundsman project instead")
    if network.crs is None:
        raise InputError(
            "this network's coordinates have no coordinate reference system, so they "
            "cannot be placed on the map; save it as a Roundsman project instead"
        )
    nodes = network.nodes
    lines: list[Sequence[tuple[float, float]]] = []
    for seg in network:
        if seg.geometry is not None:
            lines.append(seg.geometry)
        elif seg.is_loop:
            raise InputError(
                f"street {seg.label} is a loop without a drawn shape, so it cannot be "
                "written as a line; save the network as a Roundsman project instead"
            )
        else:
            a, b = nodes[seg.start], nodes[seg.end]
            lines.append(((a.x, a.y), (b.x, b.y)))  # type: ignore[list-item]
    points = [(n.x, n.y) for n in _marker_nodes(network)]

    flat = np.array([p for line in lines for p in line] + points, dtype=float).reshape(-1, 2)
    lon, lat = geo.to_lonlat(network.crs).transform(flat[:, 0], flat[:, 1])
    if not (np.isfinite(lon).all() and np.isfinite(lat).all()):
        raise InputError(
            f"some coordinates cannot be converted from {network.crs} to longitude/latitude"
        )
    lonlat = np.round(np.column_stack([lon, lat]), decimals).tolist()

    features: list[dict[str, Any]] = []
    k = 0
    for seg, line in zip(network, lines, strict=True):
        coordinates = lonlat[k : k + len(line)]
        k += len(line)
        features.append(
            {
                "type": "Feature",
                "geometry": {"type": "LineString", "coordinates": coordinates},
                "properties": _segment_properties(seg),
            }
        )
    for node, is_depot in _marker_list(network):
        properties: dict[str, Any] = (
            {"depot": True, "node": node} if is_depot else {"turning_place": True, "node": node}
        )
        features.append(
            {
                "type": "Feature",
                "geometry": {"type": "Point", "coordinates": lonlat[k]},
                "properties": properties,
            }
        )
        k += 1
    return {"type": "FeatureCollection", "name": network.name, "features": features}


def _marker_list(network: Network) -> list[tuple[str, bool]]:
    """``(node id, is depot)`` for the depot and then each turning place."""
    out: list[tuple[str, bool]] = []
    if network.depot is not None:
        if network.depot not in network.nodes:
            raise InputError(f"the depot {network.depot!r} is not a node of the network")
        out.append((network.depot, True))
    out.extend((n.id, False) for n in network.nodes.values() if n.turning_place)
    return out


def _marker_nodes(network: Network) -> list[Node]:
    return [network.nodes[node] for node, _ in _marker_list(network)]


def _segment_properties(seg: Segment) -> dict[str, Any]:
    props: dict[str, Any] = {
        "id": seg.id,
        "name": seg.name,
        "oneway": seg.oneway.value,
        "service": seg.service.value,
        "passes": seg.passes,
    }
    if seg.length_given:
        props["length_m"] = seg.length
    if seg.demand:
        props["demand"] = seg.demand
    for key, value in seg.attrs.items():
        if key not in STREET_KEYS:
            props[key] = value
    try:
        json.dumps(props, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"street {seg.label} has an attribute that cannot be written as JSON ({exc})"
        ) from None
    return props


def geojson_text(network: Network, *, decimals: int = DECIMALS) -> str:
    """The network as GeoJSON text, one feature per line."""
    doc = network_to_geojson(network, decimals=decimals)
    head = {k: v for k, v in doc.items() if k != "features"}
    return dump_records(head, {"features": doc["features"]})


def write_geojson(
    network: Network, path: str | os.PathLike[str], *, decimals: int = DECIMALS
) -> None:
    """Write the network as a GeoJSON file, atomically (the old file survives a
    failed write).  See :func:`network_to_geojson`."""
    try:
        text = geojson_text(network, decimals=decimals)
    except InputError as exc:
        raise InputError(exc.message, source=source_label(path)) from None
    atomic_write_text(path, text)
