"""Render the main window with a planned circuit to ``docs/screenshot.png``.

Opens Roundsman offscreen (``QT_QPA_PLATFORM=offscreen``; no display needed)
on the sample district, ``sample_data/thistlewick.geojson``, plans it with the
same button a user presses (the engine runs in the planning worker), selects
one step so the highlight shows, and saves ``QWidget.grab()`` of the window as
a PNG.  Settings and autosave go to a temporary folder, so the user's own
layout is neither used nor changed.

Run from the repository root::

    python tools/screenshot.py                       # writes docs/screenshot.png
    python tools/screenshot.py --out shot.png --size 1600x1000 --step 40 --time-limit 10
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _parse_size(text: str) -> tuple[int, int]:
    try:
        w, h = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"size {text!r} is not WIDTHxHEIGHT, e.g. 1600x1000"
        ) from None
    if w < 400 or h < 300:
        raise argparse.ArgumentTypeError(f"size {text!r} is too small (at least 400x300)")
    return w, h


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--input", type=Path, default=ROOT / "sample_data" / "thistlewick.geojson")
    parser.add_argument("--out", type=Path, default=ROOT / "docs" / "screenshot.png")
    parser.add_argument("--size", type=_parse_size, default=(1600, 1000))
    parser.add_argument("--time-limit", type=int, default=30, help="engine time budget (s)")
    parser.add_argument(
        "--step", type=int, default=-1, help="step to highlight (0: none; default: a long one)"
    )
    args = parser.parse_args(argv)

    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    sys.path.insert(0, str(ROOT))
    from PySide6.QtCore import QEventLoop, QSettings, Qt, QTimer
    from PySide6.QtWidgets import QApplication, QMessageBox

    from app.main import MainWindow
    from core.files import read_network

    app = QApplication.instance() or QApplication(["roundsman-screenshot"])
    network = read_network(args.input)
    with tempfile.TemporaryDirectory() as tmp:
        settings = QSettings(str(Path(tmp) / "settings.ini"), QSettings.Format.IniFormat)
        window = MainWindow(settings=settings, autosave_dir=Path(tmp) / "autosave", network=network)
        width, height = args.size
        window.resize(width, height)
        window.show()
        app.processEvents()
        ctl = window.planning
        # the Circuit panel in front of the street properties, taller than the key
        window.tabifyDockWidget(window.properties_dock, ctl.circuit_dock)
        ctl.circuit_dock.raise_()
        window.resizeDocks([ctl.circuit_dock], [int(width * 0.36)], Qt.Orientation.Horizontal)
        window.resizeDocks(
            [ctl.circuit_dock, window.legend_dock],
            [int(height * 0.74), int(height * 0.2)],
            Qt.Orientation.Vertical,
        )
        ctl.panel.time_limit.setValue(args.time_limit)
        outcome: list[str] = []
        loop = QEventLoop()
        ctl.runner.finished.connect(lambda _p: (outcome.append("planned"), loop.quit()))
        ctl.runner.failed.connect(lambda e: (outcome.append(f"failed: {e}"), loop.quit()))
        ctl.runner.cancelled.connect(lambda: (outcome.append("cancelled"), loop.quit()))
        ctl.plan_action.trigger()
        if not outcome:
            loop.exec()
        if outcome != ["planned"]:
            print(f"screenshot: planning {outcome[0]}", file=sys.stderr)
            return 1
        window.view.fit_to_district()
        ctl.panel.splitter.setSizes([int(height * 0.5), int(height * 0.22)])
        for _ in range(3):  # let layouts settle and the overlay match the final zoom
            app.processEvents()
            QTimer.singleShot(150, loop.quit)
            loop.exec()
        step = args.step if args.step >= 0 else _long_step(window.document.plan)
        if step > 0:
            ctl.select_step(step - 1)
            app.processEvents()
        window.view.viewport().repaint()
        args.out.parent.mkdir(parents=True, exist_ok=True)
        if not window.grab().save(str(args.out)):
            print(f"screenshot: could not write {args.out}", file=sys.stderr)
            return 1
        plan = window.document.plan
        print(
            f"wrote {args.out} ({width}x{height}): {len(plan.steps)} steps, "
            f"{plan.total_m / 1000:.2f} km, deadhead {plan.deadhead_share * 100:.1f} %"
        )
        window.ask_save_changes = lambda: QMessageBox.StandardButton.Discard  # no prompt
        window.close()
    return 0


def _long_step(plan) -> int:
    """The longest service pass in the middle third of the circuit (1-based)."""
    n = len(plan.steps)
    middle = [i for i in range(n // 3, 2 * n // 3) if plan.steps[i].service]
    return 1 + max(middle, key=lambda i: plan.steps[i].length) if middle else 0


if __name__ == "__main__":  # the engine may start HiGHS in a spawned child, which imports this
    sys.exit(main())
