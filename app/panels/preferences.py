"""Preferences: snapping distance and autosave interval, kept in QSettings."""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QDialog, QDialogButtonBox, QFormLayout, QSpinBox, QWidget

from app.recovery import DEFAULT_INTERVAL_S

SNAP_KEY = "canvas/snap_px"
AUTOSAVE_KEY = "autosave/interval_s"
DEFAULT_SNAP_PX = 8


@dataclass(frozen=True)
class Preferences:
    """The user's choices (defaults when nothing is stored)."""

    snap_px: int = DEFAULT_SNAP_PX
    autosave_s: int = DEFAULT_INTERVAL_S

    @classmethod
    def load(cls, settings: QSettings) -> Preferences:
        def number(key: str, default: int, low: int, high: int) -> int:
            try:
                value = int(float(settings.value(key, default)))
            except (TypeError, ValueError):
                return default
            return min(high, max(low, value))

        return cls(
            number(SNAP_KEY, DEFAULT_SNAP_PX, 2, 40),
            number(AUTOSAVE_KEY, DEFAULT_INTERVAL_S, 10, 3600),
        )

    def save(self, settings: QSettings) -> None:
        settings.setValue(SNAP_KEY, self.snap_px)
        settings.setValue(AUTOSAVE_KEY, self.autosave_s)


class PreferencesDialog(QDialog):
    """Edits :class:`Preferences`; ``chosen()`` gives the values set."""

    def __init__(self, current: Preferences, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Preferences")
        self.snap = QSpinBox()
        self.snap.setRange(2, 40)
        self.snap.setSuffix(" px")
        self.snap.setValue(current.snap_px)
        self.snap.setToolTip("Clicks this close to a junction or street land on it")
        self.autosave = QSpinBox()
        self.autosave.setRange(10, 3600)
        self.autosave.setSuffix(" s")
        self.autosave.setValue(current.autosave_s)
        self.autosave.setToolTip("How often unsaved work is put aside against a crash")
        form = QFormLayout(self)
        form.addRow("Snap to junctions and streets within", self.snap)
        form.addRow("Autosave unsaved work every", self.autosave)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form.addRow(buttons)

    def chosen(self) -> Preferences:
        return Preferences(self.snap.value(), self.autosave.value())
