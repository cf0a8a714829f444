"""Files in the window: recent files, dialog filters and opening any readable file.

The readers and writers are :mod:`core.files` (every save atomic); this module
only knows what the window needs around them.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from PySide6.QtCore import QSettings

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
