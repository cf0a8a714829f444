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
run never reaches the drawing.
"""

from __future__ import annotations

import atexit
import inspect
import threading
import time
from collections.abc import Mapping
from typing import Any

from PySide6.QtCore import QObject, QThread, Signal

from core.errors import Cancelled
from core.model import Network
from core.solve.circuit import plan_circuit

__all__ = ["PlanRunner", "engine_options"]

_LIVE: dict[QThread, threading.Event] = {}
"""Threads still running and their stop flags.  A QThread destroyed while it runs aborts
the process, so a thread is kept here until it ends, whatever happens to the window that
started it, and the program stops and waits for any left at exit."""


@atexit.register
def _stop_all() -> None:
    for thread, stop in list(_LIVE.items()):
        stop.set()
        thread.wait(15_000)


def engine_options(options: Mapping[str, Any]) -> dict[str, Any]:
    """The subset of ``options`` that :func:`plan_circuit` accepts (by its signature).

    Options the engine does not know yet (turn rules arriving in another part
    of the work) are left out rather than failing the run.  O(k) for k options.
    """
    accepted = inspect.signature(plan_circuit).parameters
    return {k: v for k, v in options.items() if k in accepted}


class _PlanThread(QThread):
    """One engine run on its own thread; emits exactly one of the outcome signals."""

    progressed = Signal(str, float)
    planned = Signal(object)
    broke = Signal(object)
    stopped = Signal()

    def __init__(
        self, network: Network, depot: str | None, options: dict[str, Any], stop: threading.Event
    ) -> None:
        super().__init__()
        self.network = network
        self.depot = depot
        self.options = options
        self.stop = stop

    def run(self) -> None:  # runs on the worker thread
        try:
            plan = plan_circuit(
                self.network,
                self.depot,
                progress=self.progressed.emit,
                stop=self.stop,
                **self.options,
            )
        except Cancelled:
            self.stopped.emit()
        except Exception as exc:  # every failure goes back to the window as a message
            if self.stop.is_set():
                self.stopped.emit()
            else:
                self.broke.emit(exc)
        else:
            if self.stop.is_set():  # the result came after a cancel: drop it
                self.stopped.emit()
            else:
                self.planned.emit(plan)


class PlanRunner(QObject):
    """Start, follow and cancel one engine run at a time.

    The runner never owns the network: :meth:`start` takes the network to
    plan and works on its copy.
    """

    started = Signal()
    progress = Signal(str, float)
    finished = Signal(object)
    failed = Signal(object)
    cancelled = Signal()

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._thread: _PlanThread | None = None
        self._stop: threading.Event | None = None
        self._t0 = 0.0
        self.elapsed_s = 0.0
        """Seconds the last run took (or has taken so far)."""

    @property
    def running(self) -> bool:
        return self._thread is not None

    def seconds_running(self) -> float:
        return time.perf_counter() - self._t0 if self.running else self.elapsed_s

    def start(self, network: Network, depot: str | None = None, **options: Any) -> bool:
        """Plan a copy of ``network`` from ``depot``; ``options`` go to the engine
        (``time_limit``, ``strategy`` and any turn rules it accepts).

        Returns False (and does nothing) while a run is going on.
        """
        if self._thread is not None:
            return False
        stop = threading.Event()
        thread = _PlanThread(network.copy(), depot, engine_options(options), stop)
        thread.progressed.connect(self.progress)
        thread.planned.connect(self._on_planned)
        thread.broke.connect(self._on_failed)
        thread.stopped.connect(self._on_cancelled)
        thread.finished.connect(lambda: _LIVE.pop(thread, None))
        thread.finished.connect(thread.deleteLater)
        _LIVE[thread] = stop
        self._thread, self._stop = thread, stop
        self._t0 = time.perf_counter()
        self.started.emit()
        thread.start()
        return True

    def cancel(self) -> None:
        """Ask the running engine to stop; :attr:`cancelled` follows when it has."""
        if self._stop is not None:
            self._stop.set()

    def wait(self, timeout_ms: int = 10_000) -> bool:
        """Block until the running thread ends (used when the window closes)."""
        thread = self._thread
        return True if thread is None else thread.wait(timeout_ms)

    def _end(self, thread: QObject | None) -> bool:
        if thread is None or thread is not self._thread:
            return False  # a stale signal from an earlier run
        self.elapsed_s = time.perf_counter() - self._t0
        self._thread, self._stop = None, None
        return True

    def _on_planned(self, plan: object) -> None:
        if self._end(self.sender()):
            self.finished.emit(plan)

    def _on_failed(self, exc: object) -> None:
        if self._end(self.sender()):
            self.failed.emit(exc)

    def _on_cancelled(self) -> None:
        if self._end(self.sender()):
            self.cancelled.emit()
