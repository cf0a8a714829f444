"""Choices before reading a GeoPackage or OpenStreetMap file.

- GeoPackage: which line layer holds the streets (the file's line layers are
  listed by :func:`core.files.gpkg.line_layers`);
- OpenStreetMap: which ``highway`` classes to keep (every class of
  :data:`core.files.osm.HIGHWAY_CLASSES`, those of
  :data:`core.files.osm.DEFAULT_HIGHWAYS` ticked to start with);
- both, and GeoJSON: what to do with a broken feature
  (:data:`core.report.ON_ERROR_CHOICES`): stop and name it, or leave it out and
  list it in the report.

:func:`file_kind` recognises the two from their first bytes, as
:func:`core.files.read_network` does.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QButtonGroup,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QPushButton,
    QRadioButton,
    QVBoxLayout,
    QWidget,
)

from core.errors import RoundsmanError
from core.files import detect_format
from core.files.gpkg import line_layers, sniff_gpkg
from core.files.osm import DEFAULT_HIGHWAYS, HIGHWAY_CLASSES, sniff_osm_file
from core.report import ON_ERROR_CHOICES

__all__ = [
    "GEOJSON",
    "GEOPACKAGE",
    "OSM",
    "ImportOptionsDialog",
    "file_kind",
    "gpkg_line_layers",
    "import_kind",
]

GEOPACKAGE = "geopackage"
OSM = "osm"
GEOJSON = "geojson"

ON_ERROR_TEXT = {
    "reject": "Stop at the first broken feature and name it",
    "skip": "Leave broken features out and list them in the report",
}


def file_kind(path: str | os.PathLike[str]) -> str | None:
    """``"geopackage"``, ``"osm"`` or ``None`` (a text format) from the first bytes."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(100)
        if sniff_gpkg(head):
            return GEOPACKAGE
        if sniff_osm_file(path) is not None:
            return OSM
    except OSError:
        return None  # the reader names the problem
    return None


def import_kind(path: str | os.PathLike[str]) -> str | None:
    """Like :func:`file_kind`, and ``"geojson"`` for GeoJSON text, whose broken features
    may also be skipped (File ▸ Import asks; opening or dropping a GeoJSON file does not)."""
    kind = file_kind(path)
    if kind is not None:
        return kind
    try:
        text = Path(path).read_text(encoding="utf-8")
        return GEOJSON if detect_format(text) == "geojson" else None
    except (OSError, UnicodeDecodeError, RoundsmanError):
        return None  # the reader names the problem


def gpkg_line_layers(path: str | os.PathLike[str]) -> list[tuple[str, str]]:
    """The GeoPackage's line layers as ``(name, geometry type)``."""
    return [(n, t) for n, t in line_layers(path) if "LineString" in t]


class ImportOptionsDialog(QDialog):
    """Layer (GeoPackage) or highway classes (OSM), and what to do with broken features."""

    def __init__(
        self, path: str | os.PathLike[str], kind: str, parent: QWidget | None = None
    ) -> None:
        super().__init__(parent)
        self.kind = kind
        name = os.path.basename(os.fspath(path))
        self.setWindowTitle(f"Import {name}")
        lay = QVBoxLayout(self)
        self.layer_choice: QComboBox | None = None
        self.highways: QListWidget | None = None
        self.problem = ""
        if kind == GEOPACKAGE:
            box = QGroupBox("Layer with the streets")
            inner = QVBoxLayout(box)
            self.layer_choice = QComboBox()
            try:
                layers = gpkg_line_layers(path)
            except RoundsmanError as exc:
                layers = []
                self.problem = str(exc)
            for n, t in layers:
                self.layer_choice.addItem(f"{n} ({t})", n)
            if not layers:
                self.problem = self.problem or "The GeoPackage has no line layer."
            inner.addWidget(self.layer_choice)
            lay.addWidget(box)
        elif kind == OSM:
            box = QGroupBox("Road classes to keep (OpenStreetMap highway=…)")
            inner = QVBoxLayout(box)
            self.highways = QListWidget()
            for cls in HIGHWAY_CLASSES:
                item = QListWidgetItem(cls)
                item.setFlags(item.flags() | Qt.ItemFlag.ItemIsUserCheckable)
                item.setCheckState(
                    Qt.CheckState.Checked if cls in DEFAULT_HIGHWAYS else Qt.CheckState.Unchecked
                )
                self.highways.addItem(item)
            inner.addWidget(self.highways)
            row = QHBoxLayout()
            defaults = QPushButton("Defaults")
            defaults.clicked.connect(self.tick_defaults)
            row.addWidget(defaults)
            row.addStretch(1)
            inner.addLayout(row)
            lay.addWidget(box)
        box = QGroupBox("Broken features")
        inner = QVBoxLayout(box)
        self.on_error_group = QButtonGroup(self)
        self.on_error_buttons: dict[str, QRadioButton] = {}
        for k, choice in enumerate(ON_ERROR_CHOICES):
            button = QRadioButton(ON_ERROR_TEXT.get(choice, choice))
            self.on_error_group.addButton(button, k)
            self.on_error_buttons[choice] = button
            inner.addWidget(button)
        self.on_error_buttons[ON_ERROR_CHOICES[0]].setChecked(True)
        lay.addWidget(box)
        self.note = QLabel(self.problem)
        self.note.setWordWrap(True)
        self.note.setVisible(bool(self.problem))
        lay.addWidget(self.note)
        self.buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        self.buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Import")
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        lay.addWidget(self.buttons)
        if self.highways is not None:
            self.highways.itemChanged.connect(self._update_ok)
        self._update_ok()

    def tick_defaults(self) -> None:
        self.set_highways(list(DEFAULT_HIGHWAYS))

    def set_highways(self, classes: list[str]) -> None:
        if self.highways is None:
            return
        for k in range(self.highways.count()):
            item = self.highways.item(k)
            item.setCheckState(
                Qt.CheckState.Checked if item.text() in classes else Qt.CheckState.Unchecked
            )

    def chosen_highways(self) -> list[str]:
        if self.highways is None:
            return []
        return [
            self.highways.item(k).text()
            for k in range(self.highways.count())
            if self.highways.item(k).checkState() == Qt.CheckState.Checked
        ]

    def _update_ok(self, *_: object) -> None:
        ok = not self.problem
        if self.highways is not None:
            ok = ok and bool(self.chosen_highways())
        self.buttons.button(QDialogButtonBox.StandardButton.Ok).setEnabled(ok)

    def options(self) -> dict[str, Any]:
        """The options for :func:`core.files.read_network`."""
        out: dict[str, Any] = {}
        for choice, button in self.on_error_buttons.items():
            if button.isChecked():
                out["on_error"] = choice
        if self.layer_choice is not None and self.layer_choice.count():
            out["layer"] = self.layer_choice.currentData()
        if self.highways is not None:
            out["highways"] = self.chosen_highways()
        return out
