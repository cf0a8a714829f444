"""Running the engine off the window's thread.

:class:`PlanRunner` hands a *copy* of the network to
:func:`core.solve.circuit.plan_circuit` on a :class:`QThread`, so the window
stays responsive and edits made while the engine runs cannot race with it
(the model's nodes and segments are immutable; :meth:`Network.copy` copies
the two dictionaries, O(n)).  The runner reports back through Qt signals,
which Qt queues onto the window's thread:

``started()``
    A run began.
``progress(str, float)``
    The engine's ``progress(message, fraction)`` calls.
``finished(object)``
    The :class:`core.plan.Plan`.
``failed(object)``
    The exception (the project's own :class:`core.errors.RoundsmanError`
    subclasses carry the streets at fault in ``segments`` and ``nodes``).
``cancelled()``
    The run was stopped on request (:class:`core.errors.Cancelled`).

Cancelling sets a :class:`threading.Event` that the engine checks between
phases and while HiGHS runs (``core/solve/highs.py`` ends its child process
at once).  A result that arrives after a cancel is dropped, so a cancelled
run never reaches the drawing.  The thread, the signals and the cancel are
:class:`app.worker.EngineRunner`'s, shared with the depot comparison.
"""

from __future__ import annotations

import inspect
import threading
from collections.abc import Mapping
from typing import Any

from PySide6.QtCore import Signal

from app.worker import EngineRunner, Progress
from core.model import Network
from core.solve.circuit import plan_circuit

__all__ = ["PlanRunner", "engine_options"]


def engine_options(options: Mapping[str, Any]) -> dict[str, Any]:
    """The subset of ``options`` that :func:`plan_circuit` accepts (by its signature).

    Options the engine does not know yet (turn rules arriving in another part
    of the work) are left out rather than failing the run.  O(k) for k options.
    """
    accepted = inspect.signature(plan_circuit).parameters
    return {k: v for k, v in options.items() if k in accepted}


class PlanRunner(EngineRunner):
    """Start, follow and cancel one engine run at a time.

    The runner never owns the network: :meth:`start` takes the network to
    plan and works on its copy.
    """

    finished = Signal(object)

    wait_ms = 10_000
    exit_wait_ms = 15_000

    def start(self, network: Network, depot: str | None = None, **options: Any) -> bool:
        """Plan a copy of ``network`` from ``depot``; ``options`` go to the engine
        (``time_limit``, ``strategy`` and any turn rules it accepts).

        Returns False (and does nothing) while a run is going on.
        """
        if self.running:
            return False
        copy, accepted = network.copy(), engine_options(options)

        def job(progress: Progress, stop: threading.Event) -> object:
            return plan_circuit(copy, depot, progress=progress, stop=stop, **accepted)

        return self._launch(job)
