"""The circuit drawn over the streets: passes, arrows, numbered markers, highlight.

Built for large plans (20,000 streets and more):

- the passes are batched into a few ``QGraphicsPathItem`` objects, one for the
  service passes and one for the deadhead passes of each tile of a coarse
  grid, so Qt's BSP index skips the tiles off screen and strokes the rest in
  C++ with cosmetic pens;
- arrows and numbered markers are not items: one layer item draws them from
  NumPy arrays, only inside the exposed rectangle and only as many as the
  zoom leaves room for (level of detail: an arrow on a pass drawn at least
  :data:`ARROW_MIN_PX` long, markers every 1, 2, 5, 10, 20, ... steps so they
  stay about :data:`MARKER_SPACING_PX` apart);
- passes are moved sideways by a few screen pixels (:mod:`app.plan.geometry`);
  when the zoom changes by more than a factor :data:`REGAP_FACTOR` the lines
  are rebuilt with the new offset.

The overlay never owns the plan or the network: :meth:`CircuitOverlay.show_plan`
draws what it is handed, and :meth:`CircuitOverlay.step_at` answers which
pass lies under a point.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from PySide6.QtCore import QObject, QPointF, QRectF, Qt, QTimer
from PySide6.QtGui import QBrush, QColor, QFont, QPainter, QPainterPath, QPen, QPolygonF
from PySide6.QtWidgets import (
    QGraphicsItem,
    QGraphicsPathItem,
    QGraphicsRectItem,
    QGraphicsScene,
    QStyleOptionGraphicsItem,
    QWidget,
)

from app.plan.geometry import PassGeometry, pass_geometry
from app.plan.style import (
    CASING_PX,
    DEADHEAD,
    HIGHLIGHT,
    INK,
    SERVICE,
    VEIL,
    WHITE,
    Z_CASING,
    Z_DEADHEAD,
    Z_HIGHLIGHT,
    Z_MARKS,
    Z_SERVICE,
    Z_VEIL,
    casing,
)
from core.model import Network
from core.plan import Plan

__all__ = ["CircuitOverlay"]

GAP_PX = 3.5
"""Sideways distance between the centre line and the first pass, screen pixels."""
GAP_MIN_M, GAP_MAX_M = 0.75, 12.0
"""The sideways distance stays within these metres whatever the zoom."""
REGAP_FACTOR = 1.6
ARROW_MIN_PX = 26.0
"""A pass gets an arrow when it is drawn at least this long on screen."""
ARROW_PX = 8.0
MARKER_SPACING_PX = 120.0
"""Wanted screen distance between numbered markers, along the circuit."""
MARKER_CELL_PX = 22.0
"""A marker is left out when another lies within about this many pixels."""
MARKER_STRIDES = (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000)
TILE_STEPS = 1500
"""About this many passes per tile item."""


class _MarksLayer(QGraphicsItem):
    """Arrows along the passes and numbered markers, drawn in screen pixels."""

    def __init__(self, overlay: CircuitOverlay) -> None:
        super().__init__()
        self._overlay = overlay
        self.rect = QRectF()
        self.setFlag(QGraphicsItem.GraphicsItemFlag.ItemUsesExtendedStyleOption, True)
        self.setAcceptedMouseButtons(Qt.MouseButton.NoButton)
        self.setZValue(Z_MARKS)
        self._font = QFont()
        self._font.setPixelSize(10)
        self._font.setBold(True)

    def boundingRect(self) -> QRectF:
        return self.rect

    def shape(self) -> QPainterPath:
        return QPainterPath()  # never hit by mouse queries

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        ov = self._overlay
        if ov.n_steps == 0:
            return
        lod = option.levelOfDetailFromTransform(painter.worldTransform())
        ov.zoom_seen(lod)
        r = option.exposedRect.adjusted(-30 / lod, -30 / lod, 30 / lod, 30 / lod)
        world = painter.worldTransform()
        painter.save()
        painter.resetTransform()
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        self._arrows(painter, world, r, lod)
        self._markers(painter, world, r, lod)
        painter.restore()

    @staticmethod
    def _inside(xy: np.ndarray, r: QRectF) -> np.ndarray:
        return (
            (xy[:, 0] >= r.left())
            & (xy[:, 0] <= r.right())
            & (xy[:, 1] >= r.top())
            & (xy[:, 1] <= r.bottom())
        )

    def _arrows(self, painter: QPainter, world, r: QRectF, lod: float) -> None:
        ov = self._overlay
        show = (ov.drawn_m * lod >= ARROW_MIN_PX) & self._inside(ov.mid_xy, r)
        idx = np.nonzero(show)[0]
        if len(idx) == 0:
            painter.setPen(Qt.PenStyle.NoPen)
            return
        outline = QPen(QColor(WHITE), 1.0)
        brushes = {True: QBrush(QColor(SERVICE.colour)), False: QBrush(QColor(DEADHEAD.colour))}
        painter.setPen(outline)
        s = ARROW_PX
        for i in idx:
            p = world.map(QPointF(ov.mid_xy[i, 0], ov.mid_xy[i, 1]))
            a = ov.mid_angle[i]
            c, n = math.cos(a), math.sin(a)
            tip = QPointF(p.x() + c * s * 0.7, p.y() + n * s * 0.7)
            bx, by = p.x() - c * s * 0.5, p.y() - n * s * 0.5
            left = QPointF(bx - n * s * 0.55, by + c * s * 0.55)
            right = QPointF(bx + n * s * 0.55, by - c * s * 0.55)
            painter.setBrush(brushes[bool(ov.service[i])])
            painter.drawPolygon(QPolygonF([tip, left, right]))

    def _markers(self, painter: QPainter, world, r: QRectF, lod: float) -> None:
        ov = self._overlay
        stride = ov.marker_stride(lod)
        numbers = np.arange(1, ov.n_steps + 1)
        show = ((numbers % stride == 0) | (numbers == 1)) & ov.has_line
        show &= self._inside(ov.mark_xy, r)
        for h in ov.highlighted:
            if 0 <= h < ov.n_steps and ov.has_line[h]:
                show[h] = True
        painter.setFont(self._font)
        fm = painter.fontMetrics()
        taken: set[tuple[int, int]] = set()
        # highlighted steps first, so a neighbour never hides them
        order = sorted(np.nonzero(show)[0], key=lambda i: (i not in ov.highlighted, i))
        for i in order:
            p = world.map(QPointF(ov.mark_xy[i, 0], ov.mark_xy[i, 1]))
            cell = (int(p.x() // MARKER_CELL_PX), int(p.y() // MARKER_CELL_PX))
            if cell in taken and i not in ov.highlighted:
                continue  # a marker is already drawn here: keep the map readable
            taken.update((cell[0] + dx, cell[1] + dy) for dx in (-1, 0, 1) for dy in (-1, 0, 1))
            text = str(i + 1)
            w = max(fm.horizontalAdvance(text) + 8, 16)
            box = QRectF(p.x() - w / 2, p.y() - 8, w, 16)
            colour = SERVICE.colour if ov.service[i] else DEADHEAD.colour
            selected = i in ov.highlighted
            painter.setPen(QPen(QColor(colour), 2.0))
            painter.setBrush(QBrush(QColor(HIGHLIGHT.colour if selected else WHITE)))
            painter.drawRoundedRect(box, 8, 8)
            painter.setPen(QColor(INK))
            painter.drawText(box, Qt.AlignmentFlag.AlignCenter, text)


class CircuitOverlay(QObject):
    """Draws one plan's circuit on a scene and answers questions about it."""

    def __init__(self, scene: QGraphicsScene, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.scene = scene
        self.network: Network | None = None
        self.plan: Plan | None = None
        self.left_hand = False
        self.gap_m = 2.0
        self.highlighted: tuple[int, ...] = ()
        self._items: list[QGraphicsItem] = []
        self._veil = QGraphicsRectItem()
        self._veil.setPen(QPen(Qt.PenStyle.NoPen))
        self._veil.setBrush(QBrush(VEIL))
        self._veil.setZValue(Z_VEIL)
        self._veil.setAcceptedMouseButtons(Qt.MouseButton.NoButton)
        self._marks = _MarksLayer(self)
        self._glow = QGraphicsPathItem()
        pen = HIGHLIGHT.pen()
        pen.setCapStyle(Qt.PenCapStyle.RoundCap)
        self._glow.setPen(pen)
        self._glow.setZValue(Z_HIGHLIGHT)
        self._glow.setAcceptedMouseButtons(Qt.MouseButton.NoButton)
        for item in (self._veil, self._marks, self._glow):
            item.setVisible(False)
            scene.addItem(item)
        self._regap = QTimer(self)
        self._regap.setSingleShot(True)
        self._regap.setInterval(250)  # one rebuild at the end of a run of wheel steps
        self._regap.timeout.connect(self._rebuild)
        self._wanted_gap = self.gap_m
        self._empty_arrays()

    # -- state -------------------------------------------------------------------
    def _empty_arrays(self) -> None:
        self.n_steps = 0
        self.geometry: PassGeometry | None = None
        self.service = np.zeros(0, dtype=bool)
        self.has_line = np.zeros(0, dtype=bool)
        self.drawn_m = np.zeros(0)
        self.mid_xy = np.zeros((0, 2))
        self.mid_angle = np.zeros(0)
        self.mark_xy = np.zeros((0, 2))
        self._seg_a = np.zeros((0, 2))
        self._seg_b = np.zeros((0, 2))
        self._seg_step = np.zeros(0, dtype=np.int64)
        self._mean_m = 1.0

    @property
    def items(self) -> list[QGraphicsItem]:
        """The batched pass items (for tests and the benchmark)."""
        return list(self._items)

    # -- drawing -------------------------------------------------------------------
    def show_plan(
        self,
        network: Network,
        plan: Plan | None,
        *,
        left_hand: bool = False,
        pixels_per_metre: float | None = None,
    ) -> None:
        """Draw ``plan``'s circuit over ``network`` (``None`` clears).

        ``pixels_per_metre`` (the view's zoom) sets the sideways offset of the
        passes.  O(total vertices of the passes).
        """
        self.network, self.plan, self.left_hand = network, plan, left_hand
        self.highlighted = ()
        if pixels_per_metre:
            self.gap_m = self._gap_for(pixels_per_metre)
            self._wanted_gap = self.gap_m
        self._rebuild()

    def clear(self) -> None:
        self.show_plan(self.network or Network(), None)

    def _gap_for(self, lod: float) -> float:
        return min(max(GAP_PX / max(lod, 1e-9), GAP_MIN_M), GAP_MAX_M)

    def zoom_seen(self, lod: float) -> None:
        """Called while painting: rebuild the lines if the zoom moved far enough."""
        want = self._gap_for(lod)
        ratio = want / self.gap_m
        if (ratio > REGAP_FACTOR or ratio < 1 / REGAP_FACTOR) and not math.isclose(
            want, self._wanted_gap
        ):
            self._wanted_gap = want
            self._regap.start()

    def sync_zoom(self, lod: float) -> None:
        """Rebuild now if the lines were drawn for a zoom far from ``lod`` (before a
        click is matched against them, in case no paint has happened since)."""
        self.zoom_seen(lod)
        if self._regap.isActive():
            self._regap.stop()
            self._rebuild()

    def _rebuild(self) -> None:
        if self._wanted_gap != self.gap_m and self.plan is not None:
            self.gap_m = self._wanted_gap
        for item in self._items:
            self.scene.removeItem(item)
        self._items = []
        plan, network = self.plan, self.network
        if plan is None or network is None or not plan.steps:
            self._empty_arrays()
            for item in (self._veil, self._marks, self._glow):
                item.setVisible(False)
            return
        geo = pass_geometry(network, plan.steps, self.gap_m, left_hand=self.left_hand)
        self._arrays(plan, geo)
        self._build_tiles(geo)
        self._marks.prepareGeometryChange()
        self._marks.rect = self._bounds().adjusted(-50, -50, 50, 50)
        self._veil.setRect(self.scene.sceneRect().united(self._marks.rect))
        for item in (self._veil, self._marks):
            item.setVisible(True)
        self._show_highlight()
        self._marks.update()

    def _arrays(self, plan: Plan, geo: PassGeometry) -> None:
        n = len(plan.steps)
        self.n_steps = n
        self.geometry = geo
        self.service = np.fromiter((s.service for s in plan.steps), dtype=bool, count=n)
        self.has_line = geo.has_line
        self.drawn_m = geo.lengths
        flip = np.array([1.0, -1.0])  # the scene's y points down
        mid, ang = geo.point_along(np.full(n, 0.5))
        self.mid_xy, self.mid_angle = mid * flip, -ang
        lengths = np.where(geo.lengths > 0, geo.lengths, 1.0)
        mark, _ = geo.point_along(np.minimum(0.25, 12.0 / lengths))
        self.mark_xy = mark * flip
        a, b, owner = geo.edges()
        self._seg_a, self._seg_b, self._seg_step = a * flip, b * flip, owner
        drawn = geo.lengths[self.has_line]
        self._mean_m = float(drawn.mean()) if len(drawn) else 1.0

    def _bounds(self) -> QRectF:
        if len(self._seg_a) == 0:
            return QRectF()
        pts = np.concatenate([self._seg_a, self._seg_b])
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        return QRectF(QPointF(lo[0], lo[1]), QPointF(hi[0], hi[1]))

    def _build_tiles(self, geo: PassGeometry) -> None:
        """A casing, a deadhead and a service path item per tile of a grid over the
        district.  Each pass's polygon is made once (``tolist`` first: NumPy scalars
        are slow to hand to Qt one by one) and added to two paths."""
        idx = np.nonzero(self.has_line)[0]
        if len(idx) == 0:
            return
        per_side = max(1, math.ceil(math.sqrt(len(idx) / TILE_STEPS)))
        xy = self.mid_xy[idx]
        lo, hi = xy.min(axis=0), xy.max(axis=0)
        span = np.maximum(hi - lo, 1e-9)
        cell = np.minimum(((xy - lo) / span * per_side).astype(np.int64), per_side - 1)
        tile = cell[:, 0] * per_side + cell[:, 1]
        flipped = (geo.points * np.array([1.0, -1.0])).tolist()
        start = geo.start.tolist()
        pens = {True: SERVICE.pen(), False: DEADHEAD.pen()}
        zs = {True: Z_SERVICE, False: Z_DEADHEAD}
        casing_pen = casing(CASING_PX)
        for t in np.unique(tile):
            members = idx[tile == t].tolist()
            casing_path = QPainterPath()
            kind_paths = {True: QPainterPath(), False: QPainterPath()}
            for i in members:
                poly = QPolygonF([QPointF(x, y) for x, y in flipped[start[i] : start[i + 1]]])
                casing_path.addPolygon(poly)
                kind_paths[bool(self.service[i])].addPolygon(poly)
            self._add_item(casing_path, casing_pen, Z_CASING)
            for kind in (False, True):
                if not kind_paths[kind].isEmpty():
                    self._add_item(kind_paths[kind], pens[kind], zs[kind])

    def _add_item(self, path: QPainterPath, pen: QPen, z: float) -> None:
        item = QGraphicsPathItem(path)
        item.setPen(pen)
        item.setZValue(z)
        item.setAcceptedMouseButtons(Qt.MouseButton.NoButton)
        self.scene.addItem(item)
        self._items.append(item)

    # -- markers -----------------------------------------------------------------
    def marker_stride(self, lod: float) -> int:
        """Steps between numbered markers so that they stay readable at ``lod``
        screen pixels per metre: the smallest of 1, 2, 5, 10, ... that puts
        markers about :data:`MARKER_SPACING_PX` apart along the circuit.  O(1)."""
        per_step_px = self._mean_m * lod
        for stride in MARKER_STRIDES:
            if stride * per_step_px >= MARKER_SPACING_PX:
                return stride
        return MARKER_STRIDES[-1]

    # -- highlight and picking ------------------------------------------------------
    def set_highlight(self, indices: Sequence[int]) -> None:
        """Highlight the given steps (0-based); an empty list clears."""
        self.highlighted = tuple(int(i) for i in indices if 0 <= int(i) < self.n_steps)
        self._show_highlight()
        self._marks.update()

    def _show_highlight(self) -> None:
        path = QPainterPath()
        if self.geometry is not None:
            for i in self.highlighted:
                line = self.geometry.line(i)
                if line is not None:
                    path.addPolygon(QPolygonF([QPointF(x, -y) for x, y in line]))
        self._glow.setPath(path)
        self._glow.setVisible(not path.isEmpty())

    def highlight_path(self) -> QPainterPath:
        """The scene path of the highlighted passes (empty when none)."""
        return self._glow.path() if self._glow.isVisible() else QPainterPath()

    def step_rect(self, index: int) -> QRectF:
        """The scene rectangle around one pass (null without a line)."""
        if self.geometry is None or not (0 <= index < self.n_steps):
            return QRectF()
        line = self.geometry.line(index)
        if line is None:
            return QRectF()
        lo, hi = line.min(axis=0), line.max(axis=0)
        return QRectF(QPointF(lo[0], -hi[1]), QPointF(hi[0], -lo[1]))

    def step_at(self, point: QPointF, tolerance: float) -> int | None:
        """The step whose drawn pass is nearest to the scene ``point`` within
        ``tolerance`` (scene units), or ``None``.

        Point-to-segment distance over every drawn piece with NumPy: O(m) for
        m pieces, about a millisecond for 20,000 passes.  Of passes at the same
        distance the earliest step wins.
        """
        if len(self._seg_step) == 0:
            return None
        p = np.array([point.x(), point.y()])
        a, b = self._seg_a, self._seg_b
        ab = b - a
        denom = np.einsum("ij,ij->i", ab, ab)
        t = np.clip(np.einsum("ij,ij->i", p - a, ab) / np.where(denom > 0, denom, 1.0), 0, 1)
        closest = a + ab * t[:, None]
        dist = np.hypot(closest[:, 0] - p[0], closest[:, 1] - p[1])
        best = int(np.argmin(dist))
        if dist[best] > tolerance:
            return None
        return int(self._seg_step[best])
