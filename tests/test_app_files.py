"""Files in the window: save and open, import, export, recent files, the close
prompt, autosave and recovery after a crash, and the layout kept in QSettings.

Saved and recovered networks are compared with the drawing through the
project document (``project_to_dict``); exported GeoJSON is read back with
``json`` and checked against RFC 7946's FeatureCollection shape; the exported
plan is read back with ``plan_from_dict``.
"""

from __future__ import annotations

import json
import threading
from pathlib import Path

import pytest
from PySide6.QtCore import QMimeData, QPointF, Qt, QTimer, QUrl
from PySide6.QtGui import QDropEvent
from PySide6.QtWidgets import QApplication, QMessageBox, QProgressDialog

import app.main as main_module
from app.files import import_filters, is_project_file
from app.panels.preferences import Preferences, PreferencesDialog
from app.recovery import find_recoverable
from core.edit import set_depot
from core.files import FORMAT_LABELS, FORMATS
from core.files.plan_json import plan_from_dict
from core.plan import Plan, Step
from tests.app_support import make_window, snapshot, temp_settings, two_streets

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "thistlewick.geojson"


@pytest.fixture
def window(qtbot, tmp_path):
    return make_window(qtbot, tmp_path, two_streets())


def test_save_then_open_gives_the_same_network(qtbot, window, tmp_path) -> None:
    window.document.apply_edit(set_depot(window.document.network, "b"))
    drawn = snapshot(window.document.network)
    target = tmp_path / "corner.roundsman"
    assert window.save_to(target)
    assert is_project_file(target)
    assert not window.document.dirty and not window.isWindowModified()
    assert window.recent.paths()[0] == str(target.resolve())
    window.new_file()
    assert len(window.document.network.segments) == 0
    assert window.open_path(target)
    assert snapshot(window.document.network) == drawn
    assert window.document.path == target and not window.document.dirty
    assert window.windowTitle().startswith("corner.roundsman")


def test_import_geojson_is_unsaved_until_saved_as_project(qtbot, window) -> None:
    assert window.open_path(SAMPLE)
    doc = window.document
    assert doc.path is None and doc.dirty  # an import, not a project
    assert len(doc.network.segments) == 255  # sample_data/README.md gives 255 segments
    assert window.scene.street_item(next(iter(doc.network.segments))) is not None
    assert "Imported" in window.statusBar().currentMessage()


def test_open_refuses_a_broken_file_with_a_message(qtbot, window, tmp_path) -> None:
    bad = tmp_path / "bad.json"
    bad.write_text('{"type": "FeatureCollection", "features": [', encoding="utf-8")
    before = snapshot(window.document.network)
    assert not window.open_path(bad, ask=False)
    assert window.warnings and "line" in window.warnings[0][1]
    assert snapshot(window.document.network) == before


def test_large_files_are_read_off_the_window_thread(qtbot, window, tmp_path, monkeypatch) -> None:
    # With the size threshold at 0 every file goes through the reading thread: the
    # result must equal the synchronous read, and a broken file still gives its message
    # (here the JSON parser's line number) on the window's thread.
    seen: list[str] = []
    real = main_module.open_network

    def spy(path, **options):
        seen.append(threading.current_thread().name)
        return real(path, **options)

    window.background_bytes = 0
    monkeypatch.setattr(main_module, "open_network", spy)
    assert window.open_path(SAMPLE, ask=False)
    assert seen == ["roundsman-read"]
    direct, _ = real(SAMPLE)
    assert snapshot(window.document.network) == snapshot(direct)
    bad = tmp_path / "bad.json"
    bad.write_text('{"type": "FeatureCollection", "features": [', encoding="utf-8")
    assert not window.open_path(bad, ask=False)
    assert window.warnings and "line" in window.warnings[-1][1]


def test_cancel_while_reading_leaves_the_drawing(qtbot, window, monkeypatch) -> None:
    release = threading.Event()
    real = main_module.open_network

    def slow(path, **options):
        release.wait(10)
        return real(path, **options)

    monkeypatch.setattr(main_module, "open_network", slow)
    window.background_bytes = 0
    before = snapshot(window.document.network)

    def press_cancel() -> None:
        dialogs = [w for w in QApplication.topLevelWidgets() if isinstance(w, QProgressDialog)]
        dialogs += window.findChildren(QProgressDialog)
        assert dialogs, "the reading dialog should be showing"
        dialogs[0].cancel()

    QTimer.singleShot(200, press_cancel)
    assert not window.open_path(SAMPLE, ask=False)
    release.set()
    assert snapshot(window.document.network) == before
    assert "Stopped reading" in window.statusBar().currentMessage()


def test_import_filters_offer_every_readable_format() -> None:
    text = import_filters()
    for fmt in FORMATS:
        assert FORMAT_LABELS.get(fmt, fmt) in text


def test_export_network_and_plan(qtbot, window, tmp_path) -> None:
    out = tmp_path / "corner.geojson"
    window.document.network.crs = "EPSG:32626"
    assert window.export_network(out, "geojson")
    doc = json.loads(out.read_text(encoding="utf-8"))
    # RFC 7946 section 3.3: a FeatureCollection has a "features" array
    assert doc["type"] == "FeatureCollection"
    lines = [f for f in doc["features"] if f["geometry"]["type"] == "LineString"]
    assert len(lines) == 2
    assert not window.act_export_plan.isEnabled()
    steps = [
        Step("s1", "a", "b", True, 100.0),
        Step("s2", "b", "c", True, 100.0),
        Step("s2", "c", "b", False, 100.0, forward=False),
        Step("s1", "b", "a", False, 100.0, forward=False),
    ]
    window.document.set_plan(Plan("a", steps, 200.0, "test", False))
    assert window.act_export_plan.isEnabled()
    plan_file = tmp_path / "corner.plan.json"
    assert window.export_plan(plan_file)
    back = plan_from_dict(json.loads(plan_file.read_text(encoding="utf-8")))
    assert [(s.segment, s.start, s.end, s.service) for s in back.steps] == [
        (s.segment, s.start, s.end, s.service) for s in steps
    ]
    # an edit makes the plan stale: it is dropped
    window.select_all()
    window.act_oneway.trigger()
    assert window.document.plan is None and not window.act_export_plan.isEnabled()


def test_closing_with_unsaved_work_prompts(qtbot, window, tmp_path) -> None:
    asked = []

    def answer(button):
        def ask():
            asked.append(button)
            return button

        return ask

    window.select_all()
    window.act_oneway.trigger()
    assert window.document.dirty
    window.ask_save_changes = answer(QMessageBox.StandardButton.Cancel)
    assert not window.close()
    assert window.isVisible() and asked == [QMessageBox.StandardButton.Cancel]
    # "Save" with no file name asks for one; give it through the dialog function
    target = tmp_path / "kept.roundsman"
    window.save_as = lambda: window.save_to(target)
    window.ask_save_changes = answer(QMessageBox.StandardButton.Save)
    assert window.close()
    assert target.exists() and len(asked) == 2


def test_closing_clean_work_does_not_prompt(qtbot, tmp_path) -> None:
    w = make_window(qtbot, tmp_path)
    w.ask_save_changes = lambda: pytest.fail("no prompt expected for a clean drawing")
    assert w.close()


def test_recovered_autosave_equals_the_lost_drawing(qtbot, tmp_path) -> None:
    first = make_window(qtbot, tmp_path, two_streets())
    first.select_all()
    first.act_oneway.trigger()
    first.document.set_selection(["s2"])
    first.properties.name.setText("Tanner's Walk")
    first.properties.name.editingFinished.emit()
    lost = snapshot(first.document.network)
    assert first.autosaver.save_now()
    assert first.autosaver.file.exists()
    assert find_recoverable(first.autosaver.folder) == []  # its window still runs
    # a crash: the process ends without cleaning up (the lock is released by the OS)
    first.autosaver.lock.unlock()
    first.autosaver.timer.stop()
    first.ask_save_changes = lambda: QMessageBox.StandardButton.Discard
    first.autosaver.close = lambda: None  # the crash leaves the autosave behind
    first.close()

    second = make_window(qtbot, tmp_path)
    offers = []
    second.ask_recover = lambda count, when: offers.append(count) or True
    assert second.offer_recovery()
    assert offers == [1]
    assert snapshot(second.document.network) == lost
    assert second.document.dirty  # recovered work is not yet saved
    assert find_recoverable(second.autosaver.folder) == []  # the old autosave is gone


def test_declining_recovery_discards_it(qtbot, tmp_path) -> None:
    first = make_window(qtbot, tmp_path, two_streets())
    first.autosaver.save_now()
    first.autosaver.lock.unlock()
    first.autosaver.close = lambda: None
    first.close()
    second = make_window(qtbot, tmp_path)
    assert not second.offer_recovery()  # make_window answers "no"
    assert find_recoverable(second.autosaver.folder) == []
    assert len(second.document.network.segments) == 0


def test_saving_removes_the_autosave(qtbot, window, tmp_path) -> None:
    assert window.autosaver.save_now()
    assert window.autosaver.file.exists()
    window.save_to(tmp_path / "x.roundsman")
    assert not window.autosaver.file.exists()
    assert not window.autosaver.save_now()  # nothing unsaved


def test_drop_a_file_to_open_it(qtbot, window) -> None:
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(SAMPLE))])
    drop = QDropEvent(
        QPointF(50, 50),
        Qt.DropAction.CopyAction,
        mime,
        Qt.MouseButton.LeftButton,
        Qt.KeyboardModifier.NoModifier,
    )
    # QApplication only routes drops during a real drag, so call the handler
    window.dropEvent(drop)
    assert drop.isAccepted()
    assert len(window.document.network.segments) == 255


def test_layout_and_preferences_persist(qtbot, tmp_path) -> None:
    first = make_window(qtbot, tmp_path)
    first.legend_dock.hide()
    dialog = PreferencesDialog(first.preferences, first)
    dialog.snap.setValue(12)
    dialog.autosave.setValue(30)
    first.apply_preferences(dialog.chosen())  # what OK in the dialog does
    assert first.autosaver.timer.interval() == 30_000
    first.recent.add(SAMPLE)
    assert first.close()
    settings = temp_settings(tmp_path)
    assert settings.value("window/state") is not None
    second = make_window(qtbot, tmp_path)
    assert not second.legend_dock.isVisible()
    assert second.properties_dock.isVisible()
    assert second.view.snap_px == 12.0
    assert second.preferences == Preferences(12, 30)
    assert second.recent.paths() == [str(SAMPLE.resolve())]


def test_print_route_card_hands_the_plan_to_the_card_printer(qtbot, window, monkeypatch) -> None:
    import app.card.render as render

    printed = []
    monkeypatch.setattr(
        render, "print_card", lambda parent, content: printed.append(content) or True
    )
    assert not window.act_print_card.isEnabled()
    steps = [
        Step("s1", "a", "b", True, 100.0),
        Step("s2", "b", "c", True, 100.0),
        Step("s2", "c", "b", False, 100.0, forward=False),
        Step("s1", "b", "a", False, 100.0, forward=False),
    ]
    window.document.set_plan(Plan("a", steps, 200.0, "test", False))
    assert window.act_print_card.isEnabled()
    window.act_print_card.trigger()
    assert len(printed) == 1 and printed[0].rows  # the card has the driver's instructions
