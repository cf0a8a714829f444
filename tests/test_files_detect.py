"""Tests of format recognition and the read/write entry points (core.files)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from core.errors import InputError, UnknownFormatError
from core.files import (
    FORMATS,
    detect_format,
    parse_network,
    read_network,
    write_network,
)
from core.model import Network, Node, Segment

BENCHMARKS = Path(__file__).parents[1] / ".." / "shared" / "benchmarks"

GEOJSON = json.dumps(
    {
        "type": "FeatureCollection",
        "features": [
            {
                "type": "Feature",
                "properties": {"name": "Spray Lane"},
                "geometry": {"type": "LineString", "coordinates": [[-32.0, 47.0], [-32.001, 47.0]]},
            }
        ],
    }
)
CARPLIB = (
    " NOMBRE : tiny\r\n VERTICES : 2\r\n ARISTAS_REQ : 1\r\n ARISTAS_NOREQ : 0\r\n"
    " LISTA_ARISTAS_REQ :\r\n ( 1 , 2)  coste 3 demanda 1\r\n DEPOSITO : 1\r\n"
)
SALT = json.dumps(
    {
        "nodes": [{"label": "1", "position": None}, {"label": "2", "position": None}],
        "E_R": [{"edge": ["1", "2"], "len": 4, "time": 1, "dem": 2}],
    }
)


def test_formats_tuple() -> None:
    assert FORMATS == ("geojson", "project", "carplib", "salt-spreading", "geopackage", "osm")


def test_detect_from_content() -> None:
    assert detect_format(GEOJSON) == "geojson"
    assert detect_format(json.dumps({"type": "Feature", "geometry": None})) == "geojson"
    assert detect_format('{"format": "roundsman-network", "version": 1}') == "project"
    assert detect_format(SALT) == "salt-spreading"
    assert detect_format(CARPLIB) == "carplib"


def test_unknown_content_lists_the_formats() -> None:
    for text in ("hello world", '{"type": "Topology"}', "[1, 2]"):
        with pytest.raises(UnknownFormatError) as info:
            detect_format(text)
        message = str(info.value)
        for label in ("GeoJSON", "Roundsman project", "CARPLIB .dat", "salt-spreading JSON"):
            assert label in message


def test_empty_and_broken() -> None:
    with pytest.raises(InputError, match="the file is empty"):
        detect_format(" \n\t")
    with pytest.raises(InputError) as info:
        detect_format('{\n"type": "FeatureCollection",\n"features": [,]\n}')
    assert info.value.line == 3


def test_read_network_ignores_the_extension(tmp_path: Path) -> None:
    for text, fmt, kind in (
        (GEOJSON, "geojson", ".txt"),
        (CARPLIB, "carplib", ".json"),
        (SALT, "salt-spreading", ".dat"),
    ):
        path = tmp_path / f"sample_{fmt}{kind}"
        path.write_bytes(text.encode("utf-8"))
        net = read_network(path)
        assert len(net.segments) == 1, fmt
        assert read_network(path, fmt=fmt).segments.keys() == net.segments.keys()


def test_utf8_byte_order_mark_is_accepted(tmp_path: Path) -> None:
    # RFC 8259 section 8.1: parsers MAY ignore a byte order mark.
    path = tmp_path / "bom.geojson"
    path.write_bytes(b"\xef\xbb\xbf" + GEOJSON.encode("utf-8"))
    assert len(read_network(path).segments) == 1


def test_file_errors(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="does not exist") as info:
        read_network(tmp_path / "absent.geojson")
    assert "absent.geojson" in str(info.value)
    with pytest.raises(InputError, match="folder"):
        read_network(tmp_path)
    latin = tmp_path / "latin.geojson"
    latin.write_bytes(b'{"type": "FeatureCollection",\n "name": "Caf\xe9", "features": []}')
    with pytest.raises(InputError, match="not UTF-8") as info:
        read_network(latin)
    assert info.value.line == 2
    empty = tmp_path / "empty.geojson"
    empty.write_bytes(b"")
    with pytest.raises(InputError, match="the file is empty") as info:
        read_network(empty)
    assert "empty.geojson" in str(info.value)
    with pytest.raises(InputError, match="unknown format"):
        parse_network(GEOJSON, fmt="shapefile")


def test_write_network_both_formats(tmp_path: Path) -> None:
    net = read_network_from_text(GEOJSON)
    write_network(net, tmp_path / "a.json")
    write_network(net, tmp_path / "b.geojson", fmt="geojson")
    assert detect_format((tmp_path / "a.json").read_text(encoding="utf-8")) == "project"
    assert detect_format((tmp_path / "b.geojson").read_text(encoding="utf-8")) == "geojson"
    assert read_network(tmp_path / "a.json").segments == net.segments
    with pytest.raises(InputError, match="writes"):
        write_network(net, tmp_path / "c.dat", fmt="carplib")


def read_network_from_text(text: str) -> Network:
    return parse_network(text, source="inline")


def test_network_without_coordinates_to_geojson(tmp_path: Path) -> None:
    net = Network("abstract")
    net.add_node(Node("1"))
    net.add_node(Node("2"))
    net.add_segment(Segment("1", "1", "2", length=3.0))
    with pytest.raises(InputError, match="save it as a Roundsman project"):
        write_network(net, tmp_path / "x.geojson", fmt="geojson")


def test_every_benchmark_file_is_recognised() -> None:
    if not BENCHMARKS.is_dir():
        pytest.skip(f"the shared benchmark folder {BENCHMARKS} is absent")
    for path in sorted(BENCHMARKS.glob("*/*")):
        if path.suffix in (".dat", ".json"):
            expected = "carplib" if path.suffix == ".dat" else "salt-spreading"
            assert detect_format(path.read_text(encoding="utf-8")) == expected, path.name
