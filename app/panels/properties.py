"""The street panel: edits the selected streets (one or many) through undoable edits.

Fields: name, direction, service requirement and passes, priority class,
service days, speed and length (measured from the drawing unless fixed by
the user).  The attribute keys are those of DEVELOPERS.md, "Street
attributes".  When the selected streets differ in a field, the field shows
no value ("several"); changing it sets it on all of them.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from app.canvas.style import LOOKS
from app.document import NetworkDocument
from core import edit as ed
from core.errors import NetworkError
from core.model import OneWay, Segment, Service

DIRECTIONS = (
    (OneWay.NO, "Two-way"),
    (OneWay.FORWARD, "One-way, as drawn"),
    (OneWay.BACKWARD, "One-way, against the drawing"),
)
DAY_LABELS = ("Mo", "Tu", "We", "Th", "Fr", "Sa", "Su")
MIXED = "(several)"


def _common(values: list) -> object:
    """The shared value, or ``MIXED`` when they differ."""
    first = values[0]
    return first if all(v == first for v in values[1:]) else MIXED


class PropertiesPanel(QWidget):
    """Edits the streets selected in the document."""

    def __init__(self, document: NetworkDocument, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self._updating = False
        self.caption = QLabel("No street picked")
        self.caption.setWordWrap(True)
        self.name = QLineEdit()
        self.direction = QComboBox()
        for _value, text in DIRECTIONS:
            self.direction.addItem(text)
        self.service = QComboBox()
        for svc, look in LOOKS.items():
            self.service.addItem(look.label, svc)
        self.passes = QSpinBox()
        self.passes.setRange(1, 20)
        self.priority = QSpinBox()
        self.priority.setRange(1, 99)
        self.priority.setToolTip("Class 1 streets are treated first")
        self.days = [QCheckBox(d) for d in DAY_LABELS]
        self.speed = QDoubleSpinBox()
        self.speed.setRange(0.0, 130.0)
        self.speed.setDecimals(0)
        self.speed.setSuffix(" km/h")
        self.speed.setSpecialValueText("vehicle's speed")
        self.length = QDoubleSpinBox()
        self.length.setRange(0.0, 1e7)
        self.length.setDecimals(1)
        self.length.setSuffix(" m")
        self.length_fixed = QCheckBox("fixed")
        self.length_fixed.setToolTip(
            "Unticked: the length is measured from the drawing and follows it"
        )

        form = QFormLayout()
        form.addRow("Name", self.name)
        form.addRow("Direction", self.direction)
        form.addRow("Service", self.service)
        form.addRow("Passes", self.passes)
        form.addRow("Priority class", self.priority)
        days = QHBoxLayout()
        for box in self.days:
            days.addWidget(box)
        form.addRow("Service days", days)
        form.addRow("Speed", self.speed)
        length = QHBoxLayout()
        length.addWidget(self.length, 1)
        length.addWidget(self.length_fixed)
        form.addRow("Length", length)
        self.turning = QCheckBox("Vehicles may turn round here")
        self.turning.setToolTip("Dead ends always allow it; mark other junctions that do")
        junction_form = QFormLayout()
        self.junction_caption = QLabel()
        junction_form.addRow(self.junction_caption)
        junction_form.addRow(self.turning)
        self.message = QLabel()
        self.message.setWordWrap(True)
        self.message.setStyleSheet("color: #D55E00")
        outer = QVBoxLayout(self)
        outer.addWidget(self.caption)
        outer.addLayout(form)
        outer.addLayout(junction_form)
        outer.addWidget(self.message)
        outer.addStretch(1)

        self.name.editingFinished.connect(self._name_edited)
        self.direction.activated.connect(self._direction_edited)
        self.service.activated.connect(self._service_edited)
        self.passes.editingFinished.connect(self._passes_edited)
        self.priority.editingFinished.connect(self._priority_edited)
        for box in self.days:
            box.clicked.connect(self._days_edited)
        self.speed.editingFinished.connect(self._speed_edited)
        self.length.editingFinished.connect(self._length_edited)
        self.length_fixed.clicked.connect(self._length_fixed_edited)
        self.turning.clicked.connect(self._turning_edited)

        document.selectionChanged.connect(self.refresh)
        document.nodeSelectionChanged.connect(self.refresh)
        document.changed.connect(self._on_changed)
        document.reset.connect(self.refresh)
        self.refresh()

    # -- showing ------------------------------------------------------------------
    def streets(self) -> list[Segment]:
        segs = self.document.network.segments
        return [segs[s] for s in self.document.selection if s in segs]

    def _on_changed(self, segment_ids: set[str], node_ids: set[str]) -> None:
        if segment_ids & set(self.document.selection) or node_ids & set(
            self.document.node_selection
        ):
            self.refresh()

    def refresh(self, *_args: object) -> None:
        """Show the selected streets' values."""
        self._updating = True
        try:
            self._fill(self.streets())
            self._fill_junctions()
        finally:
            self._updating = False

    def _fill_junctions(self) -> None:
        nodes = self.document.network.nodes
        chosen = [nodes[n] for n in self.document.node_selection if n in nodes]
        self.turning.setEnabled(bool(chosen))
        if not chosen:
            self.junction_caption.setText("")
            self.turning.setCheckState(Qt.CheckState.Unchecked)
            return
        self.junction_caption.setText(
            f"Junction {chosen[0].id}" if len(chosen) == 1 else f"{len(chosen)} junctions picked"
        )
        turning = _common([n.turning_place for n in chosen])
        self.turning.setTristate(turning is MIXED)
        self.turning.setCheckState(
            Qt.CheckState.PartiallyChecked
            if turning is MIXED
            else (Qt.CheckState.Checked if turning else Qt.CheckState.Unchecked)
        )

    def _turning_edited(self) -> None:
        if self._updating or not self.document.node_selection:
            return
        on = self.turning.checkState() != Qt.CheckState.Unchecked
        net = self.document.network
        self.document.apply_edit(ed.set_turning_place(net, self.document.node_selection, on))

    def _fill(self, streets: list[Segment]) -> None:
        widgets = [
            self.name,
            self.direction,
            self.service,
            self.passes,
            self.priority,
            *self.days,
            self.speed,
            self.length,
            self.length_fixed,
        ]
        for w in widgets:
            w.setEnabled(bool(streets))
        if not streets:
            self.caption.setText("No street picked. Pick streets with the Pick tool.")
            self.name.clear()
            return
        if len(streets) == 1:
            s = streets[0]
            self.caption.setText(f"Street {s.label}")
        else:
            self.caption.setText(f"{len(streets)} streets picked")
        name = _common([s.name for s in streets])
        self.name.setText("" if name is MIXED else str(name))
        self.name.setPlaceholderText(MIXED if name is MIXED else "")
        direction = _common([s.oneway for s in streets])
        values = [d for d, _ in DIRECTIONS]
        self.direction.setCurrentIndex(-1 if direction is MIXED else values.index(direction))
        service = _common([s.service for s in streets])
        self.service.setCurrentIndex(-1 if service is MIXED else self.service.findData(service))
        passes = _common([s.passes for s in streets])
        self.passes.setValue(1 if passes is MIXED else int(passes))
        priority = _common([int(s.attrs.get("priority", 1)) for s in streets])
        self.priority.setValue(1 if priority is MIXED else int(priority))
        for code, box in zip(ed.WEEKDAYS, self.days, strict=True):
            on = _common([code in s.attrs.get("days", ed.WEEKDAYS) for s in streets])
            box.setTristate(on is MIXED)
            box.setCheckState(
                Qt.CheckState.PartiallyChecked
                if on is MIXED
                else (Qt.CheckState.Checked if on else Qt.CheckState.Unchecked)
            )
        speed = _common([float(s.attrs.get("speed_kmh", 0.0)) for s in streets])
        self.speed.setValue(0.0 if speed is MIXED else float(speed))
        fixed = _common([s.length_given for s in streets])
        self.length_fixed.setTristate(fixed is MIXED)
        self.length_fixed.setCheckState(
            Qt.CheckState.PartiallyChecked
            if fixed is MIXED
            else (Qt.CheckState.Checked if fixed else Qt.CheckState.Unchecked)
        )
        length = _common([round(s.length, 1) for s in streets])
        self.length.setValue(0.0 if length is MIXED else float(length))
        self.length.setEnabled(fixed is True)

    # -- editing ------------------------------------------------------------------
    def _apply(self, make: Callable[[list[str]], ed.Edit]) -> None:
        if self._updating:
            return
        ids = [s.id for s in self.streets()]
        if not ids:
            return
        try:
            edit = make(ids)
        except (NetworkError, ValueError) as exc:
            self.message.setText(getattr(exc, "message", str(exc)))
            self.refresh()
            return
        self.message.clear()
        self.document.apply_edit(edit)

    def _name_edited(self) -> None:
        text = self.name.text().strip()
        if not text and self.name.placeholderText() == MIXED:
            return  # left blank over several different names: keep them
        net = self.document.network
        self._apply(lambda ids: ed.set_street_fields(net, ids, name=text))

    def _direction_edited(self, index: int) -> None:
        net = self.document.network
        self._apply(lambda ids: ed.set_oneway(net, ids, DIRECTIONS[index][0]))

    def _service_edited(self, index: int) -> None:
        net = self.document.network
        value = self.service.itemData(index)
        self._apply(lambda ids: ed.set_service(net, ids, Service(value)))

    def _passes_edited(self) -> None:
        net = self.document.network
        self._apply(lambda ids: ed.set_street_fields(net, ids, passes=self.passes.value()))

    def _priority_edited(self) -> None:
        net = self.document.network
        value = self.priority.value()
        self._apply(lambda ids: ed.set_attrs(net, ids, {"priority": value}))

    def _days_edited(self) -> None:
        net = self.document.network
        states = [box.checkState() for box in self.days]
        if Qt.CheckState.PartiallyChecked in states:
            # a tri-state box cycles through "several"; take a click as "on"
            states = [
                Qt.CheckState.Checked if s == Qt.CheckState.PartiallyChecked else s for s in states
            ]
        days = [
            code for code, s in zip(ed.WEEKDAYS, states, strict=True) if s == Qt.CheckState.Checked
        ]
        value = None if len(days) == len(ed.WEEKDAYS) else days
        self._apply(lambda ids: ed.set_attrs(net, ids, {"days": value}))

    def _speed_edited(self) -> None:
        net = self.document.network
        value = self.speed.value()
        self._apply(lambda ids: ed.set_attrs(net, ids, {"speed_kmh": value or None}))

    def _length_edited(self) -> None:
        net = self.document.network
        value = self.length.value()
        if value <= 0:
            return
        self._apply(lambda ids: ed.set_length(net, ids, value))

    def _length_fixed_edited(self) -> None:
        net = self.document.network
        if self.length_fixed.checkState() != Qt.CheckState.Unchecked:
            self._apply(lambda ids: ed.fix_lengths(net, ids))
        else:
            self._apply(lambda ids: ed.set_length(net, ids, None))
