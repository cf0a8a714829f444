"""Property-based fuzzing (hypothesis) of every reader in core.files.

Each reader is fed generated input, from near-valid documents with broken
members to random bytes, and must either return a network or raise one of
the project's own errors (``RoundsmanError`` subclasses) with a message;
never any other exception.  Examples are bounded (``max_examples``) so the
whole file runs in well under a minute.
"""

from __future__ import annotations

import gzip
import json
import re
import tempfile
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any
from xml.sax.saxutils import quoteattr

import osmium
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pyproj import CRS

from core.errors import RoundsmanError
from core.files import parse_network, read_network
from core.files.carplib import parse_carplib
from core.files.geojson import parse_geojson
from core.files.osm import HIGHWAY_CLASSES, read_osm
from core.files.project import project_from_dict, project_to_dict
from core.files.saltspread import parse_saltspread
from core.model import Network
from tests.test_files_gpkg import spec_write, wkb_line

FUZZ = settings(
    max_examples=80,  # the documents with faults
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
RANDOM_FUZZ = settings(
    max_examples=50,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
FILE_FUZZ = settings(
    max_examples=40,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


def accepts_or_explains(read: Callable[..., Network], *args: Any, **kwargs: Any) -> None:
    """The reader returns a network or raises the project's own error with a message."""
    try:
        network = read(*args, **kwargs)
    except RoundsmanError as exc:
        assert str(exc).strip(), f"{type(exc).__name__} without a message"
        return
    assert isinstance(network, Network)


@contextmanager
def scratch() -> Iterator[Path]:
    with tempfile.TemporaryDirectory() as folder:
        yield Path(folder)


# -- building blocks ----------------------------------------------------------------

numbers = st.one_of(
    st.integers(-(10**20), 10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(-200, 200),
)
short_text = st.text(max_size=8)
scalars = st.one_of(st.none(), st.booleans(), numbers, short_text)
json_values = st.recursive(
    scalars,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(short_text, inner, max_size=4),
    max_leaves=12,
)


def near(choices: list[Any]) -> st.SearchStrategy[Any]:
    """A meaningful value most of the time, anything some of the time."""
    good = st.sampled_from(choices)
    return st.one_of(good, good, good, json_values)


def mostly(good: st.SearchStrategy[Any], bad: st.SearchStrategy[Any]) -> st.SearchStrategy[Any]:
    """``good`` three times in four (hypothesis weighs the branches of one_of alike)."""
    return st.one_of(good, good, good, bad)


lonlat = mostly(
    st.tuples(st.floats(-32.01, -31.99), st.floats(46.99, 47.01)).map(list),
    st.lists(st.floats(-180, 180) | numbers, min_size=0, max_size=3),
)
coordinates = mostly(st.lists(lonlat, min_size=2, max_size=4), json_values)
ONEWAYS = ["yes", "no", "-1", True, False, "reverse", 1, 0, "sideways"]
SERVICES = ["none", "either", "along", "both", None, "once", "maybe"]

properties = st.dictionaries(
    st.sampled_from(["name", "oneway", "service", "passes", "length_m", "demand", "id", "depot"])
    | short_text,
    near([*ONEWAYS, *SERVICES, 1, 2, 0, -3, 2.5, "12", "Kelp Street"]),
    max_size=5,
)
geometry = st.one_of(
    st.fixed_dictionaries({"type": near(["LineString"]), "coordinates": coordinates}),
    st.fixed_dictionaries(
        {
            "type": near(["MultiLineString", "Point", "Polygon"]),
            "coordinates": st.one_of(coordinates, st.lists(coordinates, max_size=3), lonlat),
        }
    ),
)
feature = mostly(
    st.fixed_dictionaries(
        {
            "type": near(["Feature"]),
            "geometry": mostly(geometry, json_values),
            "properties": properties,
        }
    ),
    json_values,
)
geojson_doc = st.fixed_dictionaries(
    {"type": near(["FeatureCollection", "Feature"]), "features": st.lists(feature, max_size=5)},
    optional={
        "crs": near(
            [
                {"type": "name", "properties": {"name": "EPSG:32625"}},
                {"type": "name", "properties": {"name": "EPSG:3857"}},
                {"type": "name", "properties": {"name": "EPSG:5800"}},
                {"type": "name", "properties": {"name": "nonsense"}},
                {"type": "name", "properties": {"name": "IAU_2015:30100"}},
            ]
        ),
        "name": json_values,
    },
)


@RANDOM_FUZZ
@given(geojson_doc)
def test_geojson_documents(doc: dict[str, Any]) -> None:
    accepts_or_explains(parse_geojson, doc, source="fuzz.geojson")
    accepts_or_explains(parse_network, json.dumps(doc), source="fuzz.geojson")


@FUZZ
@given(st.text(max_size=200))
def test_any_text(text: str) -> None:
    accepts_or_explains(parse_network, text, source="fuzz.txt")


node_ids = mostly(st.sampled_from(["n1", "n2", "n3"]), json_values)
project_doc = st.fixed_dictionaries(
    {
        "format": near(["roundsman-network"]),
        "version": near([1, 0, 2, "1"]),
        "nodes": st.lists(
            mostly(
                st.fixed_dictionaries(
                    {"id": node_ids, "x": near([0.0, 10.0, None]), "y": near([0.0, 5.0, None])},
                    optional={"turning_place": json_values},
                ),
                json_values,
            ),
            min_size=1,
            max_size=4,
        ),
        "segments": st.lists(
            st.fixed_dictionaries(
                {"id": near(["s1", "s2"]), "start": node_ids, "end": node_ids},
                optional={
                    "length": near([1.0, 0.0, -2.0, 1e308]),
                    "geometry": coordinates,
                    "oneway": near(["no", "forward", "backward"]),
                    "service": near(SERVICES),
                    "passes": near([1, 2, 0, 1.5]),
                    "demand": near([0.0, 3.0, -1.0]),
                    "attrs": json_values,
                    "name": json_values,
                },
            )
            | json_values,
            min_size=1,
            max_size=4,
        ),
    },
    optional={
        "crs": near([None, "EPSG:32625", "EPSG:4326", "nonsense"]),
        "depot": node_ids,
        "meta": json_values,
        "name": json_values,
    },
)


@RANDOM_FUZZ
@given(project_doc)
def test_project_documents(doc: dict[str, Any]) -> None:
    accepts_or_explains(project_from_dict, doc, source="fuzz.json")
    accepts_or_explains(parse_network, json.dumps(doc), source="fuzz.json")


labels = mostly(st.sampled_from(["1", "2", "3"]), json_values)
pair = mostly(st.lists(labels, min_size=2, max_size=2), st.lists(labels, max_size=3))
salt_link = st.fixed_dictionaries(
    {"len": near([1.0, 0.0, -1.0, "5"]), "time": near([1.0, None]), "dem": near([1.0, -2.0])},
    optional={"edge": pair, "arc": pair},
)
salt_doc = st.fixed_dictionaries(
    {
        "nodes": st.lists(
            mostly(
                st.fixed_dictionaries(
                    {"label": labels, "position": near([None, [0, 0], [None, None], [1e400, 0]])}
                ),
                json_values,
            ),
            min_size=1,
            max_size=4,
        ),
    },
    optional={
        "E_R": st.lists(mostly(salt_link, json_values), max_size=3),
        "A_R": st.lists(salt_link | json_values, max_size=3),
        "A": st.lists(salt_link | json_values, max_size=3),
        "U": st.lists(labels | st.fixed_dictionaries({"label": labels}), max_size=2),
        "vehicles": st.lists(
            st.fixed_dictionaries({"home": labels, "capacity": numbers}), max_size=2
        ),
        "depots": st.lists(st.fixed_dictionaries({"label": labels}) | json_values, max_size=2),
        "max_time": json_values,
    },
)


@RANDOM_FUZZ
@given(salt_doc)
def test_saltspread_documents(doc: dict[str, Any]) -> None:
    accepts_or_explains(parse_saltspread, doc, source="fuzz.json")
    accepts_or_explains(parse_network, json.dumps(doc), source="fuzz.json")


spec_keys = st.sampled_from(
    ["NOMBRE", "VERTICES", "ARISTAS_REQ", "ARISTAS_NOREQ", "VEHICULOS", "CAPACIDAD", "DEPOSITO"]
)
small_ints = st.integers(-3, 6) | st.integers(-(10**30), 10**30)
carplib_line = st.one_of(
    st.builds(lambda k, v: f" {k} : {v}", spec_keys, small_ints | short_text),
    st.sampled_from([" LISTA_ARISTAS_REQ :", " LISTA_ARISTAS_NOREQ :"]),
    st.builds(
        lambda a, b, c, d: f" ( {a} , {b})  coste {c}" + ("" if d is None else f" demanda {d}"),
        small_ints,
        small_ints,
        small_ints | st.sampled_from(["1e400", "0.5", "-0"]),
        st.none() | small_ints,
    ),
    short_text,
)


@FUZZ
@given(st.lists(carplib_line, max_size=12))
def test_carplib_texts(lines: list[str]) -> None:
    text = "\r\n".join(lines)
    accepts_or_explains(parse_carplib, text, source="fuzz.dat")
    accepts_or_explains(parse_network, text + "\n NOMBRE : x\n VERTICES : 2\n", source="fuzz.dat")


# -- valid documents with a few faults -------------------------------------------------
#
# Documents built wholly at random rarely get past the first check; a valid
# document with one to three random changes reaches every later one.

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "thistlewick.geojson"


def _valid_geojson() -> dict[str, Any]:
    doc = json.loads(SAMPLE.read_text(encoding="utf-8"))
    doc["features"] = doc["features"][:6] + [
        f for f in doc["features"] if f["geometry"]["type"] == "Point"
    ]
    return doc


VALID_SALT = {
    "nodes": [
        {"label": "1", "position": [0, 0]},
        {"label": "2", "position": [3, 4]},
        {"label": "3", "position": None},
    ],
    "E_R": [{"edge": ["1", "2"], "len": 5, "time": 1, "dem": 2}],
    "A_R": [{"arc": ["2", "3"], "len": 4, "time": 1, "dem": 1}],
    "A": [{"arc": ["3", "1"], "len": 6, "time": 2}],
    "U": [{"label": "3"}],
    "vehicles": [{"id": "v1", "home": "1", "capacity": 10}],
    "depots": [{"label": "1", "refill": True}],
    "max_time": 120,
}
VALID_CARPLIB = (
    " NOMBRE : tiny\n VERTICES : 3\n ARISTAS_REQ : 2\n ARISTAS_NOREQ : 1\n VEHICULOS : 1\n"
    " CAPACIDAD : 5\n LISTA_ARISTAS_REQ :\n ( 1 , 2)  coste 3 demanda 1\n"
    " ( 2 , 3)  coste 4 demanda 2\n LISTA_ARISTAS_NOREQ :\n ( 3 , 1)  coste 5\n DEPOSITO : 1\n"
)


def mutate(doc: Any, data: st.DataObject) -> Any:
    """``doc`` (JSON-like, copied) with one to three random changes: a value
    replaced, a member or item removed, or an item duplicated."""
    doc = json.loads(json.dumps(doc))
    for _ in range(data.draw(st.integers(1, 3))):
        parent: Any = None
        key: Any = None
        node = doc
        while isinstance(node, dict | list) and node and data.draw(st.integers(0, 3)) > 0:
            keys = list(node) if isinstance(node, dict) else list(range(len(node)))
            parent, key = node, data.draw(st.sampled_from(keys))
            node = node[key]
        if parent is None:
            continue
        action = data.draw(st.sampled_from(["replace", "remove", "duplicate"]))
        if action == "replace":
            parent[key] = data.draw(json_values)
        elif action == "remove":
            del parent[key]
        elif isinstance(parent, list):
            parent.insert(key, json.loads(json.dumps(parent[key])))
    return doc


@FUZZ
@given(st.data())
def test_geojson_with_faults(data: st.DataObject) -> None:
    doc = mutate(_valid_geojson(), data)
    accepts_or_explains(parse_geojson, doc, source="fuzz.geojson")


@FUZZ
@given(st.data())
def test_project_with_faults(data: st.DataObject) -> None:
    doc = mutate(project_to_dict(parse_geojson(_valid_geojson())), data)
    accepts_or_explains(project_from_dict, doc, source="fuzz.json")


@FUZZ
@given(st.data())
def test_saltspread_with_faults(data: st.DataObject) -> None:
    accepts_or_explains(parse_saltspread, mutate(VALID_SALT, data), source="fuzz.json")


@FUZZ
@given(st.data())
def test_carplib_with_faults(data: st.DataObject) -> None:
    lines = VALID_CARPLIB.splitlines()
    for _ in range(data.draw(st.integers(1, 3))):
        if not lines:
            break
        k = data.draw(st.integers(0, len(lines) - 1))
        action = data.draw(st.sampled_from(["replace", "remove", "duplicate", "number"]))
        if action == "replace":
            lines[k] = data.draw(carplib_line)
        elif action == "remove":
            del lines[k]
        elif action == "duplicate":
            lines.insert(k, lines[k])
        else:
            lines[k] = re.sub(r"\d+", lambda _: str(data.draw(small_ints)), lines[k], count=1)
    accepts_or_explains(parse_carplib, "\n".join(lines), source="fuzz.dat")


# -- GeoPackage -----------------------------------------------------------------

UTM25_WKT = CRS("EPSG:32625").to_wkt()
SRS_DEFINITIONS = [
    UTM25_WKT,
    CRS("EPSG:4326").to_wkt(),
    CRS("EPSG:3857").to_wkt(),
    CRS("IAU_2015:30100").to_wkt(),  # the Moon
    # An engineering (site) CRS, not placed on the Earth:
    'ENGCRS["site grid",EDATUM["x"],CS[Cartesian,2],'
    'AXIS["x",east,LENGTHUNIT["metre",1]],AXIS["y",north,LENGTHUNIT["metre",1]]]',
    "undefined",
    "not a CRS at all",
]
# Mostly places in UTM zone 25N near Thistlewick, sometimes anything.
easting = st.floats(400_000, 400_300) | st.floats(-1e7, 1e7) | numbers
northing = st.floats(5_205_000, 5_205_300) | st.floats(-1e7, 1e7) | numbers
points = st.lists(st.tuples(easting, northing), min_size=0, max_size=5)
good_points = st.lists(
    st.tuples(st.integers(0, 3).map(lambda i: 400_000.0 + 90 * i), st.just(5_205_000.0)),
    min_size=2,
    max_size=4,
)
gpkg_geometry = st.one_of(
    st.builds(wkb_line, good_points),
    st.builds(wkb_line, good_points),
    st.builds(wkb_line, points),
    st.builds(
        lambda p: shapely.to_wkb(shapely.MultiLineString([p, p[::-1]])),
        st.lists(st.tuples(st.floats(0, 500), st.floats(0, 500)), min_size=2, max_size=4),
    ),
    st.binary(max_size=40),
    st.none(),
    st.just(shapely.to_wkb(shapely.Point(1, 2))),
    st.just(shapely.to_wkb(shapely.LineString())),
)
gpkg_value = st.one_of(
    st.none(), short_text, st.integers(-5, 5), st.floats(), st.binary(max_size=4)
)
gpkg_rows = st.lists(
    st.tuples(gpkg_geometry, gpkg_value | st.sampled_from(["Kelp St"]), gpkg_value, gpkg_value),
    max_size=5,
)


@FILE_FUZZ
@given(
    gpkg_rows,
    st.sampled_from([UTM25_WKT, UTM25_WKT, *SRS_DEFINITIONS]),
    st.sampled_from(["reject", "skip"]),
)
def test_geopackages(rows: list[tuple[Any, ...]], wkt: str, on_error: str) -> None:
    with scratch() as folder:
        path = folder / "fuzz.gpkg"
        spec_write(path, 990001, wkt, rows)
        accepts_or_explains(read_network, path, on_error=on_error)  # detection, then read_gpkg


def _valid_gpkg(folder: Path) -> bytes:
    path = folder / "valid.gpkg"
    lines = [[(0.0, 0.0), (100.0, 0.0)], [(100.0, 0.0), (100.0, 80.0)]]
    spec_write(path, 990001, UTM25_WKT, [(wkb_line(p), "Kelp St", "yes", 3.0) for p in lines])
    return path.read_bytes()


@FILE_FUZZ
@given(st.data())
def test_damaged_geopackages(data: st.DataObject) -> None:
    with scratch() as folder:
        raw = bytearray(_valid_gpkg(folder))
        for _ in range(data.draw(st.integers(1, 12))):
            at = data.draw(st.integers(0, len(raw) - 1))
            raw[at] = data.draw(st.integers(0, 255))
        cut = data.draw(st.integers(100, len(raw)))
        path = folder / "damaged.gpkg"
        path.write_bytes(bytes(raw[:cut]))
        accepts_or_explains(read_network, path)


# -- OpenStreetMap ------------------------------------------------------------------

osm_tag_values = st.one_of(
    st.sampled_from([*HIGHWAY_CLASSES, "footway", "yes", "-1", "no", "roundabout", "2", "x;y"]),
    st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=6),
)
osm_tags = st.fixed_dictionaries(
    {"highway": st.sampled_from(["residential", "primary"]) | osm_tag_values},
    optional={
        k: st.sampled_from(["yes", "-1", "no", "roundabout", "2", "Kelp St"]) | osm_tag_values
        for k in ("oneway", "junction", "name", "ref", "lanes", "area")
    },
)
# Mostly places near Thistlewick, sometimes anywhere or nowhere.
near_lat, near_lon = st.floats(46.99, 47.01), st.floats(-32.01, -31.99)
osm_node = st.tuples(
    st.integers(1, 8),
    st.one_of(*[near_lat] * 8, st.floats(-90, 90), st.sampled_from([1e9, -1e9])),
    st.one_of(*[near_lon] * 8, st.floats(-180, 180), st.sampled_from([1e9, 500.0])),
)
osm_way = st.tuples(st.integers(1, 5), st.lists(st.integers(1, 9), max_size=6), osm_tags)
BASE_NODES = [(1, 47.0, -32.0), (2, 47.0, -31.999), (3, 47.001, -31.999), (4, 47.001, -32.0)]
osm_nodes = st.one_of(
    # Four good nodes and a few fuzzed ones, or fuzzed nodes only.
    st.lists(osm_node, max_size=4).map(lambda ns: BASE_NODES + [n for n in ns if n[0] > 4]),
    st.lists(osm_node, min_size=2, max_size=8, unique_by=lambda n: n[0]),
    st.lists(osm_node, max_size=3),
)
osm_ways = st.lists(
    st.tuples(st.integers(1, 5), st.lists(st.integers(1, 8), min_size=2, max_size=6), osm_tags),
    min_size=1,
    max_size=5,
    unique_by=lambda w: w[0],
) | st.lists(osm_way, max_size=3)


def osm_text(nodes: list[tuple[int, float, float]], ways: list[tuple[Any, ...]]) -> str:
    out = ['<?xml version="1.0" encoding="UTF-8"?>', '<osm version="0.6">']
    for nid, lat, lon in nodes:
        out.append(f'<node id="{nid}" version="1" lat="{lat!r}" lon="{lon!r}"/>')
    for wid, refs, tags in ways:
        out.append(f'<way id="{wid}" version="1">')
        out += [f'<nd ref="{r}"/>' for r in refs]
        out += [f"<tag k={quoteattr(k)} v={quoteattr(v)}/>" for k, v in tags.items()]
        out.append("</way>")
    out.append("</osm>")
    return "\n".join(out)


@FILE_FUZZ
@given(
    osm_nodes,
    osm_ways,
    st.sampled_from(["reject", "skip"]),
)
def test_osm_xml(nodes: list[Any], ways: list[Any], on_error: str) -> None:
    with scratch() as folder:
        path = folder / "fuzz.osm"
        path.write_text(osm_text(nodes, ways), encoding="utf-8")
        accepts_or_explains(read_osm, path, on_error=on_error)
        accepts_or_explains(read_network, path, on_error=on_error)


@FILE_FUZZ
@given(osm_nodes, osm_ways, st.data())
def test_osm_xml_compressed(nodes: list[Any], ways: list[Any], data: st.DataObject) -> None:
    packed = bytearray(gzip.compress(osm_text(nodes, ways).encode("utf-8")))
    for _ in range(data.draw(st.integers(0, 4))):
        packed[data.draw(st.integers(0, len(packed) - 1))] = data.draw(st.integers(0, 255))
    with scratch() as folder:
        path = folder / "fuzz.osm.gz"
        path.write_bytes(bytes(packed))
        accepts_or_explains(read_network, path, on_error="skip")


@FILE_FUZZ
@given(
    st.binary(max_size=300),
    st.sampled_from([b"<?xml version='1.0'?><osm", b"<osm", b"", b"\x1f\x8b\x08", b"BZh9"]),
)
def test_osm_xml_bytes(noise: bytes, start: bytes) -> None:
    with scratch() as folder:
        path = folder / "noise.osm"
        path.write_bytes(start + noise)
        accepts_or_explains(read_network, path)
        if start:
            accepts_or_explains(read_osm, path)


def _write_pbf(path: Path, nodes: list[Any], ways: list[Any]) -> None:
    writer = osmium.SimpleWriter(str(path))
    try:
        seen = set()
        for nid, lat, lon in sorted(nodes):
            if nid in seen or not (abs(lat) <= 90 and abs(lon) <= 180):
                continue
            seen.add(nid)
            writer.add_node(osmium.osm.mutable.Node(id=nid, location=(lon, lat), version=1))
        done = set()
        for wid, refs, tags in sorted(ways, key=lambda w: w[0]):
            if wid in done:
                continue
            done.add(wid)
            writer.add_way(osmium.osm.mutable.Way(id=wid, nodes=refs, tags=tags, version=1))
    finally:
        writer.close()


@FILE_FUZZ
@given(osm_nodes, osm_ways, st.data())
def test_osm_pbf(nodes: list[Any], ways: list[Any], data: st.DataObject) -> None:
    with scratch() as folder:
        path = folder / "fuzz.osm.pbf"
        _write_pbf(path, nodes, ways)
        accepts_or_explains(read_osm, path, on_error="skip")
        raw = bytearray(path.read_bytes())
        for _ in range(data.draw(st.integers(0, 6))):
            at = data.draw(st.integers(0, len(raw) - 1))
            raw[at] = data.draw(st.integers(0, 255))
        damaged = folder / "damaged.osm.pbf"
        damaged.write_bytes(bytes(raw[: data.draw(st.integers(16, len(raw)))]))
        accepts_or_explains(read_network, damaged)


def test_fuzz_helpers_catch_foreign_errors() -> None:
    # The check itself must fail on a traceback that is not the project's.
    def crash(_: Any) -> Network:
        raise KeyError("boom")

    with pytest.raises(KeyError):
        accepts_or_explains(crash, None)


# Found by fuzzing: a CRS that pyproj reads but cannot relate to WGS 84 (an
# engineering grid, the Moon, a geocentric CRS) raised pyproj's ProjError.
@pytest.mark.parametrize(
    "crs",
    [
        'ENGCRS["site grid",EDATUM["x"],CS[Cartesian,2],'
        'AXIS["x",east,LENGTHUNIT["metre",1]],AXIS["y",north,LENGTHUNIT["metre",1]]]',
        "IAU_2015:30100",
        "EPSG:4978",
    ],
)
def test_crs_off_the_earth_is_explained(crs: str) -> None:
    doc = {
        "type": "FeatureCollection",
        "crs": {"type": "name", "properties": {"name": crs}},
        "features": [
            {
                "type": "Feature",
                "properties": {},
                "geometry": {"type": "LineString", "coordinates": [[0, 0], [100, 0]]},
            }
        ],
    }
    with pytest.raises(RoundsmanError, match="cannot be"):
        parse_geojson(doc)
    with scratch() as folder:
        path = folder / "off.gpkg"
        spec_write(path, 990001, CRS(crs).to_wkt(), [(wkb_line([(0, 0), (100, 0)]), "A", "", 1)])
        with pytest.raises(RoundsmanError, match="no coordinate reference system on the Earth"):
            read_network(path)
