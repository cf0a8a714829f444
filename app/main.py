"""The main window.  For now a shell: the canvas, panels and planning arrive
with the desktop-planner work; the engine it will call is ready in ``core``."""

from __future__ import annotations

import sys

from PySide6.QtWidgets import QApplication, QLabel, QMainWindow

from core import __version__


class MainWindow(QMainWindow):
    """Roundsman's main window."""

    def __init__(self) -> None:
        super().__init__()
        self.setWindowTitle("Roundsman")
        self.resize(1100, 750)
        note = QLabel(
            "Roundsman — plan street service circuits.\n\n"
            "The drawing canvas is on its way. Meanwhile, plan from the command line:\n"
            "    roundsman plan sample_data/thistlewick.geojson"
        )
        note.setMargin(24)
        self.setCentralWidget(note)
        self.statusBar().showMessage(f"Roundsman {__version__}")


def run_window(argv: list[str] | None = None) -> int:
    """Open the window and run Qt's event loop until it closes."""
    app = QApplication.instance() or QApplication(argv or sys.argv[:1])
    app.setApplicationName("Roundsman")
    app.setOrganizationName("Roundsman")
    window = MainWindow()
    window.show()
    return int(app.exec())
