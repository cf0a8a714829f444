"""GPX 1.1, circuit GeoJSON and instruction CSV exports, read back with outside readers.

* GPX: parsed with gpxpy (a general-purpose GPX reader); the GPX 1.1 schema
  (Topografix, http://www.topografix.com/GPX/1/1/gpx.xsd) fixes the namespace,
  the ``version`` attribute, the order metadata → rte → trk and the ranges of
  ``lat`` [-90, 90] and ``lon`` [-180, 180).
* Coordinates are checked with pyproj transformers built here, independently
  of ``core.geo``: GPX points projected back into the working CRS must land on
  the circuit's vertices, whatever that CRS is (UTM and Web Mercator below).
* GeoJSON: the rules of RFC 7946 (Butler et al., 2016) listed beside each check.
* CSV: read back with Python's csv module (RFC 4180).
"""

from __future__ import annotations

import csv
import io
import itertools
import json
import math
from pathlib import Path

import gpxpy
import pytest
from pyproj import Transformer

from core.activity import GRITTING
from core.cli import main as cli_main
from core.directions import build_directions, step_coords
from core.errors import NetworkError
from core.files import read_network
from core.files.circuit_geojson import circuit_geojson, write_circuit_geojson
from core.files.gpx import GPX_NS, gpx_text, write_gpx
from core.files.instructions_csv import COLUMNS, instructions_csv_text, write_instructions_csv
from core.model import Network, Node, Segment
from core.solve import plan_circuit

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "thistlewick.geojson"

TOL_M = 0.05
"""Metres: 7 decimals of a degree are about 1 cm, so a round trip stays well inside this."""


@pytest.fixture(scope="module")
def sample():
    network = read_network(SAMPLE)
    plan = plan_circuit(network, strategy="heuristic")
    directions = build_directions(network, plan.steps, activity=GRITTING, start="05:00")
    return network, plan, directions


def _circuit_vertices(network: Network, steps) -> list[tuple[float, float]]:
    """All vertices in driving order, the shared point of consecutive passes once."""
    out: list[tuple[float, float]] = []
    for s in steps:
        for p in step_coords(network, s):
            if not out or p != out[-1]:
                out.append(p)
    return out


def test_gpx_reads_back_and_reproduces_the_circuit(sample, tmp_path) -> None:
    network, plan, directions = sample
    path = tmp_path / "circuit.gpx"
    write_gpx(network, directions, path, name="Route 1")
    gpx = gpxpy.parse(path.read_text(encoding="utf-8"))  # gpxpy: general-purpose reader
    assert gpx.version == "1.1"
    assert len(gpx.tracks) == 1 and len(gpx.tracks[0].segments) == 1
    points = gpx.tracks[0].segments[0].points
    expected = _circuit_vertices(network, plan.steps)
    assert len(points) == len(expected)
    # Independent transformer (pyproj, always_xy: lon first) from WGS 84 to the working CRS.
    back = Transformer.from_crs("EPSG:4326", network.crs, always_xy=True)
    for pt, (x, y) in zip(points, expected, strict=True):
        assert -90 <= pt.latitude <= 90 and -180 <= pt.longitude < 180  # GPX 1.1 types
        bx, by = back.transform(pt.longitude, pt.latitude)
        assert math.hypot(bx - x, by - y) < TOL_M
    # The circuit closes at the depot.
    assert points[0].latitude == points[-1].latitude
    # Route points: one per instruction, named with its number, described with its words.
    route = gpx.routes[0].points
    assert [p.name for p in route] == [str(r.number) for r in directions.instructions]
    assert route[1].description.startswith(directions.instructions[1].text)


def test_gpx_element_order_and_namespace(sample) -> None:
    import xml.etree.ElementTree as ET

    network, _, directions = sample
    root = ET.fromstring(gpx_text(network, directions))
    # GPX 1.1 schema: gpxType is the sequence metadata?, wpt*, rte*, trk*, extensions?
    assert root.tag == f"{{{GPX_NS}}}gpx"
    assert root.get("version") == "1.1" and root.get("creator")
    assert [child.tag.split("}")[1] for child in root] == ["metadata", "rte", "trk"]


def _mercator_copy(network: Network) -> Network:
    """The same streets with coordinates in Web Mercator (EPSG:3857), via pyproj."""
    to_ll = Transformer.from_crs(network.crs, "EPSG:4326", always_xy=True)
    to_merc = Transformer.from_crs("EPSG:4326", "EPSG:3857", always_xy=True)

    def conv(x: float, y: float) -> tuple[float, float]:
        return to_merc.transform(*to_ll.transform(x, y))

    out = Network(network.name, "EPSG:3857")
    for n in network.nodes.values():
        out.add_node(Node(n.id, *conv(n.x, n.y), turning_place=n.turning_place))
    for s in network.segments.values():
        geom = tuple(conv(x, y) for x, y in s.geometry)
        out.add_segment(
            Segment(s.id, s.start, s.end, s.length, geom, s.name, s.oneway, s.service, s.passes)
        )
    return out


def test_gpx_is_lonlat_whatever_the_working_crs(sample) -> None:
    network, plan, _ = sample
    merc = _mercator_copy(network)
    steps = plan.steps[:40]
    d = build_directions(merc, steps)
    gpx = gpxpy.parse(gpx_text(merc, d))
    pts = gpx.tracks[0].segments[0].points
    utm_pts = _circuit_vertices(network, steps)
    to_ll = Transformer.from_crs(network.crs, "EPSG:4326", always_xy=True)
    merc_back = Transformer.from_crs("EPSG:4326", "EPSG:3857", always_xy=True)
    merc_pts = _circuit_vertices(merc, steps)
    assert len(pts) == len(utm_pts) == len(merc_pts)
    for pt, (x, y), (mx, my) in zip(pts, utm_pts, merc_pts, strict=True):
        lon, lat = to_ll.transform(x, y)
        # Same lon/lat as from the UTM original (1e-6° is about 10 cm at most) ...
        assert pt.longitude == pytest.approx(lon, abs=1e-6)
        assert pt.latitude == pytest.approx(lat, abs=1e-6)
        # ... and back on the Mercator vertex (Mercator metres stretch by 1/cos(lat)).
        bx, by = merc_back.transform(pt.longitude, pt.latitude)
        assert math.hypot(bx - mx, by - my) < TOL_M / math.cos(math.radians(lat))


def test_circuit_geojson_follows_rfc7946(sample, tmp_path) -> None:
    network, plan, directions = sample
    path = tmp_path / "circuit.geojson"
    write_circuit_geojson(network, directions, path)
    doc = json.loads(path.read_text(encoding="utf-8"))
    # RFC 7946 §3.3: a FeatureCollection has a "features" array of Feature objects.
    assert doc["type"] == "FeatureCollection"
    # RFC 7946 §4: no "crs" member (it was removed from the 2008 format); WGS 84 only.
    assert "crs" not in doc and all("crs" not in f for f in doc["features"])
    feats = doc["features"]
    assert len(feats) == len(plan.steps)
    west, south, east, north = doc["bbox"]  # RFC 7946 §5: [west, south, east, north]
    back = Transformer.from_crs("EPSG:4326", network.crs, always_xy=True)
    for k, (f, step) in enumerate(zip(feats, plan.steps, strict=True)):
        assert f["type"] == "Feature"
        g = f["geometry"]
        # §3.1.4: a LineString has two or more positions; §3.1.1: longitude first.
        assert g["type"] == "LineString" and len(g["coordinates"]) >= 2
        for lon, lat in g["coordinates"]:
            assert -180 <= lon <= 180 and -90 <= lat <= 90
            assert west <= lon <= east and south <= lat <= north
        props = f["properties"]
        assert props["step"] == k + 1
        assert props["service"] is step.service
        assert (props["from"], props["to"], props["segment"]) == (
            step.start,
            step.end,
            step.segment,
        )
        # The line, projected back, has the pass's length.
        xy = [back.transform(lon, lat) for lon, lat in g["coordinates"]]
        length = sum(math.dist(a, b) for a, b in itertools.pairwise(xy))
        assert length == pytest.approx(step.length, abs=0.1)
        # Consecutive passes meet (driving order).
        if k:
            assert feats[k - 1]["geometry"]["coordinates"][-1] == g["coordinates"][0]
    # Step numbers belong to the instruction rows that cover them.
    rows = {r.number: set(r.steps) for r in directions.instructions}
    for k, f in enumerate(feats):
        assert k in rows[f["properties"]["instruction"]]
    # Right-hand winding (§3.1.6) concerns polygons only; there are none here.
    assert not any(f["geometry"]["type"] in ("Polygon", "MultiPolygon") for f in feats)


def test_instruction_csv_reads_back(sample, tmp_path) -> None:
    _, _, directions = sample
    path = tmp_path / "instructions.csv"
    write_instructions_csv(directions, path)
    with path.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))  # Python's csv module (RFC 4180)
    assert list(rows[0]) == list(COLUMNS)
    assert len(rows) == len(directions.instructions)
    for row, ins in zip(rows, directions.instructions, strict=True):
        assert int(row["number"]) == ins.number
        assert row["instruction"] == ins.text
        assert float(row["distance_m"]) == pytest.approx(ins.length_m, abs=0.05)
        assert float(row["cumulative_m"]) == pytest.approx(ins.start_m, abs=0.05)
        assert row["clock"] == ins.clock
        assert row["segments"].split() == list(ins.segments)
    # RFC 4180 line ends.
    assert instructions_csv_text(directions).count("\r\n") == len(rows) + 1


def test_exports_need_coordinates() -> None:
    net = Network("abstract")
    for k in "ab":
        net.add_node(Node(k))
    net.add_segment(Segment("s1", "a", "b", 10.0))
    steps = plan_circuit(net, "a").steps
    d = build_directions(net, steps)
    with pytest.raises(NetworkError, match="needs map coordinates"):
        gpx_text(net, d)
    with pytest.raises(NetworkError, match="needs map coordinates"):
        circuit_geojson(net, d)
    # The CSV needs no coordinates.
    assert len(list(csv.reader(io.StringIO(instructions_csv_text(d))))) == 1 + len(d.instructions)


def test_plan_command_writes_the_exports(tmp_path, capsys) -> None:
    out = tmp_path / "p.plan.json"
    gpx, csv_path, gj = tmp_path / "c.gpx", tmp_path / "c.csv", tmp_path / "c.geojson"
    code = cli_main(
        [
            "plan",
            str(SAMPLE),
            "--strategy",
            "heuristic",
            "--out",
            str(out),
            "--gpx",
            str(gpx),
            "--instructions-csv",
            str(csv_path),
            "--circuit-geojson",
            str(gj),
            "--activity",
            "gritting",
            "--drive",
            "left",
            "--start",
            "05:15",
        ]
    )
    assert code == 0
    assert gpxpy.parse(gpx.read_text(encoding="utf-8")).tracks
    rows = list(csv.DictReader(csv_path.open(newline="", encoding="utf-8")))
    assert rows[0]["clock"] == "05:15"
    assert any(r["service_changes"].startswith("spreader on") for r in rows)
    assert json.loads(gj.read_text(encoding="utf-8"))["type"] == "FeatureCollection"
    assert cli_main(["plan", str(SAMPLE), "--activity", "mowing", "--out", str(out)]) == 2
    assert "'sweeping', 'gritting'" in capsys.readouterr().err
