"""The window opens offscreen with its canvas, tools, panels and menus."""

from __future__ import annotations

from app.canvas.view import CanvasView
from tests.app_support import make_window


def test_main_window_opens(qtbot, tmp_path) -> None:  # qtbot: pytest-qt's fixture
    window = make_window(qtbot, tmp_path)
    assert window.windowTitle().endswith("Roundsman")
    assert window.isVisible()
    assert isinstance(window.centralWidget(), CanvasView)
    assert set(window.menus) >= {"file", "edit", "view", "tools", "plan"}
    assert [a.text() for a in window.tool_bar.actions()][:8] == [
        "Pick",
        "Lay street",
        "Move junction",
        "Cut",
        "Erase",
        "Direction",
        "Service brush",
        "Depot",
    ]
    assert window.properties_dock.isVisible() and window.legend_dock.isVisible()
