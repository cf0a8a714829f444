"""How fast the canvas opens, draws, pans, zooms, hit-tests and edits large districts.

Prints a table (no pass/fail): for synthetic towns of growing size
(:func:`bench.synthetic.synthetic_network`, 20 % one-way, 15 % without
service) it times

- **read**: reading the town back from a Roundsman project file
  (``app.files.open_network``, i.e. ``core.files.read_network``);
- **open**: replacing the document's network and building the scene;
- **first draw**: fitting the district in a 1280 x 800 view and painting it;
- **pan / zoom (whole)**: one repaint after a pan or a wheel step with the
  whole district in view (milliseconds per frame);
- **pan (street)**: one repaint after a pan at street level (2 px/m), where
  arrowheads and junction marks are drawn;
- **hit**: finding the street under the cursor (``streets_near``);
- **edit**: moving a junction through the undo stack, scene update included.

Run offscreen (``QT_QPA_PLATFORM=offscreen``, set here).  Use ``--quick`` for
the two smaller towns only::

    nice python bench/bench_canvas.py [--quick]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from PySide6.QtCore import QPointF, QSettings
from PySide6.QtWidgets import QApplication

from bench.synthetic import synthetic_network
from core import edit as ed

SIZES = (1_000, 5_000, 20_000, 50_000)
QUICK_SIZES = (1_000, 5_000)
FRAMES = 12


def _paint(view) -> float:
    """Seconds to repaint the whole viewport once."""
    QApplication.processEvents()  # a level-of-detail switch the last frame asked for
    t = time.perf_counter()
    view.viewport().grab()
    return time.perf_counter() - t


def measure(n: int, window, folder: Path) -> dict[str, float]:
    from app.files import open_network
    from core.files.project import save_project

    built = synthetic_network(n, seed=7, oneway_share=0.2, optional_share=0.15)
    path = folder / f"town{n}.roundsman"
    save_project(built, path)
    t = time.perf_counter()
    network, _is_project = open_network(path)
    read = time.perf_counter() - t
    view = window.view
    t = time.perf_counter()
    window.document.load(network)
    opened = time.perf_counter() - t
    t = time.perf_counter()
    view.fit_to_district()
    view.viewport().grab()
    QApplication.processEvents()
    first = time.perf_counter() - t

    pans = []
    for i in range(FRAMES):
        view._pan_by(QPointF(15 if i % 2 else -15, 9))
        pans.append(_paint(view))
    zooms = []
    centre = QPointF(view.viewport().rect().center())
    for i in range(FRAMES):
        view.zoom_by(1.25 if i % 2 else 0.8, centre)
        zooms.append(_paint(view))

    view.resetTransform()
    view.scale(2.0, 2.0)
    some = next(iter(network.nodes.values()))
    view.centerOn(QPointF(some.x, -some.y))
    street_pans = []
    for i in range(FRAMES):
        view._pan_by(QPointF(40 if i % 2 else -40, 25))
        street_pans.append(_paint(view))

    scene = window.scene
    hits = []
    nodes = list(network.nodes.values())[:: max(1, len(network.nodes) // 50)]
    for node in nodes:
        t = time.perf_counter()
        scene.streets_near(QPointF(node.x + 3.0, -node.y), view.snap_distance())
        hits.append(time.perf_counter() - t)

    edits = []
    for node in nodes[:10]:
        t = time.perf_counter()
        window.document.apply_edit(ed.move_node(network, node.id, node.x + 2.0, node.y + 1.0))
        QApplication.processEvents()
        edits.append(time.perf_counter() - t)
    return {
        "segments": len(network.segments),
        "read_s": read,
        "open_s": opened,
        "first_draw_s": first,
        "pan_whole_ms": 1000 * statistics.median(pans),
        "zoom_whole_ms": 1000 * statistics.median(zooms),
        "pan_street_ms": 1000 * statistics.median(street_pans),
        "hit_ms": 1000 * statistics.median(hits),
        "edit_ms": 1000 * statistics.median(edits),
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="the 1k and 5k towns only")
    args = parser.parse_args(argv)
    app = QApplication.instance() or QApplication([])
    from tempfile import TemporaryDirectory

    from app.main import MainWindow

    with TemporaryDirectory() as tmp:
        settings = QSettings(str(Path(tmp) / "s.ini"), QSettings.Format.IniFormat)
        window = MainWindow(settings=settings, autosave_dir=Path(tmp) / "autosave")
        window.resize(1280, 800)
        window.show()
        app.processEvents()
        head = (
            f"{'segments':>9} {'read s':>7} {'open s':>7} {'1st draw s':>10} "
            f"{'pan ms':>8} {'zoom ms':>8} {'pan@2px/m ms':>13} {'hit ms':>7} {'edit ms':>8}"
        )
        print(
            f"Canvas benchmark, viewport {window.view.viewport().width()}x"
            f"{window.view.viewport().height()} px, offscreen raster, medians of {FRAMES} frames"
        )
        print(head)
        print("-" * len(head))
        for n in QUICK_SIZES if args.quick else SIZES:
            r = measure(n, window, Path(tmp))
            print(
                f"{r['segments']:>9,} {r['read_s']:>7.2f} {r['open_s']:>7.2f} "
                f"{r['first_draw_s']:>10.2f} {r['pan_whole_ms']:>8.1f} {r['zoom_whole_ms']:>8.1f} "
                f"{r['pan_street_ms']:>13.1f} {r['hit_ms']:>7.2f} {r['edit_ms']:>8.1f}",
                flush=True,
            )
        window.document.undo_stack.setClean()
        window.ask_save_changes = lambda: None
        window.autosaver.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
