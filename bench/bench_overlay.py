"""How fast the planning overlay draws large circuits: prints a table.

For synthetic towns (``bench/synthetic.py``) of 1,000 to 20,000 streets, plans
the circuit once (two-way streets: the exact T-join, so the plan itself is
quick), then measures on the window's own canvas (``StreetScene`` and
``CanvasView``, whose antialiasing turns on only when zoomed in) offscreen,
1400 x 900 pixels:

- ``build``: :meth:`CircuitOverlay.show_plan` (offsets, arrays, batched items);
- ``paint all``: one full repaint of the view fitted to the whole district,
  streets alone and with the circuit over them;
- ``paint zoomed``: the same zoomed in to 2 px/m (arrows and markers on);
- ``pick``: :meth:`CircuitOverlay.step_at` for one click;
- ``steps`` and ``items``: passes drawn and path items made for them.

Run from the repository root (Qt offscreen; takes about a minute)::

    python bench/bench_overlay.py            # 1k, 5k, 20k streets
    python bench/bench_overlay.py --quick    # 1k only
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _best(fn, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args(argv)
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    sys.path.insert(0, str(ROOT))
    from PySide6.QtCore import QPointF
    from PySide6.QtWidgets import QApplication

    from app.canvas.scene import StreetScene
    from app.canvas.view import CanvasView
    from app.document import NetworkDocument
    from app.plan.overlay import CircuitOverlay
    from bench.synthetic import synthetic_network
    from core.solve.circuit import plan_circuit

    app = QApplication.instance() or QApplication(["bench-overlay"])
    sizes = (1_000,) if args.quick else (1_000, 5_000, 20_000)
    print(
        f"{'streets':>8} {'steps':>7} {'items':>6} {'build s':>8} "
        f"{'paint all s':>18} {'paint zoomed s':>18} {'pick ms':>8}"
    )
    print(f"{'':>32} {'streets / +circuit':>18} {'streets / +circuit':>18}")
    for n in sizes:
        net = synthetic_network(n, seed=1)
        plan = plan_circuit(net, time_limit=60)
        document = NetworkDocument(net)
        scene = StreetScene(document)
        view = CanvasView(scene)
        view.resize(1400, 900)
        view.show()
        view.fit_to_district()
        app.processEvents()
        grab = view.viewport().grab
        bare_all = _best(grab)
        overlay = CircuitOverlay(scene)
        build = _best(lambda: overlay.show_plan(net, plan, pixels_per_metre=view.scale_factor()), 2)  # noqa: B023
        app.processEvents()
        paint_all = _best(grab)
        mid = overlay.mid_xy[len(plan.steps) // 2]
        view.resetTransform()
        view.zoom_by(2.0)
        view.centerOn(QPointF(mid[0], mid[1]))
        overlay.sync_zoom(view.scale_factor())
        app.processEvents()
        paint_zoomed = _best(grab)
        for item in [*overlay.items, overlay._veil, overlay._marks]:
            item.setVisible(False)
        bare_zoomed = _best(grab)
        point = QPointF(mid[0] + 1.0, mid[1] + 1.0)
        pick = _best(lambda: overlay.step_at(point, 5.0), 5)  # noqa: B023
        print(
            f"{len(net):>8} {len(plan.steps):>7} {len(overlay.items):>6} {build:>8.3f} "
            f"{bare_all:>8.3f} / {paint_all:>7.3f} {bare_zoomed:>8.3f} / {paint_zoomed:>7.3f} "
            f"{pick * 1000:>8.2f}"
        )
        view.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
