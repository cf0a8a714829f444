"""The "District boundary" canvas tool: draw the polygon a district is cut out along.

Click the corners one after another; double-click (or press Enter) to close the
polygon, Esc or a right click to drop it.  The closed polygon, in network
coordinates, goes to the tool's ``on_closed`` callback (the importing
controller keeps it, draws it and offers "Clip to boundary").  The tool edits
nothing itself.  It follows the canvas's tool API (:class:`app.canvas.tools.Tool`).
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import QEvent, QObject, QPointF, Qt
from PySide6.QtGui import QColor, QKeyEvent, QMouseEvent, QPainterPath
from PySide6.QtWidgets import QGraphicsPathItem

from app.canvas.coords import from_scene, to_scene
from app.canvas.tools import Tool
from app.importing.style import BOUNDARY_COLOUR, Z_BOUNDARY_DRAFT

__all__ = ["BoundaryTool"]

Ring = list[tuple[float, float]]


class _Keys(QObject):
    """Enter closes the polygon while the tool is active (the view sends only Esc
    to tools)."""

    def __init__(self, tool: BoundaryTool) -> None:
        super().__init__()
        self.tool = tool

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        if (
            event.type() == QEvent.Type.KeyPress
            and isinstance(event, QKeyEvent)
            and event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter)
        ):
            self.tool.finish()
            return True
        return False


class BoundaryTool(Tool):
    name = "boundary"
    label = "District boundary"
    key = "O"
    hint = (
        "District boundary: click the corners of the district; double-click or Enter closes "
        "it, Esc drops it. Then Edit ▸ Clip to boundary."
    )
    cursor = Qt.CursorShape.CrossCursor

    def __init__(self, view, on_closed: Callable[[Ring], None] | None = None) -> None:
        super().__init__(view)
        self.points: Ring = []
        self.on_closed = on_closed
        self._hover: QPointF | None = None
        self._item: QGraphicsPathItem | None = None
        self._keys = _Keys(self)

    # -- the API ------------------------------------------------------------------------
    def activate(self) -> None:
        self.view.installEventFilter(self._keys)

    def deactivate(self) -> None:
        self.view.removeEventFilter(self._keys)
        self.cancel()

    def press(self, event: QMouseEvent, pos: QPointF) -> None:
        if not self.left_press(event):
            return
        x, y = from_scene(pos)
        if self.points:
            lx, ly = self.points[-1]
            if max(abs(lx - x), abs(ly - y)) <= self.view.pixel_size():
                return  # the same corner clicked twice
        self.points.append((x, y))
        self._draw()

    def move(self, event: QMouseEvent, pos: QPointF) -> None:
        if self.points:
            self._hover = pos
            self._draw()

    def double_click(self, event: QMouseEvent, pos: QPointF) -> None:
        if event.button() == Qt.MouseButton.LeftButton:
            self.finish()

    def cancel(self) -> None:
        self.points = []
        self._hover = None
        if self._item is not None:
            self.scene.removeItem(self._item)
            self._item = None

    # -- closing ------------------------------------------------------------------------
    def finish(self) -> Ring | None:
        """Close the polygon; hands it to ``on_closed``.  Fewer than three corners: a note."""
        ring = list(self.points)
        if len(set(ring)) < 3:
            self.view.message.emit("A district boundary needs at least three corners.")
            return None
        self.cancel()
        if self.on_closed is not None:
            self.on_closed(ring)
        return ring

    def _draw(self) -> None:
        if self._item is None:
            self._item = self.add_feedback(
                QGraphicsPathItem(), QColor(BOUNDARY_COLOUR), 2.0, Z_BOUNDARY_DRAFT
            )
        path = QPainterPath()
        pts = [to_scene(x, y) for x, y in self.points]
        if self._hover is not None:
            pts.append(self._hover)
        if pts:
            path.moveTo(pts[0])
            for p in pts[1:]:
                path.lineTo(p)
            if len(pts) >= 3:
                path.lineTo(pts[0])
        self._item.setPath(path)
