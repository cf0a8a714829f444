"""Exports of a fleet plan: GPX, GeoJSON and the instruction CSV, every route in one file.

One file per kind, every route in it, so that the supervisor hands out one set of
files and each route keeps its name:

* **GPX 1.1** (Topografix schema, http://www.topografix.com/GPX/1/1/gpx.xsd): per
  route one ``rte`` (its instruction points, numbered as its card's rows) and one
  ``trk`` named "Route 2 of 3 · vehicle 4" with one ``trkseg`` per trip (one load),
  in the schema's order (``metadata``, ``rte``…, ``trk``…).  In-cab devices list the
  tracks by name, so the driver picks the vehicle's own.
* **GeoJSON** (RFC 7946): one LineString per pass as in
  :mod:`core.files.circuit_geojson`, with ``route``, ``vehicle`` and ``trip`` added
  to the properties (``step`` and ``instruction`` count within the route).
* **CSV**: the columns of :mod:`core.files.instructions_csv` after ``route``,
  ``vehicle`` and ``trip``; reload stops are rows of kind ``stop`` in the trip they
  end.

Coordinates are WGS 84 whatever the working CRS (pyproj through :mod:`core.geo`).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import os
import xml.etree.ElementTree as ET
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from core.directions import Directions, Instruction, Kind
from core.errors import NetworkError
from core.files.atomic import atomic_write_text
from core.files.circuit_geojson import circuit_geojson
from core.files.gpx import GPX_NS, circuit_lonlat, gpx_child, gpx_point, gpx_root
from core.files.instructions_csv import COLUMNS, instruction_row
from core.geo import to_lonlat
from core.model import Network

__all__ = [
    "FLEET_COLUMNS",
    "RouteExport",
    "fleet_csv_text",
    "fleet_geojson",
    "fleet_gpx_text",
    "write_fleet_exports",
]

FLEET_COLUMNS: tuple[str, ...] = ("route", "vehicle", "trip", *COLUMNS)
"""The fleet CSV's columns: route number, vehicle id, trip number, then the instruction's."""


@dataclass(frozen=True, slots=True)
class RouteExport:
    """One route as the exports need it."""

    number: int
    name: str
    """e.g. ``"Route 2 of 3 · vehicle 4"``."""
    vehicle: str
    directions: Directions
    trip_of_step: tuple[int, ...]
    """1-based trip number of each step of ``directions.steps``."""


def fleet_gpx_text(
    network: Network,
    routes: Sequence[RouteExport],
    *,
    name: str = "",
    time: dt.datetime | None = None,
) -> str:
    """The GPX 1.1 file of every route (see the module notes).  O(v) for v vertices."""
    if network.crs is None or not network.has_coordinates:
        raise NetworkError(
            f"GPX needs map coordinates, and the network {network.name or ''} has none "
            "(research formats carry lengths only)".replace("  ", " ")
        )
    title = name or network.name or "fleet plan"
    root = gpx_root(title, f"fleet plan from Roundsman, {len(routes)} routes (advisory)", time)
    to_ll = to_lonlat(network.crs) if network.crs else None
    for r in routes:
        rte = ET.SubElement(root, f"{{{GPX_NS}}}rte")
        gpx_child(rte, "name", f"{r.name}: instructions")
        gpx_child(rte, "number", str(r.number))
        rows = [i for i in r.directions.instructions if i.position is not None]
        if rows and to_ll is not None:
            lon, lat = to_ll.transform(
                [i.position[0] for i in rows],  # type: ignore[index]
                [i.position[1] for i in rows],  # type: ignore[index]
            )
            for k, row in enumerate(rows):
                pt = gpx_point(rte, "rtept", float(lon[k]), float(lat[k]))
                gpx_child(pt, "name", str(row.number))
                extra = f" ({row.service_text})" if row.service_text else ""
                gpx_child(pt, "desc", row.text + extra)
    for r in routes:
        trk = ET.SubElement(root, f"{{{GPX_NS}}}trk")
        gpx_child(trk, "name", r.name)
        gpx_child(trk, "number", str(r.number))
        gpx_child(trk, "type", r.directions.activity.name)
        lines = circuit_lonlat(network, r.directions.steps)
        current, seg, last = 0, None, None
        for trip, line in zip(r.trip_of_step, lines, strict=True):
            if trip != current:
                seg, current, last = ET.SubElement(trk, f"{{{GPX_NS}}}trkseg"), trip, None
            for p in line:
                if p != last:  # the junction shared by two passes once
                    gpx_point(seg, "trkpt", p[0], p[1])  # type: ignore[arg-type]
                    last = p
    ET.indent(root, space=" ")
    body = ET.tostring(root, encoding="unicode")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + body + "\n"


def fleet_geojson(network: Network, routes: Sequence[RouteExport]) -> dict[str, Any]:
    """Every route's passes as one RFC 7946 FeatureCollection with route and trip
    numbers.  O(v)."""
    features: list[dict[str, Any]] = []
    boxes = []
    for r in routes:
        doc = circuit_geojson(network, r.directions)
        if "bbox" in doc:
            boxes.append(doc["bbox"])
        for f, trip in zip(doc["features"], r.trip_of_step, strict=True):
            props = {"route": r.number, "vehicle": r.vehicle, "trip": trip}
            f["properties"] = {**props, **f["properties"]}
            features.append(f)
    out: dict[str, Any] = {"type": "FeatureCollection"}
    if boxes:
        out["bbox"] = [
            min(b[0] for b in boxes),
            min(b[1] for b in boxes),
            max(b[2] for b in boxes),
            max(b[3] for b in boxes),
        ]
    out["features"] = features
    return out


def _row_trip(row: Instruction, r: RouteExport, previous: int) -> int:
    if row.steps:
        return r.trip_of_step[row.steps[0]]
    if row.kind == Kind.ARRIVE:
        return r.trip_of_step[-1] if r.trip_of_step else previous
    return previous  # a reload stop closes the trip driven so far


def fleet_csv_text(routes: Sequence[RouteExport]) -> str:
    """Every route's instructions as CSV with route, vehicle and trip columns.  O(n)."""
    buf = io.StringIO(newline="")
    writer = csv.DictWriter(buf, fieldnames=FLEET_COLUMNS)
    writer.writeheader()
    for r in routes:
        trip = 1
        for row in r.directions.instructions:
            trip = _row_trip(row, r, trip)
            cells = {"route": str(r.number), "vehicle": r.vehicle, "trip": str(trip)}
            writer.writerow({**cells, **instruction_row(row)})
    return buf.getvalue()


def write_fleet_exports(
    network: Network,
    routes: Sequence[RouteExport],
    *,
    gpx: str | os.PathLike[str] | None = None,
    geojson: str | os.PathLike[str] | None = None,
    csv_path: str | os.PathLike[str] | None = None,
    name: str = "",
) -> list[str]:
    """Write the exports asked for, each atomically; returns what was written."""
    done = []
    if csv_path:
        atomic_write_text(csv_path, fleet_csv_text(routes))
        done.append(f"Instructions of {len(routes)} routes written to {csv_path}")
    if gpx:
        atomic_write_text(gpx, fleet_gpx_text(network, routes, name=name))
        done.append(f"GPX ({len(routes)} tracks) written to {gpx}")
    if geojson:
        text = json.dumps(fleet_geojson(network, routes), ensure_ascii=False) + "\n"
        atomic_write_text(geojson, text)
        done.append(f"Routes GeoJSON written to {geojson}")
    return done
