"""The window opens offscreen (the full canvas comes with the desktop-planner work)."""

from __future__ import annotations

from app.main import MainWindow


def test_main_window_opens(qtbot) -> None:  # qtbot: pytest-qt's fixture
    window = MainWindow()
    qtbot.addWidget(window)
    window.show()
    assert window.windowTitle() == "Roundsman"
    assert window.isVisible()
