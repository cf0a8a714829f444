"""GeoPackage street networks (OGC GeoPackage encoding standard 12-128), read with pyogrio.

Reading
-------
* One line layer (LineString or MultiLineString features) is read.  With
  ``layer=None`` the file must have exactly one; otherwise the error lists
  the line layers to choose from.
* The layer's CRS is read from the file (``gpkg_spatial_ref_sys``, through
  GDAL) and handled with pyproj exactly as a declared CRS in GeoJSON: a
  geographic CRS is projected to the UTM zone of the district; a projected
  CRS in metres is kept (unless it stretches distances by more than 1 %, as
  Web Mercator does, when it is reprojected to UTM).  A layer without a CRS
  is refused.
* Geometries are decoded by shapely's WKB reader (``shapely.from_wkb``); the
  lines are noded, split and snapped exactly as GeoJSON lines
  (:mod:`core.files.geojson`).  Attribute columns map like GeoJSON
  properties: ``id``, ``name``, ``oneway``, ``service``, ``passes``,
  ``length_m``, ``demand``; the others go to ``Segment.attrs`` (nulls are
  left out).  Without an ``id`` column segment ids are ``f<fid>``.
* A broken feature (no geometry, a geometry that does not decode, is empty,
  not a line, has non-finite coordinates or fewer than two distinct points,
  or has a property that does not read) is refused naming its 0-based index
  and fid (``on_error="reject"``) or left out and listed in
  ``network.meta["skipped_features"]`` (``on_error="skip"``).

Limits
------
pyogrio reads the layer in batches of ``batch`` features (GDAL's
``skip_features``/``max_features``); the decoded coordinates of all kept
lines and the network built from them are held in memory.  Measured on
this project's 2-core machine: 179,400 two-point lines in longitude/latitude
(a 300 x 300 grid) read in about 19 s at 580 MiB peak memory
(``bench/bench_import.py``).
"""

from __future__ import annotations

import math
import os
import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pyogrio
import shapely
from pyproj.exceptions import ProjError

from core.errors import InputError
from core.files._jsonio import source_label
from core.files.geojson import (
    DEFAULT_SNAP_TOLERANCE,
    _build,
    _project,
    _Street,
    _street_properties,
    check_earth_crs,
)
from core.model import Network
from core.report import SKIPPED_KEY, check_on_error

SQLITE_MAGIC = b"SQLite format 3\x00"
GPKG_APPLICATION_IDS = (b"GPKG", b"GP10", b"GP11")
"""The SQLite ``application_id`` of a GeoPackage (OGC 12-128, requirement 2), at byte 68."""

DEFAULT_BATCH = 50_000


def sniff_gpkg(head: bytes) -> bool:
    """Whether the first 100 bytes of a file are a GeoPackage's SQLite header."""
    return head.startswith(SQLITE_MAGIC) and head[68:72] in GPKG_APPLICATION_IDS


def _ogr(call: Callable[[], Any], source: str, what: str) -> Any:
    """Run a pyogrio call; any failure becomes an :class:`InputError`."""
    try:
        with warnings.catch_warnings():
            # GDAL warns about a GeoPackage whose name does not end in .gpkg;
            # files are recognised by content here.
            warnings.simplefilter("ignore", RuntimeWarning)
            return call()
    except InputError:
        raise
    except Exception as exc:  # GDAL reports broken files in several exception types
        text = str(exc).strip() or type(exc).__name__
        raise InputError(f"{what}: {text}", source=source) from None


def line_layers(path: str | os.PathLike[str]) -> list[tuple[str, str]]:
    """Every layer of the file as ``(name, geometry type)``."""
    source = source_label(path)
    layers = _ogr(lambda: pyogrio.list_layers(os.fspath(path)), source, "cannot list the layers")
    return [(str(n), str(t)) for n, t in layers]


def _is_line(geometry_type: str) -> bool:
    return "LineString" in geometry_type


def choose_layer(path: str | os.PathLike[str], layer: str | None) -> str:
    """The line layer to read: ``layer`` when it is one, else the only one.

    Raises :class:`InputError` listing the line layers when the choice is
    wrong or ambiguous.
    """
    source = source_label(path)
    layers = line_layers(path)
    lines = [n for n, t in layers if _is_line(t)]
    listing = ", ".join(f"{n} ({t})" for n, t in layers) or "none"
    if layer is not None:
        for n, t in layers:
            if n == layer:
                if _is_line(t) or t in ("Unknown", "Geometry", "GeometryCollection"):
                    return n
                raise InputError(
                    f"layer {layer!r} holds {t} features, not lines; the line layers are: "
                    f"{', '.join(lines) or 'none'}",
                    source=source,
                )
        raise InputError(
            f"there is no layer {layer!r}; the line layers are: {', '.join(lines) or 'none'} "
            f"(all layers: {listing})",
            source=source,
        )
    if len(lines) == 1:
        return lines[0]
    if not lines:
        raise InputError(
            f"the GeoPackage has no line layer, so there are no streets (layers: {listing})",
            source=source,
        )
    raise InputError(
        f"the GeoPackage has {len(lines)} line layers ({', '.join(lines)}); choose one with "
        "layer= / --layer",
        source=source,
    )


def _value(value: Any) -> Any:
    """A column value as a plain Python value; ``None`` for nulls and blobs."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and math.isnan(value):
        return None
    if isinstance(value, bytes | bytearray | memoryview):
        return None
    if value is None or isinstance(value, str | int | float | bool):
        return value
    return str(value)  # dates and times


def _parts(wkb: Any, fail: Callable[[str], InputError]) -> list[list[tuple[float, float]]]:
    if wkb is None:
        raise fail("the feature has no geometry; streets need a LineString or MultiLineString")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # broken WKB becomes None
        geom = shapely.from_wkb(wkb, on_invalid="ignore")
    if geom is None:
        raise fail("the geometry cannot be decoded (broken WKB)")
    kind = geom.geom_type
    if kind not in ("LineString", "MultiLineString"):
        raise fail(f"geometry type {kind} is not read; streets are LineString or MultiLineString")
    if geom.is_empty:
        raise fail("the geometry is empty")
    lines = [geom] if kind == "LineString" else list(geom.geoms)
    parts = []
    for k, line in enumerate(lines):
        what = "the line" if kind == "LineString" else f"line {k} of the MultiLineString"
        coords = shapely.get_coordinates(line)
        if not np.isfinite(coords).all():
            raise fail(f"{what} has a coordinate that is not a finite number")
        points = [(float(x), float(y)) for x, y in coords]
        if len(set(points)) < 2:
            raise fail(f"{what} has fewer than two distinct points, so it has no length")
        parts.append(points)
    return parts


def read_gpkg(
    path: str | os.PathLike[str],
    *,
    layer: str | None = None,
    on_error: str = "reject",
    snap_tolerance: float = DEFAULT_SNAP_TOLERANCE,
    name: str | None = None,
    batch: int = DEFAULT_BATCH,
) -> Network:
    """Read a line layer of a GeoPackage as a street network.

    Parameters
    ----------
    path
        The ``.gpkg`` file.
    layer
        The layer name; ``None`` when the file has one line layer.
    on_error
        ``"reject"`` (default) or ``"skip"`` broken features.
    snap_tolerance
        Metres within which vertices are one junction (as for GeoJSON).
    name
        The network name (default: the layer name).
    batch
        Features read from GDAL at a time.

    Notes
    -----
    O(F) for F features to decode, then the GeoJSON noding: O(V log V) for
    V vertices (shapely STRtree).
    """
    source = source_label(path)
    check_on_error(on_error, source)
    if not (isinstance(snap_tolerance, int | float) and snap_tolerance >= 0):
        raise InputError(
            f"the snapping tolerance must be a number of metres of at least 0, "
            f"not {snap_tolerance!r}",
            source=source,
        )
    if not Path(path).is_file():
        raise InputError(f"the file {str(path)!r} does not exist", source=source)
    chosen = choose_layer(path, layer)
    fpath = os.fspath(path)
    info = _ogr(lambda: pyogrio.read_info(fpath, layer=chosen), source, "cannot read the layer")
    crs = info.get("crs")
    if not crs:
        raise InputError(
            f"layer {chosen!r} has no coordinate reference system, so its coordinates cannot "
            "be placed or measured; assign one in the GIS before exporting",
            source=source,
        )
    try:
        check_earth_crs(crs, source)
    except InputError as exc:
        raise InputError(
            f"layer {chosen!r} has no coordinate reference system on the Earth: {exc.message}; "
            "assign one in the GIS before exporting",
            source=source,
        ) from None
    total = int(info.get("features") or -1)

    streets: list[_Street] = []
    skipped: list[dict[str, Any]] = []
    seen: dict[str, int] = {}
    start = 0
    while True:
        count = batch if total < 0 else min(batch, total - start)
        if total >= 0 and count <= 0:
            break
        meta, fids, geometries, fields = _ogr(
            lambda s=start, c=count: pyogrio.raw.read(
                fpath, layer=chosen, skip_features=s, max_features=c, return_fids=True
            ),
            source,
            f"cannot read layer {chosen!r}",
        )
        columns = [str(c) for c in meta["fields"]]
        for row in range(len(geometries)):
            index = start + row
            fid = int(fids[row]) if fids is not None else index
            props = {c: _value(col[row]) for c, col in zip(columns, fields, strict=True)}
            props = {k: v for k, v in props.items() if v is not None}
            try:
                street = _feature(props, geometries[row], index, fid, source)
                if street.base_id in seen:
                    raise InputError(
                        f"the id {street.base_id!r} is also used by feature "
                        f"{seen[street.base_id]}; street ids must be unique",
                        source=source,
                        feature=index,
                    )
            except InputError as exc:
                if on_error == "reject":
                    raise
                skipped.append({"feature": index, "id": f"fid {fid}", "reason": exc.message})
                continue
            seen[street.base_id] = index
            streets.append(street)
        start += len(geometries)
        if len(geometries) < count or len(geometries) == 0:
            break

    if not streets:
        raise InputError(
            f"layer {chosen!r} has no readable line features, so there are no streets",
            source=source,
        )
    try:
        xy, net_crs, _ = _project(streets, [], crs, source)
    except ProjError as exc:
        raise InputError(
            f"the coordinates of layer {chosen!r} cannot be converted from its CRS: {exc}",
            source=source,
        ) from None
    network = Network(name if name is not None else chosen, net_crs)
    _build(network, streets, xy, float(snap_tolerance), source)
    network.meta["source_format"] = "geopackage"
    network.meta["layer"] = chosen
    if skipped:
        network.meta[SKIPPED_KEY] = skipped
    return network


def _feature(props: dict[str, Any], wkb: Any, index: int, fid: int, source: str) -> _Street:
    label = f"(fid {fid}) "

    def fail(message: str) -> InputError:
        words = f"street {props['name']!r}: " if props.get("name") else ""
        return InputError(f"{label}{words}{message}", source=source, feature=index)

    parts = _parts(wkb, fail)
    feature = {} if props.get("id") not in (None, "") else {"id": f"f{fid}"}
    try:
        street = _street_properties(feature, props, index, source)
    except InputError as exc:
        raise InputError(f"{label}{exc.message}", source=source, feature=index) from None
    street.parts.extend(parts)
    return street
