"""Running the depot comparison off the window's thread.

:class:`CompareRunner` hands a *copy* of the network to
:func:`core.fleet.compare.compare_depots` on a :class:`QThread`; the engine
plans the candidates in parallel processes and reports
``progress(message, fraction)`` as each one ends.  Cancelling sets a
:class:`threading.Event` that the engine passes on to its processes (pending
candidates are dropped, running ones stop).  The outcome comes back through
Qt signals, which Qt queues onto the window's thread:

``started()``, ``progress(str, float)``, ``finished(list)`` (the
:class:`core.fleet.compare.CompareRow` list), ``failed(object)`` (the
exception), ``cancelled()``.

A result that arrives after a cancel is dropped.  The thread, the signals and
the cancel are :class:`app.worker.EngineRunner`'s, shared with planning.
"""

from __future__ import annotations

import threading
from collections.abc import Sequence

from PySide6.QtCore import Signal

from app.worker import EngineRunner, Progress
from core.fleet.compare import Candidate, compare_depots
from core.fleet.settings import FleetSettings
from core.model import Network

__all__ = ["CompareRunner"]


class CompareRunner(EngineRunner):
    """Start, follow and cancel one comparison at a time; never owns the network."""

    finished = Signal(list)

    wait_ms = 30_000
    exit_wait_ms = 30_000
    stop_on_destroy = True  # the window went away: stop the processes too

    def start(
        self,
        network: Network,
        candidates: Sequence[Candidate],
        settings: FleetSettings,
        *,
        workers: int | None = None,
    ) -> bool:
        """Compare ``candidates`` on a copy of ``network``; False while a run is going on."""
        if self.running:
            return False
        copy, chosen = network.copy(), list(candidates)

        def job(progress: Progress, stop: threading.Event) -> object:
            return compare_depots(
                copy, chosen, settings, workers=workers, progress=progress, stop=stop
            )

        return self._launch(job)
