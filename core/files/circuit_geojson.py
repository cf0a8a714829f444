"""GeoJSON export of a circuit: one LineString feature per pass, in driving order.

The document follows RFC 7946 (Butler et al., 2016): a ``FeatureCollection``
whose geometries are WGS 84 longitude/latitude (section 4; no ``crs`` member),
longitude first, each ``LineString`` with two or more positions (section
3.1.4) in the direction driven.  Each feature's properties:

``step``
    1-based position of the pass in the circuit.
``instruction``
    The number of the instruction (route card row) the pass belongs to.
``segment``, ``street``, ``from``, ``to``
    The street's id and name (or our description of an unnamed one) and the
    nodes the pass leaves and reaches.
``service``
    ``true`` for a service pass, ``false`` for deadhead.
``length_m``, ``start_m``
    The pass's length and the distance driven before it.

A ``bbox`` (section 5) spans the circuit.  Lines that cross the
antimeridian are not cut (section 3.1.9); Roundsman's districts are a few
kilometres across and placed well away from it.
"""

from __future__ import annotations

import json
import os
from typing import Any

from core.directions import Directions, street_label
from core.files.atomic import atomic_write_text
from core.files.gpx import DECIMALS, circuit_lonlat
from core.model import Network

__all__ = ["circuit_geojson", "circuit_geojson_text", "write_circuit_geojson"]


def circuit_geojson(
    network: Network, directions: Directions, *, decimals: int = DECIMALS
) -> dict[str, Any]:
    """The circuit as an RFC 7946 FeatureCollection (see the module notes). O(v)."""
    steps = directions.steps
    row_of: dict[int, int] = {}
    for row in directions.instructions:
        for i in row.steps:
            row_of[i] = row.number
    features: list[dict[str, Any]] = []
    start_m = 0.0
    lons: list[float] = []
    lats: list[float] = []
    for i, (s, line) in enumerate(zip(steps, circuit_lonlat(network, steps), strict=True)):
        coords = [[round(lon, decimals), round(lat, decimals)] for lon, lat in line]
        lons += [c[0] for c in coords]
        lats += [c[1] for c in coords]
        features.append(
            {
                "type": "Feature",
                "geometry": {"type": "LineString", "coordinates": coords},
                "properties": {
                    "step": i + 1,
                    "instruction": row_of.get(i),
                    "segment": s.segment,
                    "street": street_label(network.segments[s.segment]),
                    "from": s.start,
                    "to": s.end,
                    "service": s.service,
                    "length_m": round(s.length, 3),
                    "start_m": round(start_m, 3),
                },
            }
        )
        start_m += s.length
    doc: dict[str, Any] = {"type": "FeatureCollection"}
    if lons:
        doc["bbox"] = [min(lons), min(lats), max(lons), max(lats)]
    doc["features"] = features
    return doc


def circuit_geojson_text(network: Network, directions: Directions) -> str:
    return json.dumps(circuit_geojson(network, directions), ensure_ascii=False) + "\n"


def write_circuit_geojson(
    network: Network, directions: Directions, path: str | os.PathLike[str]
) -> None:
    """Write the circuit GeoJSON atomically."""
    atomic_write_text(path, circuit_geojson_text(network, directions))
