"""The street panel: edits of one or many picked streets reach the model, undoably.

The attribute keys checked are those fixed in DEVELOPERS.md ("Street attributes").
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from app.panels.properties import MIXED
from core.model import OneWay, Service
from tests.app_support import make_window, snapshot, two_streets


@pytest.fixture
def window(qtbot, tmp_path):
    return make_window(qtbot, tmp_path, two_streets())


def test_panel_edits_reach_the_model(qtbot, window) -> None:
    doc = window.document
    panel = window.properties
    start = snapshot(doc.network)
    doc.set_selection(["s1", "s2"])
    assert panel.caption.text() == "2 streets picked"

    panel.name.setFocus()
    panel.name.selectAll()
    qtbot.keyClicks(panel.name, "Kiln Row")
    qtbot.keyClick(panel.name, Qt.Key.Key_Return)
    assert [s.name for s in doc.network] == ["Kiln Row", "Kiln Row"]

    panel.direction.activated.emit(1)  # "One-way, as drawn"
    assert all(s.oneway is OneWay.FORWARD for s in doc.network)
    panel.service.activated.emit(panel.service.findData(Service.ALONG))
    assert all(s.service is Service.ALONG for s in doc.network)

    panel.priority.setValue(3)
    panel.priority.editingFinished.emit()
    panel.speed.setValue(25)
    panel.speed.editingFinished.emit()
    panel.days[5].click()  # Saturday off
    panel.days[6].click()  # Sunday off
    for seg in doc.network:
        assert seg.attrs["priority"] == 3
        assert seg.attrs["speed_kmh"] == 25
        assert seg.attrs["days"] == ["mon", "tue", "wed", "thu", "fri"]

    doc.set_selection(["s2"])
    panel.length_fixed.click()
    panel.length.setValue(140.0)
    panel.length.editingFinished.emit()
    assert doc.network.segments["s2"].length == 140.0
    assert doc.network.segments["s2"].length_given
    assert not doc.network.segments["s1"].length_given

    # everything above is undone exactly
    while doc.undo_stack.canUndo():
        doc.undo_stack.undo()
    assert snapshot(doc.network) == start


def test_panel_shows_mixed_values_and_follows_undo(qtbot, window) -> None:
    doc = window.document
    panel = window.properties
    doc.set_selection(["s1"])
    panel.name.setText("Mill Lane")
    panel.name.editingFinished.emit()
    doc.set_selection(["s1", "s2"])
    assert panel.name.text() == "" and panel.name.placeholderText() == MIXED
    panel.name.editingFinished.emit()  # left blank over different names: nothing changes
    assert doc.network.segments["s1"].name == "Mill Lane"
    doc.undo_stack.undo()
    assert doc.network.segments["s1"].name == ""
    assert panel.name.placeholderText() == ""


def test_panel_refuses_along_on_a_two_way_street_with_a_message(qtbot, window) -> None:
    doc = window.document
    doc.set_selection(["s1"])
    panel = window.properties
    panel.service.activated.emit(panel.service.findData(Service.ALONG))
    assert doc.network.segments["s1"].service is Service.EITHER
    assert "one-way" in panel.message.text()
    assert doc.undo_stack.count() == 0


def test_edit_menu_acts_on_the_selection(qtbot, window) -> None:
    doc = window.document
    window.select_all()
    window.act_oneway.trigger()
    assert all(s.oneway is OneWay.FORWARD for s in doc.network)
    window.act_reverse.trigger()
    assert all(s.oneway is OneWay.BACKWARD for s in doc.network)
    window.set_service_of_selection(Service.NONE)
    assert all(s.service is Service.NONE for s in doc.network)
    window.act_twoway.trigger()
    assert all(s.oneway is OneWay.NO for s in doc.network)


def test_panel_marks_a_turning_place_on_picked_junctions(qtbot, window) -> None:
    doc = window.document
    panel = window.properties
    assert not panel.turning.isEnabled()
    doc.set_node_selection(["b"])
    assert panel.turning.isEnabled() and panel.junction_caption.text() == "Junction b"
    panel.turning.click()
    assert doc.network.nodes["b"].turning_place
    doc.undo_stack.undo()
    assert not doc.network.nodes["b"].turning_place
    assert panel.turning.checkState() == Qt.CheckState.Unchecked
