"""Planning a fleet off the window's thread.

:class:`FleetRunner` hands a *copy* of the network to
:func:`core.fleet.planner.plan_fleet` on a :class:`QThread` (the model's nodes and
segments are immutable; :meth:`Network.copy` copies the dictionaries and the file's
meta, O(n)), so edits made while the engine runs cannot race with it.  The planner
reports ``progress(message, fraction)`` between its phases and while its route search
runs, and checks the stop flag there too (the search ends at once).

Signals (queued onto the window's thread): ``started()``, ``progress(str, float)``,
``finished(object)`` (the :class:`core.fleet.result.FleetPlan`), ``failed(object)``
(the exception), ``cancelled()``.  A result that arrives after a cancel is dropped.
The thread, the signals and the cancel are :class:`app.worker.EngineRunner`'s, shared
with planning and the depot comparison.
"""

from __future__ import annotations

import threading

from PySide6.QtCore import Signal

from app.worker import EngineRunner, Progress
from core.fleet.planner import plan_fleet
from core.fleet.settings import FleetSettings
from core.model import Network

__all__ = ["FleetRunner"]


class FleetRunner(EngineRunner):
    """Start, follow and cancel one fleet plan at a time; never owns the network."""

    finished = Signal(object)

    wait_ms = 15_000
    exit_wait_ms = 15_000

    def start(self, network: Network, settings: FleetSettings) -> bool:
        """Plan a copy of ``network`` with ``settings``; False while a run is going on."""
        if self.running:
            return False
        copy = network.copy()

        def job(progress: Progress, stop: threading.Event) -> object:
            return plan_fleet(copy, settings, progress=progress, stop=stop)

        return self._launch(job)
