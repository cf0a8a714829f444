"""Files in the window: recent files, dialog filters and opening any readable file.

The readers and writers are :mod:`core.files` (every save atomic); this module
only knows what the window needs around them, including reading a large file off
the window's thread (:func:`read_off_thread`).
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

from PySide6.QtCore import QEventLoop, QSettings, Qt, QTimer
from PySide6.QtWidgets import QProgressDialog, QWidget

from core.files import FORMAT_LABELS, FORMATS, read_network
from core.files.project import FORMAT_NAME
from core.model import Network

PROJECT_SUFFIX = ".roundsman"
"""The suffix the window gives project files (the content is what counts)."""

PROJECT_FILTER = f"Roundsman project (*{PROJECT_SUFFIX} *.json)"
GEOJSON_FILTER = "GeoJSON (*.geojson *.json)"
PLAN_FILTER = "Roundsman plan (*.plan.json *.json)"
ALL_FILES = "All files (*)"

MAX_RECENT = 8

_PATTERNS: dict[str, str] = {
    "geojson": "*.geojson *.json",
    "project": f"*{PROJECT_SUFFIX} *.json",
    "carplib": "*.dat *.txt",
    "salt-spreading": "*.json",
    "geopackage": "*.gpkg",
    "gpkg": "*.gpkg",
    "osm": "*.osm *.pbf *.osm.pbf",
    "osm-xml": "*.osm",
    "osm-pbf": "*.pbf *.osm.pbf",
}


def import_filters() -> str:
    """File dialog filters for every format :func:`core.files.read_network` reads,
    taken from :data:`core.files.FORMATS` so new importers show up by themselves."""
    parts = []
    every = []
    for fmt in FORMATS:
        pattern = _PATTERNS.get(fmt, "*")
        every.extend(pattern.split())
        parts.append(f"{FORMAT_LABELS.get(fmt, fmt)} ({pattern})")
    readable = f"Readable files ({' '.join(dict.fromkeys(every))})"
    return ";;".join([readable, *parts, ALL_FILES])


def is_project_file(path: str | os.PathLike[str]) -> bool:
    """True when the file's content starts as a Roundsman project (reads 4 kB)."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(4096).decode("utf-8", errors="ignore")
    except OSError:
        return False
    return head.lstrip("\ufeff \t\r\n").startswith("{") and FORMAT_NAME in head


def open_network(path: str | os.PathLike[str], **options: Any) -> tuple[Network, bool]:
    """Read any readable network file; also say whether it is a project file
    (saving goes back to it) or an import (saving asks for a project name).
    ``options`` go to :func:`core.files.read_network` (``layer``, ``highways``,
    ``on_error``)."""
    network = read_network(path, **options)
    return network, is_project_file(path)


T = TypeVar("T")

BACKGROUND_BYTES = 1_000_000
"""Files at least this large are read off the window's thread (:func:`read_off_thread`);
smaller ones read in well under a second (GeoJSON of about 2,000 streets)."""


class ReadCancelled(Exception):
    """The person stopped waiting for a file to be read."""


def read_off_thread(parent: QWidget | None, work: Callable[[], T], label: str) -> T:
    """Run ``work`` (a file read) on a worker thread while the window keeps painting.

    A window-modal progress dialog with Cancel shows at once, so nothing else in the
    window can be started meanwhile; a local event loop polls the worker every 50 ms.
    The readers cannot be interrupted part-way, so Cancel stops the *waiting*: the
    thread finishes in the background and its result is dropped, and
    :class:`ReadCancelled` is raised.  The worker's own exception is raised here, on
    the window's thread.  A plain thread is used rather than :class:`app.worker.
    EngineRunner` because the caller needs the result before it returns (opening is
    one synchronous step for the menus, drag-and-drop and the command line).
    """
    box: dict[str, Any] = {}

    def run() -> None:
        try:
            box["result"] = work()
        except BaseException as exc:  # handed to the window's thread below
            box["error"] = exc

    thread = threading.Thread(target=run, name="roundsman-read", daemon=True)
    dialog = QProgressDialog(label, "Cancel", 0, 0, parent)
    dialog.setWindowTitle("Reading")
    dialog.setWindowModality(Qt.WindowModality.WindowModal)
    dialog.setMinimumDuration(0)
    dialog.setAutoClose(False)
    dialog.setAutoReset(False)
    loop = QEventLoop()
    timer = QTimer()
    timer.setInterval(50)
    timer.timeout.connect(lambda: None if thread.is_alive() else loop.quit())
    dialog.canceled.connect(loop.quit)
    thread.start()
    dialog.show()
    timer.start()
    try:
        if thread.is_alive():
            loop.exec()
    finally:
        timer.stop()
        cancelled = dialog.wasCanceled()
        dialog.close()
        dialog.deleteLater()
    if cancelled:
        raise ReadCancelled(f"stopped reading: {label}")
    thread.join()
    if "error" in box:
        raise box["error"]
    return box["result"]


class RecentFiles:
    """The most recently opened or saved files, newest first, kept in QSettings."""

    KEY = "files/recent"

    def __init__(self, settings: QSettings) -> None:
        self.settings = settings

    def paths(self) -> list[str]:
        value = self.settings.value(self.KEY, [])
        if isinstance(value, str):
            value = [value]
        return [str(v) for v in (value or [])]

    def add(self, path: str | os.PathLike[str]) -> None:
        text = str(Path(path).resolve())
        paths = [text, *(p for p in self.paths() if p != text)][:MAX_RECENT]
        self.settings.setValue(self.KEY, paths)

    def remove(self, path: str) -> None:
        self.settings.setValue(self.KEY, [p for p in self.paths() if p != path])

    def clear(self) -> None:
        self.settings.setValue(self.KEY, [])
