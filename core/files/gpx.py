"""GPX 1.1 export of a circuit, for in-cab navigation devices.

The file holds, in the order the GPX 1.1 schema requires (``metadata``,
``wpt``, ``rte``, ``trk``):

* a route (``rte``) whose points (``rtept``) are the instruction points, each
  named with the instruction number and described with its words, so that a
  device announces the same numbers as the printed card;
* a track (``trk``) with the whole circuit as one track segment, every vertex
  of every pass in driving order (the shared junction point of two passes
  once).

Coordinates are WGS 84 latitude/longitude in decimal degrees whatever the
network's working CRS (GPX 1.1 ``latitudeType``/``longitudeType``), projected
with pyproj through :mod:`core.geo`.  The schema is Topografix's GPX 1.1
(http://www.topografix.com/GPX/1/1/gpx.xsd); the document is built with
:mod:`xml.etree.ElementTree` rather than by hand so that escaping is right.
"""

from __future__ import annotations

import datetime as dt
import os
import xml.etree.ElementTree as ET
from collections.abc import Sequence

from core import __version__
from core.directions import Directions, step_coords
from core.errors import NetworkError
from core.files.atomic import atomic_write_text
from core.geo import to_lonlat
from core.model import Network
from core.plan import Step

GPX_NS = "http://www.topografix.com/GPX/1/1"
"""The GPX 1.1 namespace."""
GPX_SCHEMA = "http://www.topografix.com/GPX/1/1/gpx.xsd"
_XSI = "http://www.w3.org/2001/XMLSchema-instance"
DECIMALS = 7
"""Decimal places of a degree written (1e-7° is about 1 cm)."""

__all__ = ["GPX_NS", "circuit_lonlat", "gpx_text", "write_gpx"]


def _need_crs(network: Network, what: str) -> str:
    if network.crs is None or not network.has_coordinates:
        raise NetworkError(
            f"{what} needs map coordinates, and the network {network.name or ''} has none "
            "(research formats carry lengths only)".replace("  ", " ")
        )
    return network.crs


def circuit_lonlat(network: Network, steps: Sequence[Step]) -> list[list[tuple[float, float]]]:
    """Each pass's polyline in driving order as WGS 84 ``(lon, lat)`` pairs.

    One pyproj transformation of all vertices at once: O(v) for v vertices.
    """
    crs = _need_crs(network, "a map export")
    lines = []
    for s in steps:
        coords = step_coords(network, s)
        if coords is None:  # pragma: no cover - has_coordinates was checked
            raise NetworkError(f"street {s.segment} has no coordinates", segments=[s.segment])
        lines.append(coords)
    flat_x = [x for line in lines for x, _ in line]
    flat_y = [y for line in lines for _, y in line]
    lon, lat = to_lonlat(crs).transform(flat_x, flat_y)
    out: list[list[tuple[float, float]]] = []
    k = 0
    for line in lines:
        out.append([(float(lon[k + j]), float(lat[k + j])) for j in range(len(line))])
        k += len(line)
    return out


def gpx_point(parent: ET.Element, tag: str, lon: float, lat: float) -> ET.Element:
    """A ``wptType`` child (``rtept``, ``trkpt``) at ``lon``, ``lat`` (GPX 1.1)."""
    return ET.SubElement(
        parent,
        f"{{{GPX_NS}}}{tag}",
        {"lat": f"{lat:.{DECIMALS}f}", "lon": f"{lon:.{DECIMALS}f}"},
    )


def gpx_child(parent: ET.Element, tag: str, text: str) -> ET.Element:
    """A GPX child element holding ``text``."""
    el = ET.SubElement(parent, f"{{{GPX_NS}}}{tag}")
    el.text = text
    return el


def gpx_root(title: str, desc: str, time: dt.datetime | None = None) -> ET.Element:
    """The GPX 1.1 root element with its metadata: name, description and time (UTC; now
    when ``time`` is None).  O(1)."""
    ET.register_namespace("", GPX_NS)
    ET.register_namespace("xsi", _XSI)
    root = ET.Element(
        f"{{{GPX_NS}}}gpx",
        {
            "version": "1.1",
            "creator": f"Roundsman {__version__}",
            f"{{{_XSI}}}schemaLocation": f"{GPX_NS} {GPX_SCHEMA}",
        },
    )
    meta = ET.SubElement(root, f"{{{GPX_NS}}}metadata")
    gpx_child(meta, "name", title)
    gpx_child(meta, "desc", desc)
    stamp = (time or dt.datetime.now(dt.UTC)).astimezone(dt.UTC)
    gpx_child(meta, "time", stamp.strftime("%Y-%m-%dT%H:%M:%SZ"))
    return root


def gpx_document(
    network: Network,
    directions: Directions,
    *,
    name: str = "",
    time: dt.datetime | None = None,
) -> ET.Element:
    """The GPX 1.1 document as an element tree (see the module notes). O(v)."""
    crs = _need_crs(network, "GPX")
    title = name or network.name or "circuit"
    desc = f"{directions.activity.label}: circuit from Roundsman (advisory)"
    root = gpx_root(title, desc, time)

    rte = ET.SubElement(root, f"{{{GPX_NS}}}rte")
    gpx_child(rte, "name", f"{title}: instructions")
    rows = [i for i in directions.instructions if i.position is not None]
    if rows:
        to_ll = to_lonlat(crs)
        xs = [i.position[0] for i in rows]  # type: ignore[index]
        ys = [i.position[1] for i in rows]  # type: ignore[index]
        lon, lat = to_ll.transform(xs, ys)
        for k, row in enumerate(rows):
            pt = gpx_point(rte, "rtept", float(lon[k]), float(lat[k]))
            gpx_child(pt, "name", str(row.number))
            words = row.text + (f" ({row.service_text})" if row.service_text else "")
            gpx_child(pt, "desc", words)

    trk = ET.SubElement(root, f"{{{GPX_NS}}}trk")
    gpx_child(trk, "name", title)
    gpx_child(trk, "type", directions.activity.name)
    seg = ET.SubElement(trk, f"{{{GPX_NS}}}trkseg")
    last: tuple[float, float] | None = None
    for line in circuit_lonlat(network, directions.steps):
        for p in line:
            if last is not None and p == last:
                continue
            gpx_point(seg, "trkpt", p[0], p[1])
            last = p
    return root


def gpx_text(
    network: Network,
    directions: Directions,
    *,
    name: str = "",
    time: dt.datetime | None = None,
) -> str:
    """The GPX 1.1 file as text (UTF-8 XML declaration included)."""
    root = gpx_document(network, directions, name=name, time=time)
    ET.indent(root, space=" ")
    body = ET.tostring(root, encoding="unicode")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + body + "\n"


def write_gpx(
    network: Network,
    directions: Directions,
    path: str | os.PathLike[str],
    *,
    name: str = "",
) -> None:
    """Write the GPX file atomically."""
    atomic_write_text(path, gpx_text(network, directions, name=name))
