"""The canvas: drawing, snapping, cutting, moving, the other tools, undo/redo, zoom and pan.

Every interaction is simulated mouse input on the view (pytest-qt's ``qtbot``),
offscreen.  Street lengths are checked against shapely's ``LineString.length``
(GEOS) as the outside reference; "undo restores the exact network" compares
the project documents (``project_to_dict``) before and after.
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtGui import QWheelEvent
from PySide6.QtWidgets import QApplication
from shapely.geometry import LineString

from app.canvas.view import grid_spacing, major_spacing, scale_bar_length
from core.model import OneWay, Service
from tests.app_support import at, make_window, place_view, snapshot, two_streets

LEFT = Qt.MouseButton.LeftButton


@pytest.fixture
def window(qtbot, tmp_path):
    w = make_window(qtbot, tmp_path, two_streets())
    place_view(w, (50.0, 50.0), 2.0)
    return w


def click(qtbot, window, x: float, y: float, button=LEFT, modifier=Qt.KeyboardModifier.NoModifier):
    qtbot.mouseClick(window.view.viewport(), button, modifier, at(window, x, y))


def use(window, tool: str) -> None:
    window.tool_actions[tool].trigger()
    assert window.view.tool is window.tools[tool]


def test_lay_street_by_clicks_creates_junctions_and_street(qtbot, window) -> None:
    net = window.document.network
    use(window, "lay")
    click(qtbot, window, 20.0, 60.0)  # free point: nothing made yet
    assert len(net.nodes) == 3
    click(qtbot, window, 60.0, 60.0)
    assert len(net.nodes) == 5 and len(net.segments) == 3
    new = net.segments[window.document.undo_stack.command(0).edit.created_segments[0]]
    (x0, y0), (x1, y1) = new.geometry
    assert (x0, y0) == pytest.approx((20.0, 60.0), abs=1.0)
    assert (x1, y1) == pytest.approx((60.0, 60.0), abs=1.0)
    assert new.length == pytest.approx(LineString(new.geometry).length)  # shapely reference
    assert window.document.undo_stack.count() == 1  # one click, one undo step
    click(qtbot, window, 0, 0, button=Qt.MouseButton.RightButton)  # ends the run


def test_clicks_snap_to_junctions_and_cut_streets(qtbot, window) -> None:
    net = window.document.network
    use(window, "lay")
    click(qtbot, window, 101.5, 1.0)  # 3 px from junction b: lands on it
    click(qtbot, window, 50.0, 1.5)  # on street s1: cuts it there and joins
    assert len(net.nodes) == 4  # only the cut junction is new
    assert len(net.segments) == 4  # s1 cut in two, plus the new street
    edit = window.document.undo_stack.command(0).edit
    (cut_node,) = edit.created_nodes
    node = net.nodes[cut_node]
    assert node.y == pytest.approx(0.0) and node.x == pytest.approx(50.0, abs=1.0)
    new_street = [net.segments[s] for s in edit.created_segments if net.segments[s].start == "b"]
    assert new_street and new_street[0].end == cut_node
    pieces = [s for s in net.segments.values() if {s.start, s.end} & {"a"}]
    assert pieces[0].end == cut_node
    assert sum(s.length for s in net.segments.values() if "a" in (s.start, s.end)) < 100.0


def test_undo_and_redo_restore_the_exact_network(qtbot, window) -> None:
    net = window.document.network
    stack = window.document.undo_stack
    start = snapshot(net)
    use(window, "lay")
    click(qtbot, window, 0.0, 0.0)
    click(qtbot, window, 0.0, 100.0)
    click(qtbot, window, 100.0, 100.0)  # closes the square on junction c
    click(qtbot, window, 0, 0, button=Qt.MouseButton.RightButton)
    use(window, "cut")
    click(qtbot, window, 100.0, 50.0)
    drawn = snapshot(window.document.network)
    assert stack.count() == 3
    while stack.canUndo():
        stack.undo()
    assert snapshot(window.document.network) == start
    while stack.canRedo():
        stack.redo()
    assert snapshot(window.document.network) == drawn
    assert window.document.network is net  # the data stayed in the document
    # the scene follows: one item per street
    assert all(window.scene.street_item(s) is not None for s in net.segments)


def test_move_junction_by_dragging(qtbot, window) -> None:
    use(window, "move")
    vp = window.view.viewport()
    qtbot.mousePress(vp, LEFT, pos=at(window, 100.0, 0.0))
    qtbot.mouseMove(vp, at(window, 120.0, -30.0))
    qtbot.mouseRelease(vp, LEFT, pos=at(window, 120.0, -30.0))
    net = window.document.network
    b = net.nodes["b"]
    assert (b.x, b.y) == pytest.approx((120.0, -30.0), abs=1.0)
    for sid in ("s1", "s2"):
        seg = net.segments[sid]
        assert (b.x, b.y) in (seg.geometry[0], seg.geometry[-1])
        assert seg.length == pytest.approx(LineString(seg.geometry).length)  # shapely
    path = window.scene.street_item("s1").path()
    assert path.elementAt(1).x == pytest.approx(b.x)


def test_erase_direction_service_and_depot_tools(qtbot, window) -> None:
    net = window.document.network
    use(window, "direction")
    click(qtbot, window, 50.0, 0.0)
    assert net.segments["s1"].oneway is OneWay.FORWARD
    click(qtbot, window, 50.0, 0.0)
    assert net.segments["s1"].oneway is OneWay.BACKWARD
    click(qtbot, window, 50.0, 0.0, modifier=Qt.KeyboardModifier.ShiftModifier)
    assert net.segments["s1"].oneway is OneWay.NO
    use(window, "service")
    window.brush_choice.setCurrentIndex(window.brush_choice.findData(Service.BOTH))
    click(qtbot, window, 100.0, 50.0)
    assert net.segments["s2"].service is Service.BOTH
    use(window, "depot")
    click(qtbot, window, 1.0, 1.0)
    assert net.depot == "a" and window.scene.depot_item.isVisible()
    click(qtbot, window, 100.0, 30.0)  # on a street: cut there, depot on the cut
    assert net.depot not in ("a", "b", "c") and len(net.segments) == 3
    use(window, "erase")
    click(qtbot, window, 50.0, 0.0)
    assert "s1" not in net.segments and "a" not in net.nodes  # the orphan end goes too
    assert window.scene.street_item("s1") is None


def test_pick_click_shift_and_box(qtbot, window) -> None:
    doc = window.document
    use(window, "pick")
    click(qtbot, window, 50.0, 0.0)
    assert doc.selection == ["s1"]
    click(qtbot, window, 100.0, 60.0, modifier=Qt.KeyboardModifier.ShiftModifier)
    assert doc.selection == ["s1", "s2"]
    click(qtbot, window, 40.0, 60.0)  # empty ground clears
    assert doc.selection == []
    vp = window.view.viewport()
    qtbot.mousePress(vp, LEFT, pos=at(window, 20.0, 20.0))
    qtbot.mouseMove(vp, at(window, 60.0, -20.0))
    qtbot.mouseRelease(vp, LEFT, pos=at(window, 60.0, -20.0))
    assert doc.selection == ["s1"]
    click(qtbot, window, 100.0, 100.0)  # a junction
    assert doc.node_selection == ["c"] and doc.selection == []
    window.delete_selection()
    assert "c" not in doc.network.nodes and "s2" not in doc.network.segments


def test_wheel_zooms_round_the_cursor_and_middle_drag_pans(qtbot, window) -> None:
    view = window.view
    vp = view.viewport()
    spot = at(window, 100.0, 100.0)
    before = view.mapToScene(spot)
    scale = view.scale_factor()
    wheel = QWheelEvent(
        QPointF(spot),
        QPointF(vp.mapToGlobal(spot)),
        QPoint(0, 0),
        QPoint(0, 120),
        Qt.MouseButton.NoButton,
        Qt.KeyboardModifier.NoModifier,
        Qt.ScrollPhase.NoScrollPhase,
        False,
    )
    QApplication.sendEvent(vp, wheel)
    assert view.scale_factor() == pytest.approx(scale * 1.25)
    after = view.mapToScene(spot)
    assert (after.x(), after.y()) == pytest.approx((before.x(), before.y()), abs=1.0)
    centre = view.mapToScene(vp.rect().center())
    qtbot.mousePress(vp, Qt.MouseButton.MiddleButton, pos=QPoint(200, 200))
    qtbot.mouseMove(vp, QPoint(260, 200))
    qtbot.mouseRelease(vp, Qt.MouseButton.MiddleButton, pos=QPoint(260, 200))
    moved = view.mapToScene(vp.rect().center())
    assert moved.x() == pytest.approx(centre.x() - 60 / view.scale_factor(), abs=1.0)
    assert len(window.document.network.segments) == 2  # panning edits nothing


def test_fit_cursor_readout_and_backdrop_steps(qtbot, window) -> None:
    window.view.fit_to_district()
    rect = window.view.mapToScene(window.view.viewport().rect()).boundingRect()
    assert rect.contains(QPointF(0, 0)) and rect.contains(QPointF(100, -100))
    qtbot.mouseMove(window.view.viewport(), at(window, 50.0, 25.0))
    assert "50" in window.cursor_label.text() and "25" in window.cursor_label.text()
    # the grid follows the zoom through the one-five steps (10, 50, 100, 500 m ...)
    assert grid_spacing(1.0) == 50.0  # 50 px apart at 1 px/m (MIN_GRID_PX = 24)
    assert grid_spacing(0.1) == 500.0
    assert grid_spacing(3.0) == 10.0
    assert major_spacing(10.0) == 50.0 and major_spacing(50.0) == 100.0
    assert scale_bar_length(1.0) == 100.0 and scale_bar_length(0.01) == 10_000.0
    window.grab()  # paints backdrop, streets, arrows and marks without error


def test_zoomed_out_streets_draw_merged_and_still_answer_clicks(qtbot, window) -> None:
    scene = window.scene
    place_view(window, (50.0, 50.0), 0.05)  # 20 m per pixel: below COARSE_BELOW_PX_PER_M
    window.view.viewport().grab()
    QApplication.processEvents()  # the coarse layer switches the mode after the paint
    assert scene.coarse
    assert sum(p.elementCount() for p in scene.merged_paths().values()) == 4  # 2 streets x 2
    place_view(window, (50.0, 50.0), 2.0)
    use(window, "pick")
    click(qtbot, window, 50.0, 0.0)
    assert window.document.selection == ["s1"]
    window.view.viewport().grab()
    QApplication.processEvents()
    assert not scene.coarse


def test_one_way_arrows_follow_the_direction(qtbot, window) -> None:
    use(window, "direction")
    click(qtbot, window, 50.0, 0.0)  # s1 one-way as drawn: west to east
    mids, angles = window.scene.arrow_arrays()
    assert mids.tolist() == [[50.0, 0.0]]
    assert angles[0] == pytest.approx(0.0)  # pointing along +x
    click(qtbot, window, 50.0, 0.0)  # turned round
    _mids, angles = window.scene.arrow_arrays()
    assert abs(angles[0]) == pytest.approx(3.141592653589793)
    window.document.undo_stack.undo()
    window.document.undo_stack.undo()
    assert len(window.scene.arrow_arrays()[0]) == 0


def test_clicks_beyond_the_snap_distance_make_new_junctions(qtbot, window) -> None:
    net = window.document.network
    assert window.view.snap_distance() == pytest.approx(4.0)  # 8 px at 2 px/m
    use(window, "lay")
    click(qtbot, window, 107.0, -7.0)  # ~10 m (20 px) from junction b and from both streets
    click(qtbot, window, 60.0, -6.0)  # 6 m (12 px) below street s1
    assert len(net.nodes) == 5 and len(net.segments) == 3
    assert {s.id for s in net.segments.values()} >= {"s1", "s2"}
    assert net.segments["s1"].geometry == ((0.0, 0.0), (100.0, 0.0))  # not cut


def test_space_held_drag_pans_instead_of_drawing(qtbot, window) -> None:
    view = window.view
    vp = view.viewport()
    use(window, "lay")
    view.setFocus()
    before = view.mapToScene(vp.rect().center())
    qtbot.keyPress(view, Qt.Key.Key_Space)
    qtbot.mousePress(vp, LEFT, pos=QPoint(300, 300))
    qtbot.mouseMove(vp, QPoint(300, 240))
    qtbot.mouseRelease(vp, LEFT, pos=QPoint(300, 240))
    qtbot.keyRelease(view, Qt.Key.Key_Space)
    after = view.mapToScene(vp.rect().center())
    assert after.y() == pytest.approx(before.y() + 60 / view.scale_factor(), abs=1.0)
    assert len(window.document.network.nodes) == 3  # nothing drawn
    assert window.document.undo_stack.count() == 0
