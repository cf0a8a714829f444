"""The canvas view: plain grid backdrop, scale bar, north mark, zoom and pan.

Nothing is fetched from the network: the backdrop is a light square grid
whose spacing follows the zoom (1, 5, 10, 50, 100, 500 m ...), with faint
coordinate labels, a scale bar and a north mark drawn in screen space.
Mouse clicks go to the current editing tool (:mod:`app.canvas.tools`),
except the middle button and space-held drags, which pan.
"""

from __future__ import annotations

import math

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt, Signal
from PySide6.QtGui import (
    QColor,
    QFont,
    QKeyEvent,
    QMouseEvent,
    QPainter,
    QPen,
    QPolygonF,
    QWheelEvent,
)
from PySide6.QtWidgets import QGraphicsView, QWidget

from app.canvas.coords import from_scene
from app.canvas.scene import StreetScene
from app.canvas.style import BACKDROP, GRID_LABEL, GRID_MAJOR, GRID_MINOR

MIN_GRID_PX = 24.0
"""The finest grid drawn has at least this many screen pixels between lines."""
ZOOM_STEP = 1.25
MIN_SCALE = 1e-4
MAX_SCALE = 200.0
ANTIALIAS_FROM = 0.3
"""Lines are antialiased from this zoom (pixels per metre) on; below it the
whole district is on screen and plain lines draw several times faster."""


def nice_steps(first: float = 1.0) -> list[float]:
    """Grid spacings 1, 5, 10, 50, 100, 500 ... metres (one-five steps)."""
    out = []
    value = first
    for _ in range(16):
        out.extend([value, value * 5])
        value *= 10
    return out


_STEPS = nice_steps(0.1)


def grid_spacing(pixels_per_metre: float) -> float:
    """The finest one-five spacing at least :data:`MIN_GRID_PX` pixels apart."""
    for step in _STEPS:
        if step * pixels_per_metre >= MIN_GRID_PX:
            return step
    return _STEPS[-1]


def major_spacing(step: float) -> float:
    """The next one-five spacing after ``step`` (every fifth or second line)."""
    i = min(range(len(_STEPS)), key=lambda k: abs(_STEPS[k] - step))
    return _STEPS[min(i + 1, len(_STEPS) - 1)]


def scale_bar_length(pixels_per_metre: float, target_px: float = 120.0) -> float:
    """A one-two-five length in metres close to (not above) ``target_px`` pixels."""
    metres = target_px / pixels_per_metre
    power = 10 ** math.floor(math.log10(metres))
    for mult in (5, 2, 1):
        if mult * power <= metres:
            return mult * power
    return power


def metres_text(value: float) -> str:
    if value >= 1000:
        km = value / 1000
        return f"{km:g} km"
    return f"{value:g} m"


class CanvasView(QGraphicsView):
    """Shows a :class:`StreetScene` and hands mouse input to the current tool."""

    cursorMoved = Signal(float, float)
    """Network coordinates (metres) under the mouse."""
    message = Signal(str)
    """A short note for the status bar (tool hints, refused edits)."""

    def __init__(self, scene: StreetScene, parent: QWidget | None = None) -> None:
        super().__init__(scene, parent)
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.AnchorUnderMouse)
        self.setResizeAnchor(QGraphicsView.ViewportAnchor.AnchorViewCenter)
        self.setViewportUpdateMode(QGraphicsView.ViewportUpdateMode.SmartViewportUpdate)
        self.setOptimizationFlag(QGraphicsView.OptimizationFlag.DontSavePainterState, True)
        self.setCacheMode(QGraphicsView.CacheModeFlag.CacheNone)
        self.setDragMode(QGraphicsView.DragMode.NoDrag)
        self.setMouseTracking(True)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setAcceptDrops(False)  # files dropped here go to the main window
        self.tool = None
        self._space = False
        self._pan_from: QPointF | None = None
        self.snap_px = 8.0
        """Clicks this close (screen pixels) to a junction or street land on it."""
        self._update_antialias()

    @property
    def street_scene(self) -> StreetScene:
        return self.scene()  # type: ignore[return-value]

    # -- measures ---------------------------------------------------------------
    def scale_factor(self) -> float:
        """Screen pixels per metre."""
        return abs(self.transform().m11()) or 1.0

    def pixel_size(self) -> float:
        """Metres per screen pixel."""
        return 1.0 / self.scale_factor()

    def snap_distance(self) -> float:
        """The snapping tolerance in scene units (metres)."""
        return self.snap_px * self.pixel_size()

    # -- tools --------------------------------------------------------------------
    def set_tool(self, tool) -> None:
        if self.tool is not None:
            self.tool.deactivate()
        self.tool = tool
        if tool is not None:
            tool.activate()
            self.viewport().setCursor(tool.cursor)
            self.message.emit(tool.hint)

    # -- zoom and pan ---------------------------------------------------------------
    def zoom_by(self, factor: float, anchor_view_pos: QPointF | None = None) -> None:
        """Zoom by ``factor``, keeping the scene point under ``anchor_view_pos`` still."""
        new = self.scale_factor() * factor
        if not (MIN_SCALE <= new <= MAX_SCALE):
            return
        if anchor_view_pos is None:
            anchor_view_pos = QPointF(self.viewport().rect().center())
        before = self.mapToScene(anchor_view_pos.toPoint())
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.NoAnchor)
        self.scale(factor, factor)
        after = self.mapToScene(anchor_view_pos.toPoint())
        delta = after - before
        self.translate(delta.x(), delta.y())
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.AnchorUnderMouse)
        self._update_antialias()

    def wheelEvent(self, event: QWheelEvent) -> None:
        steps = event.angleDelta().y() / 120.0
        if steps:
            self.zoom_by(ZOOM_STEP**steps, event.position())
        event.accept()

    def fit_to_district(self) -> None:
        """Show the whole district with a small margin."""
        rect = self.street_scene.district_rect()
        if rect.isNull() or rect.isEmpty():
            rect = QRectF(rect.center() - QPointF(100, 100), rect.center() + QPointF(100, 100))
        pad = 0.05 * max(rect.width(), rect.height(), 50.0)
        self.fitInView(rect.adjusted(-pad, -pad, pad, pad), Qt.AspectRatioMode.KeepAspectRatio)
        self._update_antialias()

    def _update_antialias(self) -> None:
        self.setRenderHint(QPainter.RenderHint.Antialiasing, self.scale_factor() >= ANTIALIAS_FROM)

    def _pan_by(self, delta: QPointF) -> None:
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.NoAnchor)
        s = self.scale_factor()
        self.translate(delta.x() / s, delta.y() / s)
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.AnchorUnderMouse)

    # -- mouse and keys ---------------------------------------------------------------
    def mousePressEvent(self, event: QMouseEvent) -> None:
        if event.button() == Qt.MouseButton.MiddleButton or (
            self._space and event.button() == Qt.MouseButton.LeftButton
        ):
            self._pan_from = event.position()
            self.viewport().setCursor(Qt.CursorShape.ClosedHandCursor)
            event.accept()
            return
        if self.tool is not None:
            self.tool.press(event, self.mapToScene(event.position().toPoint()))
            event.accept()
            return
        super().mousePressEvent(event)

    def mouseMoveEvent(self, event: QMouseEvent) -> None:
        scene_pos = self.mapToScene(event.position().toPoint())
        x, y = from_scene(scene_pos)
        self.cursorMoved.emit(x, y)
        if self._pan_from is not None:
            delta = event.position() - self._pan_from
            self._pan_from = event.position()
            self._pan_by(delta)
            event.accept()
            return
        if self.tool is not None:
            self.tool.move(event, scene_pos)
            event.accept()
            return
        super().mouseMoveEvent(event)

    def mouseReleaseEvent(self, event: QMouseEvent) -> None:
        if self._pan_from is not None and event.button() in (
            Qt.MouseButton.MiddleButton,
            Qt.MouseButton.LeftButton,
        ):
            self._pan_from = None
            self.viewport().setCursor(
                Qt.CursorShape.OpenHandCursor
                if self._space
                else (self.tool.cursor if self.tool else Qt.CursorShape.ArrowCursor)
            )
            event.accept()
            return
        if self.tool is not None:
            self.tool.release(event, self.mapToScene(event.position().toPoint()))
            event.accept()
            return
        super().mouseReleaseEvent(event)

    def mouseDoubleClickEvent(self, event: QMouseEvent) -> None:
        if self.tool is not None:
            self.tool.double_click(event, self.mapToScene(event.position().toPoint()))
            event.accept()
            return
        super().mouseDoubleClickEvent(event)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        if event.key() == Qt.Key.Key_Space and not event.isAutoRepeat():
            self._space = True
            self.viewport().setCursor(Qt.CursorShape.OpenHandCursor)
            event.accept()
            return
        if event.key() == Qt.Key.Key_Escape and self.tool is not None:
            self.tool.cancel()
            event.accept()
            return
        super().keyPressEvent(event)

    def keyReleaseEvent(self, event: QKeyEvent) -> None:
        if event.key() == Qt.Key.Key_Space and not event.isAutoRepeat():
            self._space = False
            self.viewport().setCursor(self.tool.cursor if self.tool else Qt.CursorShape.ArrowCursor)
            event.accept()
            return
        super().keyReleaseEvent(event)

    # -- backdrop -------------------------------------------------------------------
    def drawBackground(self, painter: QPainter, rect: QRectF) -> None:
        painter.fillRect(rect, QColor(BACKDROP))
        step = grid_spacing(self.scale_factor())
        major = major_spacing(step)
        for spacing, colour in ((step, GRID_MINOR), (major, GRID_MAJOR)):
            pen = QPen(QColor(colour), 0)
            pen.setCosmetic(True)
            painter.setPen(pen)
            painter.drawLines(self._grid_lines(rect, spacing))

    @staticmethod
    def _grid_lines(rect: QRectF, spacing: float) -> list[QLineF]:
        x0 = math.floor(rect.left() / spacing) * spacing
        y0 = math.floor(rect.top() / spacing) * spacing
        lines = []
        x = x0
        while x <= rect.right():
            lines.append(QLineF(x, rect.top(), x, rect.bottom()))
            x += spacing
        y = y0
        while y <= rect.bottom():
            lines.append(QLineF(rect.left(), y, rect.right(), y))
            y += spacing
        return lines

    def drawForeground(self, painter: QPainter, rect: QRectF) -> None:
        painter.save()
        painter.resetTransform()
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        self._draw_grid_labels(painter)
        self._draw_scale_bar(painter)
        self._draw_north(painter)
        painter.restore()

    def _draw_grid_labels(self, painter: QPainter) -> None:
        step = grid_spacing(self.scale_factor())
        major = major_spacing(step)
        view = self.viewport().rect()
        area = self.mapToScene(view).boundingRect()
        font = QFont(self.font())
        font.setPointSizeF(max(6.0, font.pointSizeF() * 0.8))
        painter.setFont(font)
        painter.setPen(QColor(GRID_LABEL))
        x = math.ceil(area.left() / major) * major
        while x <= area.right():
            px = self.mapFromScene(QPointF(x, area.top())).x()
            painter.drawText(QPointF(px + 3, 12), f"{x + 0.0:.0f}")
            x += major
        y = math.ceil(area.top() / major) * major
        while y <= area.bottom():
            py = self.mapFromScene(QPointF(area.left(), y)).y()
            painter.drawText(QPointF(3, py - 3), f"{(-y) + 0.0:.0f}")
            y += major

    def _draw_scale_bar(self, painter: QPainter) -> None:
        length = scale_bar_length(self.scale_factor())
        px = length * self.scale_factor()
        h = self.viewport().height()
        left, base = 16.0, h - 18.0
        pen = QPen(QColor("#333333"), 2)
        painter.setPen(pen)
        painter.drawLine(QPointF(left, base), QPointF(left + px, base))
        painter.drawLine(QPointF(left, base - 5), QPointF(left, base + 1))
        painter.drawLine(QPointF(left + px, base - 5), QPointF(left + px, base + 1))
        painter.drawText(QPointF(left, base - 7), metres_text(length))

    def _draw_north(self, painter: QPainter) -> None:
        w = self.viewport().width()
        cx, top = w - 24.0, 14.0
        painter.setPen(QPen(QColor("#333333"), 1.2))
        painter.setBrush(QColor("#333333"))
        painter.drawPolygon(
            QPolygonF(
                [
                    QPointF(cx, top),
                    QPointF(cx + 6, top + 18),
                    QPointF(cx, top + 13),
                    QPointF(cx - 6, top + 18),
                ]
            )
        )
        painter.drawText(QRectF(cx - 8, top + 18, 16, 14), Qt.AlignmentFlag.AlignCenter, "N")
