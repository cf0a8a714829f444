"""Tests of the GeoPackage reader (core.files.gpkg).

Streets are invented (Thistlewick, in the open Atlantic around 32°W 47°N).
GeoPackages are written by two writers independent of the reader's code:
GDAL's GPKG driver (through ``pyogrio.raw.write``) and a minimal writer here
that follows the OGC GeoPackage Encoding Standard (OGC 12-128r18: the
``gpkg_spatial_ref_sys``, ``gpkg_contents`` and ``gpkg_geometry_columns``
tables, the ``GP`` geometry header of section 2.1.3) with WKB packed by hand
from the OGC Simple Features specification (06-103r4, section 8.2).
"""

from __future__ import annotations

import math
import sqlite3
import struct
from pathlib import Path
from typing import Any

import numpy as np
import pyogrio
import pytest
import shapely
from pyproj import CRS, Transformer

from core.errors import InputError
from core.files import read_network
from core.files.gpkg import read_gpkg, sniff_gpkg
from core.model import OneWay, Service
from core.report import import_report
from tests.test_files_geojson import GEOD
from tests.test_files_osm import lonlat

UTM25 = "EPSG:32625"  # WGS 84 / UTM zone 25N: 36°W to 30°W


STREETS = [
    ("Kelp Street", "yes", [(0, 0), (100, 0), (200, 0)]),
    ("Gannet Row", None, [(100, 100), (100, 0), (100, -100)]),
    ("Spray Lane", "-1", [(200, 0), (260, 40)]),
]


def gdal_write(path: Path, crs: str, *, layer: str = "streets", to_crs: Any = None) -> None:
    """The streets written by GDAL's GPKG driver, coordinates in ``crs``."""
    move = to_crs or Transformer.from_crs("EPSG:4326", crs, always_xy=True).transform
    lines = [shapely.LineString([move(*lonlat(*p)) for p in pts]) for _, _, pts in STREETS]
    pyogrio.raw.write(
        str(path),
        shapely.to_wkb(np.array(lines, dtype=object)),
        [
            np.array([n for n, _, _ in STREETS], dtype=object),
            np.array([o for _, o, _ in STREETS], dtype=object),
            np.array([2, 1, 1]),
        ],
        ["name", "oneway", "lanes"],
        driver="GPKG",
        geometry_type="LineString",
        crs=crs,
        layer=layer,
    )


def geodesic(points: list[tuple[float, float]]) -> float:
    """pyproj's geodesic length on WGS 84 (Karney 2013) of a line in local metres."""
    lon, lat = zip(*(lonlat(*p) for p in points), strict=True)
    return GEOD.line_length(lon, lat)


# -- an OGC 12-128 writer with sqlite3 -----------------------------------------


def wkb_line(points: list[tuple[float, float]]) -> bytes:
    # OGC 06-103r4 section 8.2.4: byte order 1 (little endian), type 2, count, doubles.
    return struct.pack("<BII", 1, 2, len(points)) + b"".join(struct.pack("<dd", *p) for p in points)


def spec_write(path: Path, srs_id: int, wkt: str, rows: list[tuple[Any, ...]]) -> None:
    """A GeoPackage by OGC 12-128r18; rows are (geometry bytes or None, name, oneway, width)."""
    con = sqlite3.connect(path)
    con.executescript(
        """
        PRAGMA application_id = 1196444487;  -- 'GPKG' (requirement 2)
        PRAGMA user_version = 10300;
        CREATE TABLE gpkg_spatial_ref_sys (srs_name TEXT NOT NULL, srs_id INTEGER PRIMARY KEY,
          organization TEXT NOT NULL, organization_coordsys_id INTEGER NOT NULL,
          definition TEXT NOT NULL, description TEXT);
        CREATE TABLE gpkg_contents (table_name TEXT NOT NULL PRIMARY KEY,
          data_type TEXT NOT NULL, identifier TEXT UNIQUE, description TEXT DEFAULT '',
          last_change DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')),
          min_x DOUBLE, min_y DOUBLE, max_x DOUBLE, max_y DOUBLE, srs_id INTEGER);
        CREATE TABLE gpkg_geometry_columns (table_name TEXT NOT NULL,
          column_name TEXT NOT NULL, geometry_type_name TEXT NOT NULL,
          srs_id INTEGER NOT NULL, z TINYINT NOT NULL, m TINYINT NOT NULL,
          CONSTRAINT pk_geom_cols PRIMARY KEY (table_name, column_name));
        CREATE TABLE kerbs (fid INTEGER PRIMARY KEY AUTOINCREMENT, geom LINESTRING,
          name TEXT, oneway TEXT, width_m REAL);
        """
    )
    wgs84 = CRS("EPSG:4326").to_wkt()
    con.executemany(
        "INSERT INTO gpkg_spatial_ref_sys VALUES (?, ?, ?, ?, ?, ?)",
        [
            ("WGS 84 geodetic", 4326, "EPSG", 4326, wgs84, ""),
            ("Undefined cartesian SRS", -1, "NONE", -1, "undefined", ""),
            ("Undefined geographic SRS", 0, "NONE", 0, "undefined", ""),
            ("Thistlewick grid", srs_id, "THISTLEWICK", 1, wkt, "invented name"),
        ],
    )
    con.execute(
        "INSERT INTO gpkg_contents (table_name, data_type, identifier, srs_id) VALUES (?,?,?,?)",
        ("kerbs", "features", "kerbs", srs_id),
    )
    con.execute(
        "INSERT INTO gpkg_geometry_columns VALUES (?, ?, ?, ?, 0, 0)",
        ("kerbs", "geom", "LINESTRING", srs_id),
    )
    for geom, name, oneway, width in rows:
        # OGC 12-128 section 2.1.3: 'GP', version 0, flags (bit 0: little endian;
        # no envelope), srs_id, then the WKB.
        blob = None if geom is None else b"GP" + bytes([0, 1]) + struct.pack("<i", srs_id) + geom
        con.execute(
            "INSERT INTO kerbs (geom, name, oneway, width_m) VALUES (?, ?, ?, ?)",
            (blob, name, oneway, width),
        )
    con.commit()
    con.close()


def utm_points(points: list[tuple[float, float]]) -> list[tuple[float, float]]:
    move = Transformer.from_crs("EPSG:4326", UTM25, always_xy=True).transform
    return [move(*lonlat(*p)) for p in points]


def test_spec_written_file_keeps_its_crs_and_coordinates(tmp_path: Path) -> None:
    path = tmp_path / "kerbs.gpkg"
    wkt = CRS(UTM25).to_wkt()  # the CRS is defined in the file, under an invented code
    rows = [(wkb_line(utm_points(pts)), n, o, 3.5) for n, o, pts in STREETS]
    spec_write(path, 990001, wkt, rows)
    net = read_gpkg(path)
    # The CRS read from the file is the one written (pyproj's CRS equality).
    assert CRS(net.crs) == CRS(UTM25)
    # A projected metric CRS is kept: the coordinates are the written ones.
    kelp = next(s for s in net if s.name == "Kelp Street" and s.start == "n1")
    assert kelp.geometry[0] == pytest.approx(utm_points(STREETS[0][2])[0], abs=1e-6)
    assert kelp.oneway is OneWay.FORWARD
    spray = next(s for s in net if s.name == "Spray Lane")
    assert spray.oneway is OneWay.BACKWARD
    assert spray.attrs == {"width_m": 3.5}
    # Kelp Street and Gannet Row share the vertex at (100, 0): a junction.
    assert len(net) == 5
    assert net.meta["layer"] == "kerbs"


def test_gdal_written_lonlat_is_projected_to_utm(tmp_path: Path) -> None:
    path = tmp_path / "streets.gpkg"
    gdal_write(path, "EPSG:4326")
    net = read_gpkg(path)
    assert net.crs == UTM25
    for name, _, pts in STREETS:
        total = sum(s.length for s in net if s.name == name)
        # UTM lengths against pyproj's geodesic lengths: within 0.1 % here.
        assert total == pytest.approx(geodesic(pts), rel=1e-3)
    assert {s.attrs["lanes"] for s in net if s.name == "Kelp Street"} == {2}


def test_gdal_written_projected_crs_is_preserved(tmp_path: Path) -> None:
    path = tmp_path / "streets.gpkg"
    gdal_write(path, UTM25)
    assert read_gpkg(path).crs == UTM25


def test_web_mercator_is_reprojected(tmp_path: Path) -> None:
    # EPSG:3857 stretches distances by 1/cos(47°) = 1.47 here; lengths must
    # still match the geodesic ones.
    path = tmp_path / "mercator.gpkg"
    gdal_write(path, "EPSG:3857")
    net = read_gpkg(path)
    assert net.crs == UTM25
    total = sum(s.length for s in net if s.name == "Gannet Row")
    assert total == pytest.approx(geodesic(STREETS[1][2]), rel=1e-3)


def test_layer_choice(tmp_path: Path) -> None:
    path = tmp_path / "two.gpkg"
    gdal_write(path, "EPSG:4326", layer="north")
    gdal_write(path, "EPSG:4326", layer="south")
    with pytest.raises(InputError) as info:
        read_gpkg(path)
    assert "north" in str(info.value) and "south" in str(info.value)
    with pytest.raises(InputError) as info:
        read_gpkg(path, layer="east")
    assert "'east'" in str(info.value) and "north, south" in str(info.value)
    assert read_gpkg(path, layer="south").meta["layer"] == "south"
    assert read_network(path, layer="north").meta["layer"] == "north"


def test_point_layer_is_not_streets(tmp_path: Path) -> None:
    path = tmp_path / "points.gpkg"
    pyogrio.raw.write(
        str(path),
        shapely.to_wkb(np.array([shapely.Point(lonlat(0, 0))], dtype=object)),
        [np.array(["depot"], dtype=object)],
        ["name"],
        driver="GPKG",
        geometry_type="Point",
        crs="EPSG:4326",
        layer="depots",
    )
    with pytest.raises(InputError, match="no line layer"):
        read_gpkg(path)
    with pytest.raises(InputError, match="holds Point features"):
        read_gpkg(path, layer="depots")


def test_broken_features_rejected_or_skipped(tmp_path: Path) -> None:
    path = tmp_path / "broken.gpkg"
    good = wkb_line(utm_points(STREETS[0][2]))
    point = struct.pack("<BIdd", 1, 1, 1.0, 2.0)  # a Point, not a line
    single = wkb_line([(5.0, 5.0), (5.0, 5.0)])  # no length
    rows = [
        (good, "Kelp Street", None, None),
        (None, "Nowhere", None, None),
        (point, "Dot", None, None),
        (b"\x01\x02\x00", "Garbled", None, None),
        (single, "Stub", None, None),
        (good[:-8] + struct.pack("<d", math.nan), "Lost", None, None),
    ]
    spec_write(path, 990001, CRS(UTM25).to_wkt(), rows)
    with pytest.raises(InputError) as info:
        read_gpkg(path)
    assert info.value.feature == 1 and "no geometry" in str(info.value)
    net = read_gpkg(path, on_error="skip")
    assert len(net) == 1
    skipped = import_report(net).skipped
    assert [s["feature"] for s in skipped] == [1, 2, 3, 4, 5]
    reasons = " ".join(s["reason"] for s in skipped)
    # GDAL hands the garbled blob (fid 4) on as no geometry.
    for word in ("no geometry", "Point", "no length", "finite"):
        assert word in reasons
    assert "skipped features: 5" in import_report(net).text()


def test_bad_property_is_a_broken_feature(tmp_path: Path) -> None:
    path = tmp_path / "prop.gpkg"
    rows = [(wkb_line(utm_points(pts)), n, "sideways", None) for n, _, pts in STREETS[:1]]
    spec_write(path, 990001, CRS(UTM25).to_wkt(), rows)
    with pytest.raises(InputError) as info:
        read_gpkg(path)
    assert "Kelp Street" in str(info.value) and "'sideways'" in str(info.value)


def test_no_crs_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "nocrs.gpkg"
    spec_write(path, 990001, "undefined", [(wkb_line([(0, 0), (9, 9)]), "A", None, None)])
    with sqlite3.connect(path) as con:
        con.execute("UPDATE gpkg_contents SET srs_id = -1")
        con.execute("UPDATE gpkg_geometry_columns SET srs_id = -1")
    with pytest.raises(InputError, match="no coordinate reference system"):
        read_gpkg(path)


def test_options_are_checked(tmp_path: Path) -> None:
    path = tmp_path / "streets.gpkg"
    gdal_write(path, "EPSG:4326")
    with pytest.raises(InputError, match="'reject', 'skip'"):
        read_gpkg(path, on_error="maybe")
    with pytest.raises(InputError, match="does not exist"):
        read_gpkg(tmp_path / "missing.gpkg")


def test_recognised_by_content(tmp_path: Path) -> None:
    path = tmp_path / "streets.dat"
    gdal_write(tmp_path / "streets.gpkg", "EPSG:4326")
    (tmp_path / "streets.gpkg").rename(path)
    assert sniff_gpkg(path.read_bytes()[:100])
    net = read_network(path)
    assert net.meta["source_format"] == "geopackage"
    assert all(s.service is Service.EITHER for s in net)


def test_plain_sqlite_is_not_a_geopackage(tmp_path: Path) -> None:
    path = tmp_path / "plain.sqlite"
    with sqlite3.connect(path) as con:
        con.execute("CREATE TABLE t (x)")
    assert not sniff_gpkg(path.read_bytes()[:100])
    with pytest.raises(InputError):
        read_network(path)
