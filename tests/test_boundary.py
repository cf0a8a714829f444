"""Tests of district boundary clipping (core.boundary) and the import report (core.report).

The networks are invented Thistlewick streets in UTM zone 25N (EPSG:32625,
the open Atlantic around 32°W 47°N).  References: the hand-worked example
below, GEOS (shapely) intersection lengths, and networkx's connected
components.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import networkx as nx
import numpy as np
import pyogrio
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from pyproj import Transformer

from core.boundary import (
    boundary_from_json,
    boundary_polygon,
    clip_to_boundary,
    read_boundary,
)
from core.errors import InputError
from core.model import Network, Node, OneWay, Segment, Service
from core.report import NO_CLASS, import_report, keep_largest_piece, piece_labels

CRS = "EPSG:32625"
X0, Y0 = 400_000.0, 5_205_000.0


def grid(oneway_b01: bool = True) -> Network:
    """Two rows of five nodes 100 m apart, a spur below A0 (worked example).

    ::

        B0 - B1 - B2 - B3 - B4        boundary: x in [50, 250], y in [-50, 150]
        |    |    |    |    |
        A0 - A1 - A2 - A3 - A4
        |
        C
    """
    net = Network("grid", CRS)
    for row, y in (("A", 0.0), ("B", 100.0)):
        for i in range(5):
            net.add_node(Node(f"{row}{i}", X0 + 100.0 * i, Y0 + y))
    net.add_node(Node("C", X0, Y0 - 100.0))

    def street(sid: str, a: str, b: str, **kw: object) -> None:
        na, nb = net.nodes[a], net.nodes[b]
        geometry = ((na.x, na.y), (nb.x, nb.y))
        net.add_segment(Segment(sid, a, b, geometry=geometry, name=sid, **kw))  # type: ignore[arg-type]

    for row in "AB":
        for i in range(4):
            kw: dict[str, object] = {}
            if row == "B" and i == 0 and oneway_b01:
                kw["oneway"] = OneWay.FORWARD
            if row == "A" and i == 0:
                kw["length"] = 120.0  # given, not measured
                kw["demand"] = 4.0
            street(f"{row}{i}{row}{i + 1}", f"{row}{i}", f"{row}{i + 1}", **kw)
    for i in range(5):
        street(f"A{i}B{i}", f"A{i}", f"B{i}")
    street("A0C", "A0", "C")
    return net


BOX = shapely.box(X0 + 50, Y0 - 50, X0 + 250, Y0 + 150)


def test_worked_example() -> None:
    net = grid()
    before = dict(net.segments)
    result = clip_to_boundary(net, BOX)
    out, summary = result.network, result.summary
    assert net.segments == before  # the input is not modified
    assert set(summary.cut) == {"A0A1", "B0B1", "A2A3", "B2B3"}
    assert len(summary.boundary_nodes) == 4
    # Worked by hand: the outside paths A0A1-cut -> A0 -> B0 -> B0B1-cut and
    # A2A3-cut -> A3 -> B3 -> B2B3-cut (200 m each) connect the district;
    # the spur to C and everything east of A3-B3 do not.
    assert set(summary.dropped) == {"A3A4", "B3B4", "A4B4", "A0C"}
    kept_from = {sid.split("/")[0] for sid in summary.outside_kept}
    assert kept_from == {"A0A1", "A0B0", "B0B1", "A2A3", "A3B3", "B2B3"}
    for sid in summary.outside_kept:
        assert out.segments[sid].service is Service.NONE
    for sid in summary.inside:
        assert out.segments[sid].service is Service.EITHER
    # Cut points lie on the boundary, at x = 50 and x = 250.
    xs = sorted(round(out.nodes[n].x - X0, 6) for n in summary.boundary_nodes)
    assert xs == [50.0, 50.0, 250.0, 250.0]
    # A given length (120 m for 100 m drawn) and the demand are shared in
    # proportion to the drawn parts.
    parts = [s for s in out if s.id.startswith("A0A1/")]
    assert sorted(s.length for s in parts) == pytest.approx([60.0, 60.0])
    assert sum(s.demand for s in parts) == pytest.approx(4.0)
    # The one-way street keeps its direction on both parts.
    b01 = sorted((s for s in out if s.id.startswith("B0B1/")), key=lambda s: s.id)
    assert [s.oneway for s in b01] == [OneWay.FORWARD, OneWay.FORWARD]
    assert b01[0].start == "B0" and b01[1].end == "B1" and b01[0].end == b01[1].start


def test_inside_length_matches_geos_intersection() -> None:
    net = grid()
    out = clip_to_boundary(net, BOX).network
    inside = [s for s in out if s.service is not Service.NONE]
    # GEOS: the length of every street's intersection with the polygon.
    reference = sum(shapely.LineString(s.geometry).intersection(BOX).length for s in net)
    assert sum(shapely.LineString(s.geometry).length for s in inside) == pytest.approx(reference)


def test_outside_drop_and_limit() -> None:
    net = grid()
    dropped = clip_to_boundary(net, BOX, outside="drop")
    assert dropped.summary.outside_kept == ()
    assert all(s.service is not Service.NONE for s in dropped.network)
    short = clip_to_boundary(net, BOX, max_outside_m=150.0)  # the 200 m paths are too long
    assert short.summary.outside_kept == ()
    with pytest.raises(InputError, match="'connecting', 'drop'"):
        clip_to_boundary(net, BOX, outside="all")


def test_one_way_blocks_a_connection() -> None:
    # Both left rungs one-way into the district: no outside path leads from
    # one attachment to the other, so nothing on the left is kept.
    net = grid()
    a01 = net.segments["A0A1"]
    net.replace_segment(Segment(**{**_fields(a01), "oneway": OneWay.FORWARD}))
    out = clip_to_boundary(net, BOX)
    kept_from = {sid.split("/")[0] for sid in out.summary.outside_kept}
    assert kept_from == {"A2A3", "A3B3", "B2B3"}


def _fields(seg: Segment) -> dict[str, object]:
    names = ("id", "start", "end", "geometry", "name", "oneway", "service", "passes", "demand")
    out = {k: getattr(seg, k) for k in names}
    if seg.length_given:
        out["length"] = seg.length
    return out


def test_depot_outside_is_reported() -> None:
    net = grid()
    net.depot = "A4"
    assert clip_to_boundary(net, BOX).summary.depot_dropped
    net.depot = "A1"
    result = clip_to_boundary(net, BOX)
    assert result.network.depot == "A1" and not result.summary.depot_dropped


def test_boundary_polygon_checks() -> None:
    with pytest.raises(InputError, match="three distinct points"):
        boundary_polygon([(0, 0), (1, 1)])
    with pytest.raises(InputError, match="no area"):
        boundary_polygon([(0, 0), (1, 1), (2, 2)])
    # A self-crossing ring (a bow tie) is repaired into two triangles.
    bow = boundary_polygon([(0, 0), (2, 2), (2, 0), (0, 2)])
    assert bow.area == pytest.approx(2.0)


def _lonlat_box() -> list[list[float]]:
    back = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True).transform
    x0, y0, x1, y1 = BOX.bounds
    return [list(back(x, y)) for x, y in [(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]]


def test_read_boundary_geojson(tmp_path: Path) -> None:
    ring = _lonlat_box()
    doc = {
        "type": "FeatureCollection",
        "features": [
            {
                "type": "Feature",
                "properties": {"name": "district 4"},
                "geometry": {"type": "Polygon", "coordinates": [ring]},
            }
        ],
    }
    path = tmp_path / "district.geojson"
    path.write_text(json.dumps(doc), encoding="utf-8")
    area = read_boundary(path, CRS)
    assert area.symmetric_difference(BOX).area < 1e-3 * BOX.area
    assert boundary_from_json(json.dumps(doc), CRS).equals_exact(area, 1e-9)
    a = clip_to_boundary(grid(), area).summary
    assert set(a.cut) == {"A0A1", "B0B1", "A2A3", "B2B3"}


def test_read_boundary_gpkg(tmp_path: Path) -> None:
    path = tmp_path / "district.gpkg"
    pyogrio.raw.write(
        str(path),
        shapely.to_wkb(np.array([BOX], dtype=object)),
        [np.array(["district 4"], dtype=object)],
        ["name"],
        driver="GPKG",
        geometry_type="Polygon",
        crs=CRS,
        layer="districts",
    )
    area = read_boundary(path, CRS)
    assert area.equals_exact(BOX.normalize(), 1e-6) or area.symmetric_difference(BOX).area < 1e-6
    with pytest.raises(InputError, match="districts"):
        read_boundary(path, CRS, layer="wards")


def test_read_boundary_without_polygon(tmp_path: Path) -> None:
    path = tmp_path / "lines.geojson"
    path.write_text('{"type": "LineString", "coordinates": [[0, 0], [1, 1]]}', "utf-8")
    with pytest.raises(InputError, match="no Polygon"):
        read_boundary(path, CRS)


def test_network_without_coordinates_is_refused() -> None:
    net = Network("abstract")
    net.add_node(Node("a"))
    net.add_node(Node("b"))
    net.add_segment(Segment("s", "a", "b", length=5.0))
    with pytest.raises(InputError, match="no coordinates"):
        clip_to_boundary(net, BOX)


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.tuples(st.floats(-80, 480), st.floats(-150, 250)), min_size=3, max_size=7),
)
def test_random_boundaries_keep_the_inside_length(ring: list[tuple[float, float]]) -> None:
    try:
        area = boundary_polygon([(X0 + x, Y0 + y) for x, y in ring])
    except InputError:
        return
    net = grid()
    result = clip_to_boundary(net, area)
    out = result.network
    inside = sum(
        shapely.LineString(s.geometry).length for s in out if s.service is not Service.NONE
    )
    # GEOS: the inside length is the total length of the streets' intersections.
    reference = sum(shapely.LineString(s.geometry).intersection(area).length for s in net)
    assert inside == pytest.approx(reference, abs=1e-6)
    for seg in out:  # every kept part is a proper segment of the new network
        assert seg.start in out.nodes and seg.end in out.nodes
        assert seg.length > 0


# -- the import report ----------------------------------------------------------


def test_report_figures() -> None:
    net = grid()
    s = net.segments["A0B0"]
    net.replace_segment(Segment(**{**_fields(s), "attrs": {"road_class": "residential"}}))
    report = import_report(net)
    assert report.segments == 14 and report.nodes == 11
    assert report.one_way_segments == 1
    assert report.dead_ends == ("C",)
    assert report.km_by_class["residential"] == pytest.approx(0.1)
    assert report.km_by_class[NO_CLASS] == pytest.approx(1.32)  # 12 x 100 m + 120 m given
    assert len(report.pieces) == 1 and report.other_piece_segments == ()
    text = report.text()
    assert "14 street segments" in text and "residential" in text


def _random_network(seed: int, n: int, m: int) -> Network:
    rng = np.random.default_rng(seed)
    net = Network("random", CRS)
    for i in range(n):
        net.add_node(
            Node(f"n{i}", X0 + float(rng.uniform(0, 1000)), Y0 + float(rng.uniform(0, 1000)))
        )
    for k in range(m):
        a, b = rng.choice(n, 2, replace=False)
        oneway = [OneWay.NO, OneWay.FORWARD, OneWay.BACKWARD][int(rng.integers(3))]
        net.add_segment(Segment(f"s{k}", f"n{a}", f"n{b}", length=10.0 + k, oneway=oneway))
    return net


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10_000), st.integers(2, 25), st.integers(1, 30))
def test_pieces_match_networkx(seed: int, n: int, m: int) -> None:
    net = _random_network(seed, n, m)
    for connection in ("weak", "strong"):
        report = import_report(net, connection=connection)
        graph = nx.DiGraph()
        graph.add_nodes_from(net.nodes)
        for s in net:
            a, b = (s.end, s.start) if s.oneway is OneWay.BACKWARD else (s.start, s.end)
            graph.add_edge(a, b)
            if s.oneway is OneWay.NO:
                graph.add_edge(b, a)
        # networkx's components as the reference.
        comps = (
            nx.weakly_connected_components(graph)
            if connection == "weak"
            else nx.strongly_connected_components(graph)
        )
        sizes = sorted(
            (n_segs for c in comps if (n_segs := sum(s.start in c and s.end in c for s in net))),
            reverse=True,
        )
        assert [len(p.segments) for p in report.pieces] == sizes
        largest = keep_largest_piece(net, connection=connection)
        assert len(largest) == (sizes[0] if sizes else 0)
        ids, labels = piece_labels(largest, connection)
        if len(largest):
            used = {e for s in largest for e in (s.start, s.end)}
            assert len({labels[ids.index(x)] for x in used}) == 1


def test_keep_largest_and_show_the_others() -> None:
    net = grid()
    net.add_node(Node("far1", X0 + 5000, Y0))
    net.add_node(Node("far2", X0 + 5100, Y0))
    net.add_segment(Segment("island", "far1", "far2", geometry=((X0 + 5000, Y0), (X0 + 5100, Y0))))
    net.depot = "far1"
    report = import_report(net)
    assert [len(p.segments) for p in report.pieces] == [14, 1]
    assert report.other_piece_segments == ("island",)
    assert "connected pieces: 2" in report.text()
    kept = keep_largest_piece(net)
    assert "island" not in kept.segments and len(kept) == 14
    assert kept.depot is None  # the depot was on the island
    assert "island" in net.segments  # the input is unchanged
    with pytest.raises(InputError, match="'weak', 'strong'"):
        import_report(net, connection="loose")
    assert math.isclose(report.length_km, sum(s.length for s in net) / 1000)


def test_cli_boundary(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from core.cli import main
    from core.files.geojson import write_geojson

    streets = tmp_path / "grid.geojson"
    write_geojson(grid(oneway_b01=False), streets)
    district = tmp_path / "district.geojson"
    district.write_text(
        json.dumps({"type": "Polygon", "coordinates": [_lonlat_box()]}), encoding="utf-8"
    )
    assert main(["info", str(streets)]) == 0
    whole = capsys.readouterr().out
    assert main(["info", str(streets), "--boundary", str(district)]) == 0
    cut = capsys.readouterr().out
    assert "streets           14" in whole
    # 4 inside + 4 cut inside parts need service; 6 outside parts connect.
    assert "needing service   8" in cut and "streets           14" in cut
