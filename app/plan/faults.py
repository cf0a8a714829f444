"""Streets the engine could not plan, shown on the canvas and listed.

The engine's errors (:class:`core.errors.NetworkError` and its subclasses
:class:`~core.errors.UnreachableError`, :class:`~core.errors.OneWayTrapError`,
:class:`~core.errors.DepotError`) name the streets and junctions at fault in
``segments`` and ``nodes``.  :class:`FaultOverlay` draws a wide magenta band
under those streets and a ring round those junctions; :class:`FaultsPanel`
shows the message and lists them; picking one asks the window to centre it.
"""

from __future__ import annotations

from collections.abc import Sequence

from PySide6.QtCore import QPointF, QRectF, Qt, Signal
from PySide6.QtGui import QBrush, QColor, QPainterPath, QPen, QPolygonF
from PySide6.QtWidgets import (
    QGraphicsPathItem,
    QGraphicsScene,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QVBoxLayout,
    QWidget,
)

from app.plan.style import FAULT, Z_FAULTS
from core.model import Network
from core.turns import segment_coords

__all__ = ["FaultOverlay", "FaultsPanel", "fault_rect"]

RING_PX = 9.0
"""Radius of the ring round a junction at fault, screen pixels (drawn in metres at the
zoom of the moment the fault is shown)."""

_STREET = Qt.ItemDataRole.UserRole
_NODE = Qt.ItemDataRole.UserRole + 1


def fault_rect(network: Network, segment: str | None = None, node: str | None = None) -> QRectF:
    """Scene rectangle of one street or junction (null when it has no coordinates)."""
    if segment is not None and segment in network.segments:
        coords = segment_coords(network, network.segments[segment])
        if coords:
            xs = [x for x, _ in coords]
            ys = [-y for _, y in coords]
            return QRectF(QPointF(min(xs), min(ys)), QPointF(max(xs), max(ys)))
    if node is not None and node in network.nodes and network.nodes[node].has_xy:
        n = network.nodes[node]
        return QRectF(QPointF(n.x, -n.y), QPointF(n.x, -n.y))  # type: ignore[arg-type]
    return QRectF()


class FaultOverlay:
    """A magenta band under the streets at fault and rings round junctions at fault."""

    def __init__(self, scene: QGraphicsScene) -> None:
        self.item = QGraphicsPathItem()
        pen = FAULT.pen()
        colour = QColor(FAULT.colour)
        colour.setAlpha(170)
        pen.setColor(colour)
        pen.setCapStyle(Qt.PenCapStyle.RoundCap)
        self.item.setPen(pen)
        self.item.setZValue(Z_FAULTS)
        self.item.setAcceptedMouseButtons(Qt.MouseButton.NoButton)
        self.item.setVisible(False)
        self.rings = QGraphicsPathItem()
        ring_pen = QPen(QColor(FAULT.colour), 3.0)
        ring_pen.setCosmetic(True)
        self.rings.setPen(ring_pen)
        self.rings.setBrush(QBrush(Qt.BrushStyle.NoBrush))
        self.rings.setZValue(Z_FAULTS)
        self.rings.setAcceptedMouseButtons(Qt.MouseButton.NoButton)
        self.rings.setVisible(False)
        scene.addItem(self.item)
        scene.addItem(self.rings)
        self.segments: tuple[str, ...] = ()
        self.nodes: tuple[str, ...] = ()

    def show(
        self,
        network: Network,
        segments: Sequence[str],
        nodes: Sequence[str] = (),
        *,
        metres_per_pixel: float = 1.0,
    ) -> None:
        """Highlight ``segments`` and ``nodes`` of ``network``.  O(vertices)."""
        self.segments, self.nodes = tuple(segments), tuple(nodes)
        path = QPainterPath()
        for sid in self.segments:
            seg = network.segments.get(sid)
            coords = segment_coords(network, seg) if seg is not None else None
            if coords:
                path.addPolygon(QPolygonF([QPointF(x, -y) for x, y in coords]))
        self.item.setPath(path)
        self.item.setVisible(not path.isEmpty())
        rings = QPainterPath()
        r = RING_PX * metres_per_pixel
        for nid in self.nodes:
            node = network.nodes.get(nid)
            if node is not None and node.has_xy:
                rings.addEllipse(QPointF(node.x, -node.y), r, r)  # type: ignore[arg-type]
        self.rings.setPath(rings)
        self.rings.setVisible(not rings.isEmpty())

    def clear(self) -> None:
        self.segments, self.nodes = (), ()
        self.item.setPath(QPainterPath())
        self.rings.setPath(QPainterPath())
        self.item.setVisible(False)
        self.rings.setVisible(False)

    @property
    def visible(self) -> bool:
        return self.item.isVisible() or self.rings.isVisible()


class FaultsPanel(QWidget):
    """The message of the last failed run and the streets and junctions it names."""

    streetPicked = Signal(str)
    nodePicked = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.message = QLabel("No planning problem.")
        self.message.setWordWrap(True)
        self.message.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.hint = QLabel("Click a street to show it on the map and select it.")
        self.hint.setWordWrap(True)
        self.list = QListWidget()
        self.list.itemClicked.connect(self._picked)
        self.list.itemActivated.connect(self._picked)
        layout = QVBoxLayout(self)
        layout.addWidget(self.message)
        layout.addWidget(self.list, 1)
        layout.addWidget(self.hint)
        self.hint.setVisible(False)

    def show_problem(
        self,
        message: str,
        network: Network | None,
        segments: Sequence[str] = (),
        nodes: Sequence[str] = (),
    ) -> None:
        """Show ``message`` and list what it names."""
        self.message.setText(message)
        self.list.clear()
        for sid in segments:
            seg = network.segments.get(sid) if network is not None else None
            text = f"{seg.name} ({sid})" if seg is not None and seg.name else f"street {sid}"
            item = QListWidgetItem(text)
            item.setData(_STREET, sid)
            self.list.addItem(item)
        for nid in nodes:
            item = QListWidgetItem(f"junction {nid}")
            item.setData(_NODE, nid)
            self.list.addItem(item)
        self.hint.setVisible(self.list.count() > 0)

    def clear_problem(self, message: str = "No planning problem.") -> None:
        self.show_problem(message, None)

    def _picked(self, item: QListWidgetItem) -> None:
        sid = item.data(_STREET)
        if sid:
            self.streetPicked.emit(str(sid))
            return
        nid = item.data(_NODE)
        if nid:
            self.nodePicked.emit(str(nid))
