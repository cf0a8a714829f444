"""Shared set-up for the window tests: a window that never touches the user's
settings or autosave folder and never opens a modal dialog."""

from __future__ import annotations

import json
from pathlib import Path

from PySide6.QtCore import QPoint, QPointF, QSettings
from PySide6.QtWidgets import QApplication, QMessageBox, QWidget

from app.canvas.coords import to_scene
from app.main import MainWindow
from core.files.project import project_to_dict
from core.model import Network, Node, Segment


def snapshot(net: Network) -> str:
    """The whole network as text, order included (the project document)."""
    return json.dumps(project_to_dict(net))


def temp_settings(folder: Path) -> QSettings:
    return QSettings(str(folder / "settings.ini"), QSettings.Format.IniFormat)


def _discard_on_close(window: MainWindow) -> None:
    window.ask_save_changes = lambda: QMessageBox.StandardButton.Discard
    # Non-modal dialogs the test left open (an import report, say) close with it too.
    for widget in QApplication.topLevelWidgets():
        if widget is not window and widget.isVisible() and _owned_by(widget, window):
            widget.close()


def _owned_by(widget: QWidget, window: MainWindow) -> bool:
    parent = widget.parentWidget()
    while parent is not None:
        if parent is window:
            return True
        parent = parent.parentWidget()
    return False


def make_window(qtbot, folder: Path, network: Network | None = None) -> MainWindow:
    """A shown window on temporary settings; prompts answer "Discard", warnings
    are collected in ``window.warnings`` instead of opening a dialog."""
    window = MainWindow(
        settings=temp_settings(folder), autosave_dir=folder / "autosave", network=network
    )
    # At teardown answer "Discard", whatever a test set: a window that refused to close
    # would stay on screen over the next test's window and take its mouse events.
    qtbot.addWidget(window, before_close_func=_discard_on_close)
    window.warnings = []
    window._warn = lambda title, text: window.warnings.append((title, text))
    window.ask_save_changes = lambda: QMessageBox.StandardButton.Discard
    window.ask_recover = lambda count, when: False
    window.resize(1000, 700)
    window.show()
    qtbot.waitExposed(window)
    QApplication.processEvents()  # the window's first fit-to-district runs now
    return window


def place_view(window: MainWindow, centre: tuple[float, float], pixels_per_metre: float) -> None:
    """Fix the view's zoom and centre so tests can click known network points."""
    view = window.view
    view.resetTransform()
    view.scale(pixels_per_metre, pixels_per_metre)
    view.centerOn(to_scene(*centre))


def at(window: MainWindow, x: float, y: float) -> QPoint:
    """The viewport pixel showing network point ``(x, y)``."""
    return window.view.mapFromScene(QPointF(x, -y))


def two_streets() -> Network:
    """An L of two streets: a(0,0)–b(100,0)–c(100,100)."""
    net = Network("Thistlewick corner", "EPSG:32626")
    for nid, x, y in (("a", 0.0, 0.0), ("b", 100.0, 0.0), ("c", 100.0, 100.0)):
        net.add_node(Node(nid, x, y))
    net.add_segment(Segment("s1", "a", "b", geometry=((0.0, 0.0), (100.0, 0.0))))
    net.add_segment(Segment("s2", "b", "c", geometry=((100.0, 0.0), (100.0, 100.0))))
    return net

