"""Tests of the GeoJSON reader and writer (core.files.geojson).

All test streets are invented and lie in the open Atlantic around 32°W 47°N.
"""

from __future__ import annotations

import json
import math
import time
from collections import Counter
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pyproj import Geod

from core.errors import InputError
from core.files.geojson import (
    network_to_geojson,
    parse_geojson,
    read_geojson,
    write_geojson,
)
from core.model import Network, Node, OneWay, Segment, Service

LON0, LAT0 = -32.0, 47.0
GEOD = Geod(ellps="WGS84")


def at(east_m: float, north_m: float) -> list[float]:
    """Longitude/latitude roughly ``east_m``/``north_m`` metres from the origin."""
    return [
        LON0 + east_m / (111_320.0 * math.cos(math.radians(LAT0))),
        LAT0 + north_m / 111_132.0,
    ]


def line(coords: list[list[float]], fid: Any = None, **props: Any) -> dict[str, Any]:
    feature: dict[str, Any] = {
        "type": "Feature",
        "geometry": {"type": "LineString", "coordinates": coords},
        "properties": props,
    }
    if fid is not None:
        feature["id"] = fid
    return feature


def point(coords: list[float], **props: Any) -> dict[str, Any]:
    return {
        "type": "Feature",
        "geometry": {"type": "Point", "coordinates": coords},
        "properties": props,
    }


def collection(*features: dict[str, Any], **members: Any) -> dict[str, Any]:
    return {"type": "FeatureCollection", "features": list(features), **members}


def geodesic_length(coords: list[list[float]]) -> float:
    lons, lats = zip(*coords, strict=True)
    return GEOD.line_length(lons, lats)


def error_of(doc: dict[str, Any] | str, **kwargs: Any) -> InputError:
    with pytest.raises(InputError) as info:
        parse_geojson(doc, source="test.geojson", **kwargs)
    return info.value


# -- reading and noding ---------------------------------------------------------


def test_plus_crossing_with_shared_vertex_becomes_four_segments() -> None:
    centre = at(0, 0)
    doc = collection(
        line([at(-100, 0), centre, at(100, 0)], name="Ridge Row"),
        line([at(0, -100), centre, at(0, 100)], name="Kelp Walk"),
    )
    net = parse_geojson(doc)
    assert len(net.nodes) == 5
    assert len(net.segments) == 4
    assert sorted(net.segments) == ["f0.1", "f0.2", "f1.1", "f1.2"]
    # The centre node is shared by all four pieces.
    ends = Counter(end for s in net for end in (s.start, s.end))
    assert sorted(ends.values()) == [1, 1, 1, 1, 4]
    assert list(net.nodes) == ["n1", "n2", "n3", "n4", "n5"]


def test_crossing_without_shared_vertex_is_a_bridge() -> None:
    doc = collection(
        line([at(-100, 0), at(100, 0)], name="Upper Deck"),
        line([at(0, -100), at(0, 100)], name="Lower Deck"),
    )
    net = parse_geojson(doc)
    assert len(net.segments) == 2
    assert len(net.nodes) == 4


def test_interior_vertex_shared_with_same_line_makes_a_node() -> None:
    # A lasso: the line comes back to its own second vertex.
    a, b, c, d = at(0, 0), at(100, 0), at(150, 50), at(150, -50)
    net = parse_geojson(collection(line([a, b, c, d, b])))
    assert len(net.nodes) == 2  # a and b
    loop = [s for s in net if s.is_loop]
    assert len(loop) == 1 and len(net.segments) == 2


def test_parallel_segments_and_loops_are_kept() -> None:
    a, b = at(0, 0), at(200, 0)
    doc = collection(
        line([a, at(100, 30), b], fid="north"),
        line([a, at(100, -30), b], fid="south"),
        line([b, at(250, 40), at(300, 0), at(250, -40), b], fid="circle"),
    )
    net = parse_geojson(doc)
    assert len(net.nodes) == 2
    assert net.segments["north"].start == net.segments["south"].start
    assert net.segments["north"].end == net.segments["south"].end
    assert net.segments["circle"].is_loop


def test_snap_tolerance_joins_nearby_ends() -> None:
    doc = collection(line([at(0, 0), at(100, 0)]), line([at(100.3, 0), at(200, 0)]))
    assert len(parse_geojson(doc).nodes) == 3  # default 0.5 m joins the 0.3 m gap
    assert len(parse_geojson(doc, snap_tolerance=0.1).nodes) == 4
    net = parse_geojson(doc)
    # The snapped ends lie exactly on the shared node.
    joint = net.segments["f0"].end
    assert net.segments["f1"].start == joint
    node = net.nodes[joint]
    assert net.segments["f1"].geometry[0] == (node.x, node.y)
    assert net.segments["f0"].geometry[-1] == (node.x, node.y)


def test_densely_drawn_line_does_not_collapse() -> None:
    # Vertices 0.3 m apart, closer than the tolerance: the line keeps its
    # length instead of chaining into one point.
    coords = [at(0.3 * i, 0) for i in range(200)]
    net = parse_geojson(collection(line(coords)))
    assert len(net.segments) == 1
    assert net.segments["f0"].length == pytest.approx(geodesic_length(coords), rel=0.01)


def test_projection_to_utm_and_lengths_match_geodesic() -> None:
    streets = [
        [at(0, 0), at(300, 40), at(650, 10)],
        [at(650, 10), at(700, 500), at(1200, 900)],
        [at(-400, -300), at(0, 0)],
    ]
    net = parse_geojson(collection(*(line(c) for c in streets)))
    # UTM zone 25N: the EPSG registry code for 36°W-30°W, northern hemisphere.
    assert net.crs == "EPSG:32625"
    for k, coords in enumerate(streets):
        # Reference: WGS 84 geodesic length (pyproj.Geod); the projection must
        # be within 0.5 %.
        assert net.segments[f"f{k}"].length == pytest.approx(geodesic_length(coords), rel=0.005)


def test_position_order_is_longitude_first() -> None:
    # RFC 7946 section 3.1.1: "longitude, latitude" (x, y).  A line running
    # due north in lon/lat must run along +y after projection (within the
    # UTM grid convergence, under 1° here).
    net = parse_geojson(collection(line([at(0, 0), at(0, 500)])))
    (x0, y0), (x1, y1) = net.segments["f0"].geometry
    assert abs(x1 - x0) < 0.02 * (y1 - y0)
    assert y1 - y0 == pytest.approx(500, rel=0.01)


def test_multilinestring_parts_are_lines() -> None:
    # RFC 7946 section 3.1.6: a MultiLineString is an array of LineString
    # coordinate arrays.
    feature = {
        "type": "Feature",
        "id": "harbour",
        "geometry": {
            "type": "MultiLineString",
            "coordinates": [[at(0, 0), at(100, 0)], [at(0, 50), at(100, 50)]],
        },
        "properties": {"name": "Harbour Quay"},
    }
    net = parse_geojson(collection(feature))
    assert sorted(net.segments) == ["harbour.1", "harbour.2"]
    assert {s.name for s in net} == {"Harbour Quay"}
    assert len(net.nodes) == 4


def test_single_feature_document() -> None:
    net = parse_geojson(line([at(0, 0), at(100, 0)], fid=7, name="Lone Lane"))
    assert list(net.segments) == ["7"]


def test_properties() -> None:
    doc = collection(
        line(
            [at(0, 0), at(100, 0)],
            name="Brine Street",
            oneway="yes",
            service="along",
            passes=2,
            demand=40,
            priority="high",
        ),
        line([at(100, 0), at(100, 100)], oneway=-1, service="both", length_m=250),
        line([at(100, 100), at(0, 0)], id="diag", service="none", oneway=False),
    )
    net = parse_geojson(doc)
    a, b, c = net.segments["f0"], net.segments["f1"], net.segments["diag"]
    assert (a.name, a.oneway, a.service, a.passes, a.demand) == (
        "Brine Street",
        OneWay.FORWARD,
        Service.ALONG,
        2,
        40.0,
    )
    assert a.attrs == {"priority": "high"}
    assert not a.length_given
    assert (b.oneway, b.service, b.length, b.length_given) == (
        OneWay.BACKWARD,
        Service.BOTH,
        250.0,
        True,
    )
    assert (c.oneway, c.service) == (OneWay.NO, Service.NONE)
    assert "id" not in c.attrs
    # Absent service means one pass in either direction.
    plain = parse_geojson(collection(line([at(0, 0), at(10, 0)])))
    assert plain.segments["f0"].service is Service.EITHER
    assert plain.segments["f0"].passes == 1


def test_given_length_and_demand_are_shared_over_pieces() -> None:
    doc = collection(
        line([at(0, 0), at(100, 0), at(300, 0)], fid="spine", length_m=600, demand=30),
        line([at(100, -50), at(100, 0), at(100, 50)], fid="rib"),
    )
    net = parse_geojson(doc)
    one, two = net.segments["spine.1"], net.segments["spine.2"]
    assert one.length + two.length == pytest.approx(600)
    assert one.length == pytest.approx(200, rel=0.01)  # a third of the drawn line
    assert one.demand + two.demand == pytest.approx(30)
    assert one.length_given and two.length_given


def test_depot_and_turning_places_snap_to_nearest_node() -> None:
    doc = collection(
        line([at(0, 0), at(100, 0), at(200, 0)], fid="a"),
        line([at(100, 0), at(100, 100)], fid="b"),
        point(at(3, 4), depot=True),
        point(at(101, 98), turning_place=True),
    )
    net = parse_geojson(doc)
    assert net.depot == net.segments["a.1"].start
    dead_end = net.segments["b"].end
    assert net.nodes[dead_end].turning_place
    assert sum(n.turning_place for n in net.nodes.values()) == 1
    alt = parse_geojson(collection(*doc["features"][:2], point(at(199, 0), role="depot")))
    assert alt.depot == net.segments["a.2"].end


def test_input_document_is_not_modified() -> None:
    doc = collection(
        line([at(0, 0), at(100, 0), at(200, 0)], name="Keel Road", colour="blue"),
        line([at(100, -50), at(100, 0)]),
        point(at(0, 0), depot=True),
    )
    before = json.dumps(doc, sort_keys=True)
    parse_geojson(doc)
    assert json.dumps(doc, sort_keys=True) == before


def test_old_style_crs_member_with_metres() -> None:
    # GeoJSON 2008 specification, section 3.1: a named CRS.  Coordinates are
    # taken as metres in that CRS.
    doc = collection(
        line([[500_000.0, 5_200_000.0], [500_300.0, 5_200_400.0]]),
        crs={"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32625"}},
    )
    net = parse_geojson(doc)
    assert net.crs == "EPSG:32625"
    assert net.segments["f0"].geometry == ((500_000.0, 5_200_000.0), (500_300.0, 5_200_400.0))
    assert net.segments["f0"].length == pytest.approx(500.0)


def test_old_style_crs_in_web_mercator_is_reprojected() -> None:
    # EPSG:3857 stretches lengths by about 1/cos(47°) here, so the reader
    # reprojects to UTM; lengths must match the geodesic (pyproj.Geod).
    from pyproj import Transformer

    lonlat = [at(0, 0), at(400, 300)]
    to_merc = Transformer.from_crs("EPSG:4326", "EPSG:3857", always_xy=True)
    merc = [list(to_merc.transform(*p)) for p in lonlat]
    doc = collection(line(merc), crs={"type": "name", "properties": {"name": "EPSG:3857"}})
    net = parse_geojson(doc)
    assert net.crs == "EPSG:32625"
    assert net.segments["f0"].length == pytest.approx(geodesic_length(lonlat), rel=0.005)


def test_large_network_is_noded_quickly() -> None:
    # A 300 x 300 grid of streets drawn with a vertex at every crossing:
    # 102 000 vertices.  An all-pairs comparison would take hours.
    step = 0.0005
    features = []
    for i in range(300):
        features.append(line([[LON0 + j * step, LAT0 + i * step] for j in range(170)]))
        features.append(line([[LON0 + i * step, LAT0 + j * step] for j in range(170)]))
    started = time.perf_counter()
    net = parse_geojson(collection(*features))
    elapsed = time.perf_counter() - started
    assert len(net.nodes) > 25_000
    assert elapsed < 20.0


# -- errors ----------------------------------------------------------------------


def test_broken_json_names_the_line() -> None:
    text = '{"type": "FeatureCollection",\n "features": [\n  {"type": "Feature",, }\n]}'
    err = error_of(text)
    assert err.line == 3
    assert "line 3" in str(err) and "test.geojson" in str(err)


def test_empty_text() -> None:
    assert "empty" in str(error_of("   \n"))


def test_nan_coordinates_are_rejected_naming_the_feature() -> None:
    # RFC 7946 section 6 / RFC 8259 section 6: JSON numbers have no NaN or
    # Infinity, though Python's json module accepts the literals.
    good = json.dumps(line([at(0, 0), at(10, 0)]))
    text = (
        '{"type": "FeatureCollection", "features": [' + good + ", "
        '{"type": "Feature", "properties": {}, "geometry": {"type": "LineString", '
        '"coordinates": [[-32.0, 47.0], [NaN, 47.0]]}}]}'
    )
    err = error_of(text)
    assert err.feature == 1
    assert "feature 1" in str(err) and "finite" in str(err)
    text_inf = text.replace("NaN", "Infinity")
    assert error_of(text_inf).feature == 1
    assert error_of(text.replace("NaN", "1e999")).feature == 1  # overflows to infinity


def test_nan_property_is_rejected() -> None:
    text = json.dumps(collection(line([at(0, 0), at(10, 0)], width=math.nan)))
    err = error_of(text)
    assert err.feature == 0 and "width" in str(err)


@pytest.mark.parametrize(
    "coords",
    [
        [[-32.0, 47.0]],  # RFC 7946 section 3.1.4: "two or more positions"
        [],
        [[-32.0, 47.0], [-32.0, 47.0]],  # two positions, one point
    ],
)
def test_lines_need_two_distinct_points(coords: list[list[float]]) -> None:
    doc = collection(line([at(0, 0), at(10, 0)]), line(coords, name="Stub Row"))
    err = error_of(doc)
    assert err.feature == 1
    assert "Stub Row" in str(err)


def test_bad_position_shape() -> None:
    # RFC 7946 section 3.1.1: a position is an array of two or more numbers.
    err = error_of(collection(line([[-32.0, 47.0], ["-32.001", 47.0]])))
    assert err.feature == 0 and "RFC 7946 section 3.1.1" in str(err)


def test_line_collapsing_to_zero_length() -> None:
    doc = collection(line([at(0, 0), at(500, 0)]), line([at(0, 100), at(0.2, 100)], name="Speck"))
    err = error_of(doc)
    assert err.feature == 1 and "collapses" in str(err) and "Speck" in str(err)


@pytest.mark.parametrize(
    ("props", "word"),
    [
        ({"service": "sometimes"}, "sometimes"),
        ({"oneway": "maybe"}, "maybe"),
        ({"passes": 0}, "passes"),
        ({"passes": 1.5}, "passes"),
        ({"length_m": -3}, "length_m"),
        ({"length_m": "long"}, "length_m"),
        ({"demand": -1}, "demand"),
    ],
)
def test_invalid_property_values(props: dict[str, Any], word: str) -> None:
    doc = collection(
        line([at(0, 0), at(10, 0)]), line([at(10, 0), at(20, 0)], name="Gull Way", **props)
    )
    err = error_of(doc)
    assert err.feature == 1
    assert word in str(err) and "Gull Way" in str(err)


def test_along_on_two_way_street_names_the_feature() -> None:
    doc = collection(
        line([at(0, 0), at(10, 0)]),
        line([at(10, 0), at(20, 0)], name="Tide Lane", service="along"),
    )
    err = error_of(doc)
    assert err.feature == 1
    assert "Tide Lane" in str(err) and "one-way" in str(err)


def test_unsupported_geometry_names_the_feature() -> None:
    polygon = {
        "type": "Feature",
        "properties": {},
        "geometry": {"type": "Polygon", "coordinates": [[at(0, 0), at(9, 0), at(9, 9), at(0, 0)]]},
    }
    err = error_of(collection(line([at(0, 0), at(10, 0)]), polygon))
    assert err.feature == 1 and "Polygon" in str(err)
    assert error_of(collection(line([at(0, 0), at(10, 0)]), point(at(5, 5)))).feature == 1
    null_geometry = {"type": "Feature", "properties": {}, "geometry": None}
    assert error_of(collection(null_geometry)).feature == 0


def test_no_line_features() -> None:
    assert "no LineString" in str(error_of(collection()))
    assert "no LineString" in str(error_of(collection(point(at(0, 0), depot=True))))


def test_not_a_feature_collection() -> None:
    err = error_of({"type": "Point", "coordinates": [0, 0]})
    assert "FeatureCollection" in str(err)


@pytest.mark.parametrize("bad", [[-181.0, 47.0], [-32.0, 90.5]])
def test_longitude_latitude_ranges(bad: list[float]) -> None:
    # RFC 7946 section 4: WGS 84 longitude and latitude in decimal degrees.
    err = error_of(collection(line([at(0, 0), at(10, 0)]), line([at(10, 0), bad])))
    assert err.feature == 1 and "longitude" in str(err)


def test_duplicate_ids() -> None:
    doc = collection(line([at(0, 0), at(10, 0)], fid="x"), line([at(10, 0), at(20, 0)], fid="x"))
    err = error_of(doc)
    assert err.feature == 1 and "feature 0" in str(err)


def test_two_depots() -> None:
    doc = collection(
        line([at(0, 0), at(10, 0)]),
        point(at(0, 0), depot=True),
        point(at(10, 0), depot=True),
    )
    assert error_of(doc).feature == 2


def test_bad_crs_member() -> None:
    doc = collection(
        line([[0, 0], [10, 0]]), crs={"type": "name", "properties": {"name": "nowhere"}}
    )
    assert "nowhere" in str(error_of(doc))


# -- writing ---------------------------------------------------------------------


def sample_network() -> Network:
    doc = collection(
        line([at(0, 0), at(120, 10), at(250, 0)], fid="quay", name="Quay Row", demand=12.5),
        line([at(120, 10), at(130, 150)], name="Net Lane", oneway="yes", service="along"),
        line([at(250, 0), at(260, -90)], name="Salt Steps", service="both", passes=2, length_m=95),
        line([at(260, -90), at(300, -60), at(310, -120), at(260, -90)], name="Buoy Circle"),
        line([at(0, 0), at(-80, 0)], service="none", surface="gravel"),
        point(at(0, 0), depot=True),
        point(at(130, 150), turning_place=True),
    )
    return parse_geojson(doc, name="Test district")


def test_written_features_follow_rfc7946() -> None:
    net = sample_network()
    doc = network_to_geojson(net)
    assert doc["type"] == "FeatureCollection"
    lines = [f for f in doc["features"] if f["geometry"]["type"] == "LineString"]
    points = [f for f in doc["features"] if f["geometry"]["type"] == "Point"]
    assert len(lines) == len(net.segments)
    for f in lines:
        coords = f["geometry"]["coordinates"]
        assert len(coords) >= 2  # RFC 7946 section 3.1.4
        for lon, lat in coords:  # RFC 7946 section 4: longitude first
            assert -180 <= lon <= 180 and -90 <= lat <= 90
            assert round(lon, 7) == lon and round(lat, 7) == lat
    props = {f["properties"]["id"]: f["properties"] for f in lines}
    assert props["quay.1"]["name"] == "Quay Row"
    assert "length_m" not in props["quay.1"]
    assert props["f2"]["length_m"] == 95
    assert props["f2"]["passes"] == 2
    assert props["f4"]["surface"] == "gravel"
    assert "demand" not in props["f4"]
    assert [p["properties"] for p in points] == [
        {"depot": True, "node": net.depot},
        {"turning_place": True, "node": net.segments["f1"].end},
    ]
    json.dumps(doc, allow_nan=False)  # RFC 8259: no NaN anywhere


def rounding_bound(decimals: int, vertices: int) -> float:
    """Largest length change, in metres, from rounding a line's positions.

    Rounding moves a position by at most half a unit of the last place in
    each axis: 0.5 * 10**-decimals degree, i.e. 111.1 km/degree of latitude
    (WGS 84 meridian arc near 47°) and 111.3 km * cos(latitude) per degree of
    longitude.  Each vertex touches at most two edges of the polyline.
    """
    half = 0.5 * 10.0**-decimals
    shift = math.hypot(half * 111_320.0 * math.cos(math.radians(LAT0)), half * 111_200.0)
    return 2 * vertices * shift


@pytest.mark.parametrize("decimals", [7, 8])
def test_round_trip_reproduces_the_network(tmp_path: Path, decimals: int) -> None:
    net = sample_network()
    path = tmp_path / "district.geojson"
    write_geojson(net, path, decimals=decimals)
    back = read_geojson(path)
    assert back.name == "Test district"
    assert len(back.nodes) == len(net.nodes)
    assert set(back.segments) == set(net.segments)
    for sid, seg in net.segments.items():
        other = back.segments[sid]
        assert (other.name, other.oneway, other.service, other.passes) == (
            seg.name,
            seg.oneway,
            seg.service,
            seg.passes,
        )
        # 8 places (about 1 mm) keep every length within 1 cm; 7 places
        # within the rounding bound (up to 2.7 cm for a two-point line).
        tolerance = 0.01 if decimals == 8 else rounding_bound(7, len(seg.geometry))
        assert other.length == pytest.approx(seg.length, abs=tolerance)
        assert rounding_bound(8, len(seg.geometry)) < 0.01
        assert other.length_given == seg.length_given
        assert other.demand == pytest.approx(seg.demand)
    assert back.nodes[back.depot].x == pytest.approx(net.nodes[net.depot].x, abs=0.02)
    assert sum(n.turning_place for n in back.nodes.values()) == 1


def test_writing_a_network_without_coordinates(tmp_path: Path) -> None:
    net = Network("abstract")
    net.add_node(Node("1"))
    net.add_node(Node("2"))
    net.add_segment(Segment("e1", "1", "2", length=5.0))
    with pytest.raises(InputError, match="no coordinates; save it as a Roundsman project"):
        write_geojson(net, tmp_path / "x.geojson")
    assert not (tmp_path / "x.geojson").exists()


def test_writing_without_crs_is_refused() -> None:
    net = Network("plane")
    net.add_node(Node("a", 0.0, 0.0))
    net.add_node(Node("b", 10.0, 0.0))
    net.add_segment(Segment("s", "a", "b", length=10.0))
    with pytest.raises(InputError, match="coordinate reference system"):
        network_to_geojson(net)


# -- property-based round trip ---------------------------------------------------

# Vertices on a grid of 50 m cells: shared vertices coincide exactly, others are
# far apart compared with the 0.5 m snapping tolerance.
grid_point = st.tuples(st.integers(0, 6), st.integers(0, 6))


@st.composite
def grid_lines(draw: st.DrawFn) -> list[list[tuple[int, int]]]:
    lines = []
    for _ in range(draw(st.integers(1, 8))):
        pts = draw(st.lists(grid_point, min_size=2, max_size=6))
        # Drop repeated consecutive points; a line needs two distinct points.
        pts = [p for k, p in enumerate(pts) if k == 0 or p != pts[k - 1]]
        if len(set(pts)) >= 2:
            lines.append(pts)
    if not lines:
        lines.append([(0, 0), (1, 0)])
    return lines


@settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)
@given(
    grid_lines(),
    st.lists(st.sampled_from(["no", "yes", "-1"]), min_size=8, max_size=8),
)
def test_random_line_sets_round_trip(
    lines: list[list[tuple[int, int]]], oneways: list[str]
) -> None:
    features = [
        line([at(50 * x, 50 * y) for x, y in pts], name=f"Street {k}", oneway=oneways[k])
        for k, pts in enumerate(lines)
    ]
    first = parse_geojson(collection(*features))
    second = parse_geojson(network_to_geojson(first))
    third = parse_geojson(network_to_geojson(second))
    for net in (second, third):
        assert len(net.nodes) == len(first.nodes)
        assert len(net.segments) == len(first.segments)
        assert set(net.segments) == set(first.segments)
        for sid, seg in first.segments.items():
            bound = rounding_bound(7, len(seg.geometry))
            assert net.segments[sid].length == pytest.approx(seg.length, abs=bound)
            assert net.segments[sid].oneway is seg.oneway
            assert net.segments[sid].name == seg.name


def test_broken_features_can_be_skipped_and_are_listed() -> None:
    # RFC 7946 section 3.1.4: a LineString needs two or more positions.
    doc = {
        "type": "FeatureCollection",
        "features": [
            {"type": "Feature", "id": "a", "properties": {"name": "Ok Street"},
             "geometry": {"type": "LineString", "coordinates": [[-32.0, 47.0], [-32.001, 47.0]]}},
            {"type": "Feature", "id": "b", "properties": {"oneway": "sideways"},
             "geometry": {"type": "LineString", "coordinates": [[-32.001, 47.0], [-32.002, 47.0]]}},
            {"type": "Feature", "id": 7, "properties": {},
             "geometry": {"type": "LineString", "coordinates": [[-32.001, 47.0]]}},
            {"type": "Feature", "id": "a", "properties": {},
             "geometry": {"type": "LineString", "coordinates": [[-32.0, 47.0], [-32.0, 47.001]]}},
        ],
    }  # fmt: skip
    with pytest.raises(InputError, match="feature 1"):
        parse_geojson(doc)
    net = parse_geojson(doc, on_error="skip")
    assert [s.name for s in net] == ["Ok Street"]
    skipped = net.meta["skipped_features"]
    assert [(s["feature"], s["id"]) for s in skipped] == [(1, "b"), (2, "7"), (3, "a")]
    assert "RFC 7946" in skipped[1]["reason"] and "unique" in skipped[2]["reason"]
    with pytest.raises(InputError, match="'reject', 'skip'"):
        parse_geojson(doc, on_error="ignore")
