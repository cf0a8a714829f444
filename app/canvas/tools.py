"""The editing tools of the canvas.  Each turns clicks into :mod:`core.edit` edits.

=================  =========================================================
tool (key)         what a click does
=================  =========================================================
Pick (P)           select a street (Shift adds or removes), a junction, or
                   drag a box round streets
Lay street (L)     click junction to junction; a click near a junction
                   lands on it, a click on a street cuts it there and joins
                   the new street; each click carries on from the last one,
                   Esc, right click or double click ends the run
Move junction (M)  drag a junction; its streets follow and re-measure
Cut (C)            cut a street in two where clicked
Erase (E)          remove a street, or a junction with its streets
Direction (D)      two-way → one-way along the drawing → turned round;
                   Shift+click makes it two-way again
Service brush (B)  give the street the requirement chosen in the toolbar
Depot (H)          put the depot at the junction (or cut the street there)
=================  =========================================================
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, TypeVar

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QMouseEvent, QPen
from PySide6.QtWidgets import QAbstractGraphicsShapeItem, QGraphicsLineItem, QGraphicsRectItem
from shapely.geometry import LineString, Point

from app.canvas.coords import from_scene, to_scene
from app.canvas.scene import Z_FEEDBACK
from core import edit as ed
from core.errors import NetworkError
from core.model import Network, OneWay, Segment, Service

if TYPE_CHECKING:
    from app.canvas.scene import StreetItem, StreetScene
    from app.canvas.view import CanvasView
    from app.document import NetworkDocument

_PenItem = TypeVar("_PenItem", QAbstractGraphicsShapeItem, QGraphicsLineItem)
"""A feedback item that takes a pen (both kinds have ``setPen`` but no common base with it)."""


def _distance(seg: Segment, x: float, y: float) -> float:
    if seg.geometry is None:
        return float("inf")
    return LineString(seg.geometry).distance(Point(x, y))


class Tool:
    """Base class: a named way of turning mouse input into edits."""

    name = "tool"
    label = "Tool"
    key = ""
    hint = ""
    cursor = Qt.CursorShape.ArrowCursor

    def __init__(self, view: CanvasView) -> None:
        self.view = view

    @property
    def scene(self) -> StreetScene:
        return self.view.street_scene

    @property
    def document(self) -> NetworkDocument:
        return self.view.street_scene.document

    def activate(self) -> None:
        pass

    def deactivate(self) -> None:
        self.cancel()

    def cancel(self) -> None:
        pass

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        pass

    def move(self, event: QMouseEvent, pos: QPointF) -> None:
        pass

    def release(self, event: QMouseEvent, pos: QPointF) -> None:
        pass

    def double_click(self, event: QMouseEvent, pos: QPointF) -> None:
        pass

    # -- helpers ----------------------------------------------------------------
    def run(self, make: Callable[[], ed.Edit]) -> ed.Edit | None:
        """Build an edit and push it; a refused edit is reported, not raised."""
        try:
            edit = make()
        except (NetworkError, ValueError) as exc:
            self.report(exc)
            return None
        self.document.apply_edit(edit)
        return edit

    def report(self, exc: Exception) -> None:
        """Show why an edit was refused in the status line."""
        self.view.message.emit(getattr(exc, "message", str(exc)))

    def street_at(self, pos: QPointF) -> str | None:
        near = self.scene.streets_near(pos, self.view.snap_distance())
        return near[0][1] if near else None

    def node_at(self, pos: QPointF) -> str | None:
        return self.scene.node_near(pos, self.view.snap_distance())

    def left_street(self, event: QMouseEvent, pos: QPointF) -> str | None:
        """The street under a left click; None for other buttons or open ground."""
        return self.street_at(pos) if event.button() == Qt.MouseButton.LeftButton else None

    def junction_or_street(self, pos: QPointF) -> tuple[str | None, str | None]:
        """The junction under ``pos``, else (None and) the street under it; a junction wins."""
        node = self.node_at(pos)
        return node, (self.street_at(pos) if node is None else None)

    def left_press(self, event: QMouseEvent) -> bool:
        """True for a left-button press; a right-button press cancels what the tool was doing."""
        if event.button() == Qt.MouseButton.RightButton:
            self.cancel()
            return False
        return event.button() == Qt.MouseButton.LeftButton

    def add_feedback(
        self, item: _PenItem, colour: QColor, width: float, z: float = Z_FEEDBACK
    ) -> _PenItem:
        """Put a dashed, cosmetic-pen feedback ``item`` (rubber band, line) on the scene at
        height ``z`` (by default over the streets)."""
        pen = QPen(colour, width, Qt.PenStyle.DashLine)
        pen.setCosmetic(True)
        item.setPen(pen)
        item.setZValue(z)
        self.scene.addItem(item)
        return item


class PickTool(Tool):
    name = "pick"
    label = "Pick"
    key = "P"
    hint = "Pick: click a street or junction; Shift adds; drag a box to pick many."

    def __init__(self, view: CanvasView) -> None:
        super().__init__(view)
        self._origin: QPointF | None = None
        self._band: QGraphicsRectItem | None = None

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        shift = bool(event.modifiers() & Qt.KeyboardModifier.ShiftModifier)
        node = self.node_at(pos)
        street = None if node else self.street_at(pos)
        doc = self.document
        if node:
            chosen = list(doc.node_selection) if shift else []
            chosen = [n for n in chosen if n != node] if node in chosen else [*chosen, node]
            doc.set_node_selection(chosen)
            if not shift:
                doc.set_selection([])
            return
        if street:
            chosen = list(doc.selection) if shift else []
            chosen = [s for s in chosen if s != street] if street in chosen else [*chosen, street]
            doc.set_selection(chosen)
            if not shift:
                doc.set_node_selection([])
            return
        self._origin = pos
        self._band = QGraphicsRectItem()
        self._band.setBrush(QColor(0, 114, 178, 30))
        self.add_feedback(self._band, QColor("#0072B2"), 1)
        self._band.setRect(QRectF(pos, pos))

    def move(self, event: QMouseEvent, pos: QPointF) -> None:
        if self._band is not None and self._origin is not None:
            self._band.setRect(QRectF(self._origin, pos).normalized())

    def release(self, event: QMouseEvent, pos: QPointF) -> None:
        if self._band is None or self._origin is None:
            return
        rect = QRectF(self._origin, pos).normalized()
        self.cancel()
        shift = bool(event.modifiers() & Qt.KeyboardModifier.ShiftModifier)
        doc = self.document
        if rect.width() < self.view.pixel_size() * 3 and rect.height() < self.view.pixel_size() * 3:
            if not shift:  # a click on empty ground
                doc.set_selection([])
                doc.set_node_selection([])
            return
        found = self.scene.streets_in(rect)
        doc.set_selection([*doc.selection, *found] if shift else found)

    def cancel(self) -> None:
        if self._band is not None:
            self.scene.removeItem(self._band)
        self._band = None
        self._origin = None


class LayStreetTool(Tool):
    name = "lay"
    label = "Lay street"
    key = "L"
    hint = (
        "Lay street: click where it starts and where it ends; clicks snap to junctions and "
        "cut streets. Esc or right click ends."
    )
    cursor = Qt.CursorShape.CrossCursor

    def __init__(self, view: CanvasView) -> None:
        super().__init__(view)
        self._start: str | None = None
        """The junction the next street starts from; "" for a free point not yet made."""
        self._start_pos = QPointF()
        self._line: QGraphicsLineItem | None = None

    def _anchor(
        self, pos: QPointF, net: Network, fresh: list[str] = ()
    ) -> tuple[str, ed.Edit | None]:
        """The junction a click lands on: an existing one near the click, a new
        one cutting the street under it, or a new free-standing one; with the
        edit (not yet applied) that makes it."""
        node = self.node_at(pos)
        if node is not None:
            return node, None
        x, y = from_scene(pos)
        street = self.street_at(pos)
        if street is not None:
            # the street may already be cut by the start of this same street
            pieces = [s for s in (street, *fresh) if s in net.segments]
            street = min(pieces, key=lambda s: _distance(net.segments[s], x, y))
            try:
                edit = ed.split_street(net, street, x, y)
            except NetworkError:
                seg = net.segments[street]
                # too close to an end to cut: land on the nearer end instead
                ends = [net.nodes[seg.start], net.nodes[seg.end]]
                return min(ends, key=lambda n: (n.x - x) ** 2 + (n.y - y) ** 2).id, None
            return edit.created_nodes[0], edit
        edit = ed.add_node(net, x, y)
        return edit.created_nodes[0], edit

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        if not self.left_press(event):
            return
        net = self.document.network
        if self._start is None or (self._start and self._start not in net.nodes):
            # the first click only remembers where the street starts
            self._start_pos = pos
            self._start = self.node_at(pos) or ""
            self._show_line(pos)
            return
        if self.node_at(pos) == self._start and self._start:
            return  # a street needs two different ends
        # one undoable edit: make the start (if new), make the end, lay the street
        scratch = net.copy()
        edits: list[ed.Edit] = []

        def keep(anchor: tuple[str, ed.Edit | None]) -> str:
            node, e = anchor
            if e is not None:
                e.apply(scratch)
                edits.append(e)
            return node

        try:
            start = self._start or keep(self._anchor(self._start_pos, scratch))
            fresh = [k for e in edits for k in e.created_segments]
            end = keep(self._anchor(pos, scratch, fresh))
            if end == start:
                return
            edits.append(ed.add_street(scratch, start, end))
        except (NetworkError, ValueError) as exc:
            self.report(exc)
            return
        self.document.apply_edit(ed.combine("Lay street", edits))
        self._start = end
        self._show_line(pos)

    def _show_line(self, pos: QPointF) -> None:
        if self._start is None:
            return
        node = self.document.network.nodes.get(self._start)
        origin = to_scene(node.x, node.y) if node is not None else self._start_pos
        if self._line is None:
            self._line = self.add_feedback(QGraphicsLineItem(), QColor("#000000"), 1.5)
        self._line.setLine(QLineF(origin, pos))

    def move(self, event: QMouseEvent, pos: QPointF) -> None:
        if self._start is not None:
            self._show_line(pos)

    def double_click(self, event: QMouseEvent, pos: QPointF) -> None:
        self.cancel()

    def cancel(self) -> None:
        self._start = None
        if self._line is not None:
            self.scene.removeItem(self._line)
            self._line = None


class MoveJunctionTool(Tool):
    name = "move"
    label = "Move junction"
    key = "M"
    hint = "Move junction: drag a junction; its streets follow."
    cursor = Qt.CursorShape.SizeAllCursor

    def __init__(self, view: CanvasView) -> None:
        super().__init__(view)
        self._node: str | None = None
        self._items: list[StreetItem] = []

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        if event.button() == Qt.MouseButton.LeftButton:
            self._node = self.node_at(pos)
            if self._node is not None:
                self._items = self.scene.attached_items(self._node)

    def move(self, event: QMouseEvent, pos: QPointF) -> None:
        if self._node is not None:
            self.scene.preview_move(self._node, *from_scene(pos), items=self._items)

    def release(self, event: QMouseEvent, pos: QPointF) -> None:
        node, self._node = self._node, None
        if node is None:
            return
        x, y = from_scene(pos)
        start = self.document.network.nodes[node]
        if (start.x, start.y) == (x, y):
            return
        if self.run(lambda: ed.move_node(self.document.network, node, x, y)) is None:
            self._redraw(node)

    def cancel(self) -> None:
        if self._node is not None:
            node, self._node = self._node, None
            self._redraw(node)

    def _redraw(self, node: str) -> None:
        """Put the junction and its streets back where the model has them."""
        self.scene.on_changed(set(ed.attached(self.document.network, node)), {node})


class CutTool(Tool):
    name = "cut"
    label = "Cut"
    key = "C"
    hint = "Cut: click a street to cut it in two there."
    cursor = Qt.CursorShape.CrossCursor

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        street = self.left_street(event, pos)
        if street is not None:
            x, y = from_scene(pos)
            self.run(lambda: ed.split_street(self.document.network, street, x, y))


class EraseTool(Tool):
    name = "erase"
    label = "Erase"
    key = "E"
    hint = "Erase: click a street, or a junction to remove it with its streets."
    cursor = Qt.CursorShape.PointingHandCursor

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        net = self.document.network
        node, street = self.junction_or_street(pos)
        if node is not None:
            self.run(lambda: ed.delete(net, nodes=[node]))
        elif street is not None:
            self.run(lambda: ed.delete(net, segments=[street]))


class DirectionTool(Tool):
    name = "direction"
    label = "Direction"
    key = "D"
    hint = (
        "Direction: click a two-way street to make it one-way along its drawing, click a "
        "one-way street to turn it round; Shift+click makes it two-way."
    )
    cursor = Qt.CursorShape.PointingHandCursor

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        street = self.left_street(event, pos)
        if street is None:
            return
        net = self.document.network
        if event.modifiers() & Qt.KeyboardModifier.ShiftModifier:
            self.run(lambda: ed.set_oneway(net, [street], OneWay.NO))
        elif net.segments[street].oneway is OneWay.NO:
            self.run(lambda: ed.set_oneway(net, [street], OneWay.FORWARD))
        else:
            self.run(lambda: ed.reverse_oneway(net, [street]))


class ServiceBrushTool(Tool):
    name = "service"
    label = "Service brush"
    key = "B"
    hint = "Service brush: click streets to give them the requirement chosen in the toolbar."
    cursor = Qt.CursorShape.PointingHandCursor

    def __init__(self, view: CanvasView) -> None:
        super().__init__(view)
        self.service = Service.EITHER

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        street = self.left_street(event, pos)
        if street is not None:
            self.run(lambda: ed.set_service(self.document.network, [street], self.service))


class DepotTool(Tool):
    name = "depot"
    label = "Depot"
    key = "H"
    hint = "Depot: click a junction (or a street, to cut it there) to put the depot there."
    cursor = Qt.CursorShape.PointingHandCursor

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        net = self.document.network
        node, street = self.junction_or_street(pos)
        if node is not None:
            self.run(lambda: ed.set_depot(net, node))
            return
        if street is None:
            self.view.message.emit("Depot: click on a junction or a street.")
            return
        x, y = from_scene(pos)

        def make() -> ed.Edit:
            scratch = net.copy()
            cut = ed.split_street(scratch, street, x, y).apply(scratch)
            place = ed.set_depot(scratch, cut.created_nodes[0])
            return ed.combine("Place depot", [cut, place])

        self.run(make)


TOOLS: tuple[type[Tool], ...] = (
    PickTool,
    LayStreetTool,
    MoveJunctionTool,
    CutTool,
    EraseTool,
    DirectionTool,
    ServiceBrushTool,
    DepotTool,
)
"""The tools in toolbar order."""
