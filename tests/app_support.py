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
from core.model import Network, Node, OneWay, Segment, Service


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


GRID_X0, GRID_Y0 = 500_000.0, 5_000_000.0
"""Grid origin in UTM zone 26N (EPSG:32626): open Atlantic, our invented town's water."""


def street_grid(
    n: int,
    *,
    depot: str,
    demand: float = 0.0,
    one_way: tuple[int, ...] = (),
    both_kerbs: tuple[int, ...] = (),
) -> Network:
    """An n x n grid of 100 m streets ``g1``, ``g2``, ... with coordinates; the streets
    numbered in ``one_way`` run one way as drawn, those in ``both_kerbs`` need both kerbs."""
    net = Network("Thistlewick grid", "EPSG:32626")
    for i in range(n):
        for j in range(n):
            net.add_node(Node(f"n{i}_{j}", GRID_X0 + 100.0 * i, GRID_Y0 + 100.0 * j))
    k = 0
    for i in range(n):
        for j in range(n):
            for di, dj in ((1, 0), (0, 1)):
                if i + di < n and j + dj < n:
                    k += 1
                    a, b = net.nodes[f"n{i}_{j}"], net.nodes[f"n{i + di}_{j + dj}"]
                    net.add_segment(
                        Segment(
                            f"g{k}",
                            a.id,
                            b.id,
                            geometry=((a.x, a.y), (b.x, b.y)),
                            oneway=OneWay.FORWARD if k in one_way else OneWay.NO,
                            service=Service.BOTH if k in both_kerbs else Service.EITHER,
                            demand=demand,
                        )
                    )
    net.depot = depot
    return net
