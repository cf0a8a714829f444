"""The planning panel: settings, run buttons, the summary and the list of steps.

The panel shows what it is given and reports what the user does; it never
holds the network or the plan (the controller hands them in).
"""

from __future__ import annotations

import html
from collections.abc import Sequence

from PySide6.QtCore import QSettings, Qt, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QFrame,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QProgressBar,
    QScrollArea,
    QSpinBox,
    QSplitter,
    QTableView,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from app.plan.steps import StepTableModel
from app.plan.style import DEADHEAD, SERVICE
from core.activity import PRESETS, Activity
from core.turns import DriveSide

__all__ = ["PlanPanel"]

DEFAULT_TIME_LIMIT_S = 30
"""The engine's own default budget (``plan_circuit(time_limit=30.0)``)."""


def run_row(actions: Sequence[QAction], hint: str) -> tuple[QHBoxLayout, QProgressBar, QLabel]:
    """The run and cancel buttons of a panel (text-only, from ``actions``), its hidden
    progress bar and its status line showing ``hint``; shared by the Circuit and
    Routes panels."""
    run = QHBoxLayout()
    for action in actions:
        button = QToolButton()
        button.setDefaultAction(action)
        button.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
        run.addWidget(button)
    run.addStretch(1)
    progress = QProgressBar()
    progress.setRange(0, 100)
    progress.setVisible(False)
    status = QLabel(hint)
    status.setWordWrap(True)
    return run, progress, status


class PlanPanel(QWidget):
    """Settings, progress, summary and steps of the circuit."""

    settingsChanged = Signal()

    def __init__(
        self, plan_action: QAction, cancel_action: QAction, parent: QWidget | None = None
    ) -> None:
        super().__init__(parent)
        # -- run buttons and progress
        run, self.progress, self.status = run_row(
            (plan_action, cancel_action), "Press “Plan circuit” to plan the drawing."
        )
        # -- settings
        self.activity = QComboBox()
        for name, preset in PRESETS.items():
            self.activity.addItem(preset.label, name)
        self.service_speed = self._speed_box()
        self.deadhead_speed = self._speed_box()
        self.time_limit = QSpinBox()
        self.time_limit.setRange(1, 3600)
        self.time_limit.setSuffix(" s")
        self.time_limit.setValue(DEFAULT_TIME_LIMIT_S)
        self.time_limit.setToolTip(
            "Time the engine may spend proving the shortest circuit on mixed one-way and "
            "two-way districts; it always returns its best circuit and a lower bound."
        )
        self.drive = QComboBox()
        self.drive.addItem("Right-hand traffic", DriveSide.RIGHT.value)
        self.drive.addItem("Left-hand traffic", DriveSide.LEFT.value)
        self.detours = QCheckBox("Go round the block instead of U-turns")
        self.detours.setChecked(True)
        self.detours.setToolTip(
            "Where a U-turn is not allowed (not a dead end or turning place), drive the "
            "shortest way round instead; this adds deadhead."
        )
        form = QFormLayout()
        form.addRow("Activity", self.activity)
        form.addRow("Service speed", self.service_speed)
        form.addRow("Deadhead speed", self.deadhead_speed)
        form.addRow("Time budget", self.time_limit)
        form.addRow("Traffic", self.drive)
        form.addRow(self.detours)
        settings = QGroupBox("Settings")
        settings.setLayout(form)
        # -- summary and steps
        self.summary = QLabel()
        self.summary.setTextFormat(Qt.TextFormat.RichText)
        self.summary.setWordWrap(True)
        self.summary.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.model = StepTableModel(self)
        self.table = QTableView()
        self.table.setModel(self.model)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(20)
        self.table.setAlternatingRowColors(True)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        header.setStretchLastSection(True)
        for col, width in enumerate((44, 150, 130, 70, 64, 64)):
            self.table.setColumnWidth(col, width)
        legend = QLabel(
            f'<span style="color:{SERVICE.colour}">━━</span> service pass &nbsp; '
            f'<span style="color:{DEADHEAD.colour}">╍╍</span> deadhead pass &nbsp; '
            "numbers: step"
        )
        top = QWidget()
        top_layout = QVBoxLayout(top)
        top_layout.setContentsMargins(0, 0, 0, 0)
        top_layout.addWidget(settings)
        top_layout.addWidget(self.summary)
        top_layout.addStretch(1)
        scroll = QScrollArea()
        scroll.setWidgetResizable(True)
        scroll.setFrameShape(QFrame.Shape.NoFrame)
        scroll.setWidget(top)
        bottom = QWidget()
        bottom_layout = QVBoxLayout(bottom)
        bottom_layout.setContentsMargins(0, 0, 0, 0)
        bottom_layout.addWidget(legend)
        bottom_layout.addWidget(self.table, 1)
        self.splitter = QSplitter(Qt.Orientation.Vertical)
        self.splitter.addWidget(scroll)
        self.splitter.addWidget(bottom)
        self.splitter.setStretchFactor(0, 3)
        self.splitter.setStretchFactor(1, 2)
        layout = QVBoxLayout(self)
        layout.addLayout(run)
        layout.addWidget(self.progress)
        layout.addWidget(self.status)
        layout.addWidget(self.splitter, 1)
        self.activity.currentIndexChanged.connect(self._preset_chosen)
        for box in (self.service_speed, self.deadhead_speed):
            box.valueChanged.connect(self.settingsChanged)
        self._preset_chosen()

    @staticmethod
    def _speed_box() -> QDoubleSpinBox:
        box = QDoubleSpinBox()
        box.setRange(1.0, 130.0)
        box.setDecimals(0)
        box.setSuffix(" km/h")
        return box

    def _preset_chosen(self) -> None:
        preset = PRESETS[self.activity.currentData()]
        for box, value in (
            (self.service_speed, preset.service_speed_kmh),
            (self.deadhead_speed, preset.deadhead_speed_kmh),
        ):
            box.blockSignals(True)
            box.setValue(value)
            box.blockSignals(False)
        self.settingsChanged.emit()

    # -- preferences -------------------------------------------------------------------
    def restore(self, settings: QSettings) -> None:
        """Take the settings saved under ``planning/`` (if any) and keep them saved."""
        activity = settings.value("planning/activity")
        i = self.activity.findData(activity) if activity is not None else -1
        if i >= 0:
            self.activity.setCurrentIndex(i)
        for key, box in (
            ("planning/service_kmh", self.service_speed),
            ("planning/deadhead_kmh", self.deadhead_speed),
            ("planning/time_limit_s", self.time_limit),
        ):
            value = settings.value(key)
            try:
                if value is not None:
                    box.setValue(type(box.value())(float(value)))
            except (TypeError, ValueError):
                pass  # a hand-edited settings file: keep the default
        drive = settings.value("planning/drive")
        j = self.drive.findData(drive) if drive is not None else -1
        if j >= 0:
            self.drive.setCurrentIndex(j)
        detours = settings.value("planning/uturn_detours")
        if detours is not None:
            self.detours.setChecked(str(detours).lower() in ("true", "1"))

        def save() -> None:
            settings.setValue("planning/activity", self.activity.currentData())
            settings.setValue("planning/service_kmh", self.service_speed.value())
            settings.setValue("planning/deadhead_kmh", self.deadhead_speed.value())
            settings.setValue("planning/time_limit_s", self.time_limit.value())
            settings.setValue("planning/drive", self.drive.currentData())
            settings.setValue("planning/uturn_detours", self.detours.isChecked())

        for signal in (
            self.activity.currentIndexChanged,
            self.service_speed.valueChanged,
            self.deadhead_speed.valueChanged,
            self.time_limit.valueChanged,
            self.drive.currentIndexChanged,
            self.detours.toggled,
        ):
            signal.connect(save)

    # -- what the controller reads ---------------------------------------------------
    def current_activity(self) -> Activity:
        """The chosen preset with the speeds in the boxes."""
        return PRESETS[self.activity.currentData()].with_changes(
            service_speed_kmh=float(self.service_speed.value()),
            deadhead_speed_kmh=float(self.deadhead_speed.value()),
        )

    def engine_options(self) -> dict[str, object]:
        """Options for :func:`core.solve.circuit.plan_circuit` from the settings."""
        return {
            "time_limit": float(self.time_limit.value()),
            "drive": self.drive.currentData(),
            "uturn_detours": None if self.detours.isChecked() else False,
        }

    @property
    def left_hand(self) -> bool:
        return self.drive.currentData() == DriveSide.LEFT.value

    # -- what the controller shows ---------------------------------------------------
    def show_summary(self, rows: Sequence[tuple[str, str]], notes: Sequence[str] = ()) -> None:
        if not rows:
            self.summary.setText("")
            return
        cells = "".join(
            f"<tr><td><b>{html.escape(k)}</b></td><td>&nbsp;{html.escape(v)}</td></tr>"
            for k, v in rows
        )
        extra = "".join(f"<p>{html.escape(n)}</p>" for n in notes)
        self.summary.setText(f"<table>{cells}</table>{extra}")

    def summary_text(self) -> str:
        return self.summary.text()
