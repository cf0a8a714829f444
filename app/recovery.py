"""Autosave and recovery after a crash.

While the window runs, a timer writes the drawing (when it has unsaved
changes) to an autosave file in a per-user folder (QStandardPaths
AppDataLocation/autosave), atomically (:mod:`core.files.atomic`).  Each window
holds a lock file (QLockFile) beside its autosave.  On a clean close the
autosave is deleted.  After a crash the autosave stays and its lock is stale
(its process is gone), so the next window finds it with
:func:`find_recoverable` and offers to open it.

The autosave file is JSON::

    {"format": "roundsman-autosave", "version": 1,
     "path": "/where/it/was/saved.roundsman" or null,
     "saved_at": "2026-12-02T03:40:00+00:00",
     "project": {... a roundsman-network document ...}}
"""

from __future__ import annotations

import contextlib
import json
import os
import uuid
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

from PySide6.QtCore import QLockFile, QObject, QStandardPaths, QTimer, Signal

from app.document import NetworkDocument
from core.errors import InputError
from core.files.atomic import atomic_write_text
from core.files.project import project_from_dict, project_to_dict
from core.model import Network

AUTOSAVE_FORMAT = "roundsman-autosave"
DEFAULT_INTERVAL_S = 60


def default_folder() -> Path:
    """The per-user autosave folder."""
    base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    return Path(base) / "autosave"


@dataclass(frozen=True)
class Recoverable:
    """An autosave left behind by a window that did not close cleanly."""

    file: Path
    original_path: str | None
    saved_at: str
    network_name: str

    def load(self) -> Network:
        """The drawing as it was at the last autosave."""
        doc = json.loads(self.file.read_text(encoding="utf-8"))
        return project_from_dict(doc["project"], source=str(self.file))

    def discard(self) -> None:
        for f in (self.file, _lock_path(self.file)):
            with contextlib.suppress(FileNotFoundError):
                f.unlink()


def _lock_path(file: Path) -> Path:
    return file.with_suffix(".lock")


def autosave_text(document: NetworkDocument) -> str:
    """The autosave file's text for the document (raises InputError for
    values JSON cannot hold)."""
    doc = {
        "format": AUTOSAVE_FORMAT,
        "version": 1,
        "path": str(document.path) if document.path else None,
        "saved_at": datetime.now(UTC).isoformat(timespec="seconds"),
        "project": project_to_dict(document.network),
    }
    try:
        return json.dumps(doc, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise InputError(f"the drawing cannot be autosaved: {exc}") from None


class Autosaver(QObject):
    """Writes the document to its autosave file every ``interval_s`` seconds
    while it has unsaved changes."""

    saved = Signal(str)
    failed = Signal(str)

    def __init__(
        self,
        document: NetworkDocument,
        folder: str | os.PathLike[str] | None = None,
        interval_s: int = DEFAULT_INTERVAL_S,
        parent: QObject | None = None,
    ) -> None:
        super().__init__(parent)
        self.document = document
        self.folder = Path(folder) if folder is not None else default_folder()
        self.file = self.folder / f"session-{uuid.uuid4().hex[:12]}.json"
        self.lock: QLockFile | None = None
        self._written_generation = -1
        self._generation = 0
        document.changed.connect(self._bump)
        document.reset.connect(self._bump)
        document.dirtyChanged.connect(self._on_dirty)
        self.timer = QTimer(self)
        self.timer.timeout.connect(self.save_now)
        self.set_interval(interval_s)

    def set_interval(self, seconds: int) -> None:
        self.timer.setInterval(max(5, int(seconds)) * 1000)
        self.timer.start()

    def _bump(self, *_args) -> None:
        self._generation += 1

    def _on_dirty(self, dirty: bool) -> None:
        if not dirty:
            self.remove_file()

    def _take_lock(self) -> None:
        if self.lock is None:
            self.folder.mkdir(parents=True, exist_ok=True)
            self.lock = QLockFile(str(_lock_path(self.file)))
            self.lock.setStaleLockTime(0)
            self.lock.tryLock(0)

    def save_now(self) -> bool:
        """Write the autosave if there are unsaved changes not yet written."""
        if not self.document.dirty or self._written_generation == self._generation:
            return False
        try:
            text = autosave_text(self.document)
            self._take_lock()
            atomic_write_text(self.file, text)
        except (InputError, OSError) as exc:
            self.failed.emit(f"Autosave failed: {getattr(exc, 'message', exc)}")
            return False
        self._written_generation = self._generation
        self.saved.emit(str(self.file))
        return True

    def remove_file(self) -> None:
        """Delete the autosave (the work is saved, or thrown away on purpose)."""
        with contextlib.suppress(FileNotFoundError):
            self.file.unlink()
        self._written_generation = -1

    def close(self) -> None:
        """A clean end: delete the autosave and the lock."""
        self.timer.stop()
        self.remove_file()
        if self.lock is not None:
            self.lock.unlock()
            self.lock = None


def find_recoverable(folder: str | os.PathLike[str] | None = None) -> list[Recoverable]:
    """Autosaves whose window is gone (no lock, or a stale one), newest first."""
    base = Path(folder) if folder is not None else default_folder()
    found = []
    for file in sorted(base.glob("session-*.json")):
        lock = QLockFile(str(_lock_path(file)))
        lock.setStaleLockTime(0)  # judge only by whether the process lives
        if not lock.tryLock(0):
            continue  # another running window owns it
        lock.unlock()
        try:
            doc = json.loads(file.read_text(encoding="utf-8"))
            if doc.get("format") != AUTOSAVE_FORMAT:
                continue
            found.append(
                Recoverable(
                    file,
                    doc.get("path"),
                    str(doc.get("saved_at", "")),
                    str(doc.get("project", {}).get("name", "")),
                )
            )
        except (OSError, ValueError, AttributeError):
            continue
    found.sort(key=lambda r: r.saved_at, reverse=True)
    return found
