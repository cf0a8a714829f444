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

A result that arrives after a cancel is dropped.
"""

from __future__ import annotations

import atexit
import threading
import time
from collections.abc import Sequence

from PySide6.QtCore import QObject, QThread, Signal

from core.errors import Cancelled
from core.fleet.compare import Candidate, compare_depots
from core.fleet.settings import FleetSettings
from core.model import Network

__all__ = ["CompareRunner"]

_LIVE: dict[QThread, threading.Event] = {}
"""Threads still running and their stop flags: a QThread destroyed while it runs
aborts the process, so each is kept here until it ends and stopped at exit."""


@atexit.register
def _stop_all() -> None:
    for thread, stop in list(_LIVE.items()):
        stop.set()
        thread.wait(30_000)


class _CompareThread(QThread):
    progressed = Signal(str, float)
    compared = Signal(list)
    broke = Signal(object)
    stopped = Signal()

    def __init__(
        self,
        network: Network,
        candidates: Sequence[Candidate],
        settings: FleetSettings,
        workers: int | None,
        stop: threading.Event,
    ) -> None:
        super().__init__()
        self.network = network
        self.candidates = list(candidates)
        self.settings = settings
        self.workers = workers
        self.stop = stop

    def run(self) -> None:  # on the worker thread
        try:
            rows = compare_depots(
                self.network,
                self.candidates,
                self.settings,
                workers=self.workers,
                progress=self.progressed.emit,
                stop=self.stop,
            )
        except Cancelled:
            self.stopped.emit()
        except Exception as exc:  # every failure goes back to the window as a message
            if self.stop.is_set():
                self.stopped.emit()
            else:
                self.broke.emit(exc)
        else:
            if self.stop.is_set():
                self.stopped.emit()
            else:
                self.compared.emit(rows)


class CompareRunner(QObject):
    """Start, follow and cancel one comparison at a time; never owns the network."""

    started = Signal()
    progress = Signal(str, float)
    finished = Signal(list)
    failed = Signal(object)
    cancelled = Signal()

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._thread: _CompareThread | None = None
        self._stop: threading.Event | None = None
        self._t0 = 0.0
        self.elapsed_s = 0.0

    @property
    def running(self) -> bool:
        return self._thread is not None

    def start(
        self,
        network: Network,
        candidates: Sequence[Candidate],
        settings: FleetSettings,
        *,
        workers: int | None = None,
    ) -> bool:
        """Compare ``candidates`` on a copy of ``network``; False while a run is going on."""
        if self._thread is not None:
            return False
        stop = threading.Event()
        thread = _CompareThread(network.copy(), candidates, settings, workers, stop)
        thread.progressed.connect(self.progress)
        thread.compared.connect(self._on_compared)
        thread.broke.connect(self._on_failed)
        thread.stopped.connect(self._on_cancelled)
        thread.finished.connect(lambda: _LIVE.pop(thread, None))
        thread.finished.connect(thread.deleteLater)
        _LIVE[thread] = stop
        self.destroyed.connect(stop.set)  # the window went away: stop the processes too
        self._thread, self._stop = thread, stop
        self._t0 = time.perf_counter()
        self.started.emit()
        thread.start()
        return True

    def cancel(self) -> None:
        """Ask the comparison to stop; :attr:`cancelled` follows when it has."""
        if self._stop is not None:
            self._stop.set()

    def wait(self, timeout_ms: int = 30_000) -> bool:
        thread = self._thread
        return True if thread is None else thread.wait(timeout_ms)

    def _end(self, thread: QObject | None) -> bool:
        if thread is None or thread is not self._thread:
            return False
        self.elapsed_s = time.perf_counter() - self._t0
        self._thread, self._stop = None, None
        return True

    def _on_compared(self, rows: list) -> None:
        if self._end(self.sender()):
            self.finished.emit(rows)

    def _on_failed(self, exc: object) -> None:
        if self._end(self.sender()):
            self.failed.emit(exc)

    def _on_cancelled(self) -> None:
        if self._end(self.sender()):
            self.cancelled.emit()
