"""The import report in the window: what a file brought in, and what to check.

:class:`ImportReportDialog` shows a :class:`core.report.ImportReport` —
segments, junctions, kilometres by road class, one-way segments, dead ends,
disconnected pieces and skipped features — and offers the two follow-ups of
issue 6: keep only the largest piece (one undoable edit) or pick the other
pieces on the canvas so they can be looked at, joined or erased.  The dialog
is not modal: the canvas can be used while it is open.
"""

from __future__ import annotations

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QPlainTextEdit,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.report import ImportReport

__all__ = ["CONNECTION_TEXT", "ImportReportDialog"]

CONNECTION_TEXT = {
    "weak": "streets that touch",
    "strong": "drivable both ways, obeying one-way streets",
}
"""How the pieces are formed (:data:`core.report.CONNECTIONS`), in our words."""


class ImportReportDialog(QDialog):
    """Shows one report; the buttons ask the controller to act on the document."""

    keepLargest = Signal(str)
    """Keep only the largest piece (the connection: ``"weak"`` or ``"strong"``)."""
    showOthers = Signal(str)
    """Pick the streets of the other pieces on the canvas."""
    connectionChanged = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Import report")
        self.setModal(False)
        self.report: ImportReport | None = None
        lay = QVBoxLayout(self)
        self.title = QLabel("")
        self.title.setWordWrap(True)
        lay.addWidget(self.title)
        form = QFormLayout()
        self.fields: dict[str, QLabel] = {}
        for key, label in (
            ("segments", "Street segments"),
            ("nodes", "Junctions"),
            ("length", "Length"),
            ("one_way", "One-way segments"),
            ("dead_ends", "Dead ends"),
            ("pieces", "Disconnected pieces"),
            ("skipped", "Skipped features"),
        ):
            self.fields[key] = QLabel("")
            form.addRow(label, self.fields[key])
        self.connection = QComboBox()
        for key, text in CONNECTION_TEXT.items():
            self.connection.addItem(text, key)
        self.connection.setToolTip("What makes one piece")
        form.addRow("Pieces are", self.connection)
        lay.addLayout(form)
        self.classes = QTableWidget(0, 2)
        self.classes.setHorizontalHeaderLabels(["Road class", "km"])
        self.classes.verticalHeader().setVisible(False)
        self.classes.horizontalHeader().setStretchLastSection(True)
        self.classes.setMaximumHeight(160)
        lay.addWidget(self.classes)
        self.skipped = QPlainTextEdit()
        self.skipped.setReadOnly(True)
        self.skipped.setMaximumHeight(90)
        lay.addWidget(self.skipped)
        row = QHBoxLayout()
        self.keep_button = QPushButton("Keep only the largest piece")
        self.keep_button.setToolTip("Remove every other piece (can be undone)")
        self.others_button = QPushButton("Show the other pieces")
        self.others_button.setToolTip("Pick the streets of the other pieces on the map")
        self.close_button = QPushButton("Close")
        row.addWidget(self.keep_button)
        row.addWidget(self.others_button)
        row.addStretch(1)
        row.addWidget(self.close_button)
        lay.addLayout(row)
        self.keep_button.clicked.connect(lambda: self.keepLargest.emit(self.current_connection()))
        self.others_button.clicked.connect(lambda: self.showOthers.emit(self.current_connection()))
        self.close_button.clicked.connect(self.close)
        self.connection.currentIndexChanged.connect(
            lambda _i: self.connectionChanged.emit(self.current_connection())
        )

    def current_connection(self) -> str:
        return str(self.connection.currentData())

    def show_report(self, report: ImportReport, source: str = "") -> None:
        """Fill the dialog with ``report`` (its own connection is selected)."""
        self.report = report
        self.title.setText(
            f"<b>{report.name or 'Network'}</b>" + (f" from {source}" if source else "")
        )
        f = self.fields
        f["segments"].setText(f"{report.segments:,}")
        f["nodes"].setText(f"{report.nodes:,}")
        f["length"].setText(f"{report.length_km:,.2f} km")
        f["one_way"].setText(f"{report.one_way_segments:,}")
        f["dead_ends"].setText(f"{len(report.dead_ends):,}")
        sizes = [len(p.segments) for p in report.pieces]
        pieces = f"{len(sizes)}"
        if len(sizes) > 1:
            shown = ", ".join(str(s) for s in sizes[:6]) + (", …" if len(sizes) > 6 else "")
            pieces += f" (segments each: {shown})"
        f["pieces"].setText(pieces)
        f["skipped"].setText(f"{len(report.skipped):,}")
        k = self.connection.findData(report.connection)
        if k >= 0 and k != self.connection.currentIndex():
            self.connection.blockSignals(True)
            self.connection.setCurrentIndex(k)
            self.connection.blockSignals(False)
        self.classes.setRowCount(len(report.km_by_class))
        for r, (name, km) in enumerate(report.km_by_class.items()):
            self.classes.setItem(r, 0, QTableWidgetItem(name))
            self.classes.setItem(r, 1, QTableWidgetItem(f"{km:.2f}"))
        lines = [f"feature {item.get('feature')}: {item.get('reason')}" for item in report.skipped]
        self.skipped.setPlainText("\n".join(lines))
        self.skipped.setVisible(bool(lines))
        several = len(report.pieces) > 1
        self.keep_button.setEnabled(several)
        self.others_button.setEnabled(several)
