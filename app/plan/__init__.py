"""Planning in the window: run the engine off the window's thread, draw the circuit.

- :mod:`app.plan.worker` — :class:`PlanRunner`, the engine on a QThread with
  progress, cancel, finished and failed signals;
- :mod:`app.plan.geometry` — where each pass is drawn (offset to its driving side);
- :mod:`app.plan.overlay` — the circuit on the canvas: batched pass items, arrows
  and numbered markers with level of detail, the highlighted step, picking;
- :mod:`app.plan.steps` — the step list as a Qt table model;
- :mod:`app.plan.summary` — the figures and the time estimate;
- :mod:`app.plan.faults` — streets at fault from the engine's errors;
- :mod:`app.plan.panel` — settings, progress, summary and steps;
- :mod:`app.plan.controller` — links them to the document and the main window
  (:func:`install_planning`).

Z values on the canvas (``app/canvas`` convention: planning uses 10–40): veil 10,
deadhead 12, service 13, highlighted step 16, arrows and markers 25, faults 35.
"""

from app.plan.controller import PlanningController, install_planning

__all__ = ["PlanningController", "install_planning"]
