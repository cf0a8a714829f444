"""One engine call off the window's thread, shared by planning and depot comparison.

:class:`EngineRunner` runs a callable ``job(progress, stop)`` on a
:class:`QThread` and reports back through Qt signals, which Qt queues onto the
window's thread:

``started()``
    A run began.
``progress(str, float)``
    The engine's ``progress(message, fraction)`` calls.
``finished(...)``
    The result; each subclass declares this signal with its own argument type.
``failed(object)``
    The exception (the project's own :class:`core.errors.RoundsmanError`
    subclasses carry the streets at fault in ``segments`` and ``nodes``).
``cancelled()``
    The run was stopped on request (:class:`core.errors.Cancelled`).

Cancelling sets a :class:`threading.Event` that the job passes on to the
engine.  A result that arrives after a cancel is dropped, so a cancelled run
never reaches the window.  One run at a time; the runner never owns the data:
subclasses hand the job a copy.
"""

from __future__ import annotations

import atexit
import threading
import time
from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QObject, QThread, Signal

from core.errors import Cancelled

__all__ = ["EngineRunner", "Job", "Progress", "RunControls"]

Progress = Callable[[str, float], None]
Job = Callable[[Progress, threading.Event], object]
"""``job(progress, stop)``: one engine call; its return value is the result."""

_LIVE: dict[QThread, tuple[threading.Event, int]] = {}
"""Threads still running, their stop flags and how long to wait for them at exit (ms).
A QThread destroyed while it runs aborts the process, so a thread is kept here until it
ends, whatever happens to the window that started it, and the program stops and waits for
any left at exit."""


@atexit.register
def _stop_all() -> None:
    for thread, (stop, wait_ms) in list(_LIVE.items()):
        stop.set()
        thread.wait(wait_ms)


class _EngineThread(QThread):
    """One engine run on its own thread; emits exactly one of the outcome signals."""

    progressed = Signal(str, float)
    done = Signal(object)
    broke = Signal(object)
    stopped = Signal()

    def __init__(self, job: Job, stop: threading.Event) -> None:
        super().__init__()
        self.job = job
        self.stop = stop

    def run(self) -> None:  # runs on the worker thread
        try:
            result = self.job(self.progressed.emit, self.stop)
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
                self.done.emit(result)


class EngineRunner(QObject):
    """Start, follow and cancel one engine run at a time.

    Subclasses declare ``finished = Signal(<type>)`` and a ``start`` that builds
    the job on a copy of their input and calls :meth:`_launch`.
    """

    started = Signal()
    progress = Signal(str, float)
    failed = Signal(object)
    cancelled = Signal()

    wait_ms = 10_000
    """Default of :meth:`wait`."""
    exit_wait_ms = 15_000
    """How long the program waits at exit for a run still going."""
    stop_on_destroy = False
    """Whether the run is stopped when the runner is destroyed (the window went away)."""

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._thread: _EngineThread | None = None
        self._stop: threading.Event | None = None
        self._t0 = 0.0
        self.elapsed_s = 0.0
        """Seconds the last run took (or has taken so far)."""

    @property
    def running(self) -> bool:
        return self._thread is not None

    def seconds_running(self) -> float:
        return time.perf_counter() - self._t0 if self.running else self.elapsed_s

    def _launch(self, job: Job) -> bool:
        """Run ``job`` on a new thread; False (and nothing done) while a run is going on."""
        if self._thread is not None:
            return False
        stop = threading.Event()
        thread = _EngineThread(job, stop)
        thread.progressed.connect(self.progress)
        thread.done.connect(self._on_done)
        thread.broke.connect(self._on_failed)
        thread.stopped.connect(self._on_cancelled)
        thread.finished.connect(lambda: _LIVE.pop(thread, None))
        thread.finished.connect(thread.deleteLater)
        _LIVE[thread] = (stop, self.exit_wait_ms)
        if self.stop_on_destroy:
            self.destroyed.connect(stop.set)
        self._thread, self._stop = thread, stop
        self._t0 = time.perf_counter()
        self.started.emit()
        thread.start()
        return True

    def cancel(self) -> None:
        """Ask the running engine to stop; :attr:`cancelled` follows when it has."""
        if self._stop is not None:
            self._stop.set()

    def wait(self, timeout_ms: int | None = None) -> bool:
        """Block until the running thread ends (used when the window closes)."""
        thread = self._thread
        if thread is None:
            return True
        return thread.wait(self.wait_ms if timeout_ms is None else timeout_ms)

    def _end(self, thread: QObject | None) -> bool:
        if thread is None or thread is not self._thread:
            return False  # a stale signal from an earlier run
        self.elapsed_s = time.perf_counter() - self._t0
        self._thread, self._stop = None, None
        return True

    def _on_done(self, result: object) -> None:
        if self._end(self.sender()):
            self.finished.emit(result)  # declared by the subclass

    def _on_failed(self, exc: object) -> None:
        if self._end(self.sender()):
            self.failed.emit(exc)

    def _on_cancelled(self) -> None:
        if self._end(self.sender()):
            self.cancelled.emit()


class RunControls:
    """What the window's controllers of an engine run share: Cancel with a word for the
    person, stopping the run when the window closes, and the status line.

    The controller (a QObject) provides ``runner`` (an :class:`EngineRunner`),
    ``panel`` (with a ``status`` label), ``status_bar`` (or None), its ``message``
    signal and ``last_message``.
    """

    STATUS_MS = 15_000
    """How long a message stays in the window's status bar."""
    SHUTDOWN_MS = 15_000
    """How long closing the window waits for a cancelled run's thread."""
    CANCEL_IN_STATUS_BAR = False
    """Whether "Cancelling…" also goes to the window's status bar."""
    runner: EngineRunner
    panel: Any
    status_bar: Any
    message: Any
    last_message: str
    _cancelling = False

    def cancel(self) -> None:
        """Ask the running engine call to stop; it reports ``cancelled`` when it has."""
        if self.runner.running:
            self._cancelling = True
            self._say("Cancelling…", status=self.CANCEL_IN_STATUS_BAR)
            self.runner.cancel()

    def shutdown(self) -> None:
        """Stop a run and wait for its thread (window closing, program quitting)."""
        self.runner.cancel()
        self.runner.wait(self.SHUTDOWN_MS)

    def _say(self, text: str, *, status: bool = True) -> None:
        self.last_message = text
        self.panel.status.setText(text)
        if status and self.status_bar is not None:
            self.status_bar.showMessage(text, self.STATUS_MS)
        self.message.emit(text)
