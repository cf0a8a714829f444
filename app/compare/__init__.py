"""Depot comparison in the window (issue 5): plan from each candidate depot, compare.

- :mod:`app.compare.runner` — :class:`CompareRunner`, the engine's
  :func:`core.fleet.compare.compare_depots` on a QThread (candidates in
  parallel processes) with progress and cancel;
- :mod:`app.compare.model` — the result table as a Qt model (the engine's cells);
- :mod:`app.compare.chart` — deadhead and total bars per candidate (QPainter);
- :mod:`app.compare.panel` — candidates, vehicle settings, run, results;
- :mod:`app.compare.controller` — links them to the document and the main window
  (:func:`install_comparison`).
"""

from app.compare.controller import ComparisonController, install_comparison

__all__ = ["ComparisonController", "install_comparison"]
