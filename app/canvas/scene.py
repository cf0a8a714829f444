"""The street scene: one path item per street, batch layers for arrows and junctions.

Conventions (see :mod:`app.canvas`): scene coordinates are network metres with
``y`` flipped (:func:`app.canvas.coords.to_scene`); streets are at z 0, one-way
arrowheads 1, junction markers 2, the depot 3; the planning overlay uses
z 10–40 and tool feedback 50.

Level of detail, so a district of 20,000 streets opens in well under two
seconds and pans smoothly:

- each street is a plain ``QGraphicsPathItem`` with a cosmetic pen shared by
  all streets of its kind, so Qt paints it in C++ with no Python call;
- arrowheads and junction markers are *not* items: two layer items draw
  them straight from NumPy arrays, only for what is in the exposed rectangle
  and only when zoomed in far enough to read them (:data:`ARROW_MIN_PX_PER_M`,
  :data:`NODE_MIN_PX_PER_M`);
- hit testing asks Qt's BSP index for the streets whose bounding boxes meet a
  small square, then measures the exact distance to those few with NumPy.
"""

from __future__ import annotations

import math

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt, QTimer
from PySide6.QtGui import (
    QBrush,
    QColor,
    QFont,
    QFontMetricsF,
    QPainter,
    QPainterPath,
    QPen,
    QPolygonF,
)
from PySide6.QtWidgets import (
    QGraphicsItem,
    QGraphicsPathItem,
    QGraphicsScene,
    QStyleOptionGraphicsItem,
    QWidget,
)

from app.canvas.coords import to_scene
from app.canvas.style import (
    ARROW_COLOUR,
    DEPOT_COLOUR,
    LABEL_COLOUR,
    LOOKS,
    NODE_COLOUR,
    SELECTED_COLOUR,
)
from app.document import NetworkDocument
from core.model import Network, OneWay, Segment

Z_STREET = 0.0
Z_ARROW = 1.0
Z_NODE = 2.0
Z_DEPOT = 3.0
Z_FEEDBACK = 50.0

ARROW_MIN_PX_PER_M = 0.25
"""Arrowheads show from this zoom (screen pixels per metre) on."""
NODE_MIN_PX_PER_M = 0.4
"""Junction markers show from this zoom on."""
COARSE_BELOW_PX_PER_M = 0.3
"""Below this zoom the streets are drawn as one merged path per look
(:class:`CoarseLayer`) instead of item by item."""
LABEL_MIN_PX_PER_M = 1.0
"""Street names show from this zoom on, on streets long enough on screen."""
ARROW_PX = 9.0
NODE_PX = 5.0

_NO_CONTENTS = QGraphicsItem.GraphicsItemFlag.ItemHasNoContents

# One pen object per look, shared by all street items (no per-item QPen copies).
_PENS = {svc: look.pen() for svc, look in LOOKS.items()}
_SELECTED_PENS = {svc: look.pen(selected=True) for svc, look in LOOKS.items()}


def street_coords(seg: Segment, network: Network) -> list[tuple[float, float]] | None:
    """The street's polyline in network metres, or ``None`` when it has none."""
    if seg.geometry is not None:
        return list(seg.geometry)
    a, b = network.nodes[seg.start], network.nodes[seg.end]
    if a.has_xy and b.has_xy:
        return [(a.x, a.y), (b.x, b.y)]  # type: ignore[list-item]
    return None


def path_of(coords: list[tuple[float, float]]) -> QPainterPath:
    """A painter path through the points (scene coordinates)."""
    x0, y0 = coords[0]
    path = QPainterPath()
    path.moveTo(x0, -y0)
    for x, y in coords[1:]:
        path.lineTo(x, -y)
    return path


def _distance_to_polyline(px: float, py: float, pts: np.ndarray) -> float:
    """Shortest distance from a point to a polyline (vectorised). Cost O(v)."""
    a = pts[:-1]
    b = pts[1:]
    ab = b - a
    denom = np.einsum("ij,ij->i", ab, ab)
    t = np.where(
        denom > 0,
        np.einsum("ij,ij->i", np.array([px, py]) - a, ab) / np.where(denom > 0, denom, 1),
        0.0,
    )
    t = np.clip(t, 0.0, 1.0)
    nearest = a + ab * t[:, None]
    return float(np.min(np.hypot(nearest[:, 0] - px, nearest[:, 1] - py)))


class StreetItem(QGraphicsPathItem):
    """One street.  ``segment_id`` names it; painting is Qt's own (C++)."""

    def __init__(self, segment_id: str) -> None:
        super().__init__()  # z value Z_STREET (0) is Qt's default
        self.segment_id = segment_id
        self.coords: list[tuple[float, float]] = []

    def show_segment(self, seg: Segment, coords: list[tuple[float, float]], selected: bool) -> None:
        self.coords = coords
        self.setPath(path_of(coords))
        self.set_look(seg, selected)

    def set_look(self, seg: Segment, selected: bool) -> None:
        self.setPen((_SELECTED_PENS if selected else _PENS)[seg.service])

    def distance(self, x: float, y: float) -> float:
        """Distance in metres from network point ``(x, y)``."""
        if len(self.coords) < 2:
            return math.inf
        return _distance_to_polyline(x, y, np.asarray(self.coords, dtype=float))


def _in_rect(xy: np.ndarray, r: QRectF) -> np.ndarray:
    """Which rows of the (n, 2) array ``xy`` lie in ``r`` (edges included); O(n), vectorised."""
    return (
        (xy[:, 0] >= r.left())
        & (xy[:, 0] <= r.right())
        & (xy[:, 1] >= r.top())
        & (xy[:, 1] <= r.bottom())
    )


class _LayerItem(QGraphicsItem):
    """An item covering the whole scene that draws many small marks itself."""

    def __init__(self, scene: StreetScene) -> None:
        super().__init__()
        self._owner = scene
        self._rect = QRectF()
        self.setFlag(QGraphicsItem.GraphicsItemFlag.ItemUsesExtendedStyleOption, True)
        self.setAcceptedMouseButtons(Qt.MouseButton.NoButton)

    def boundingRect(self) -> QRectF:
        return self._rect

    def set_rect(self, rect: QRectF) -> None:
        """Cover ``rect`` (the scene rectangle), telling Qt's index first."""
        self.prepareGeometryChange()
        self._rect = QRectF(rect)

    def shape(self) -> QPainterPath:
        return QPainterPath()  # never hit by mouse queries


class CoarseLayer(_LayerItem):
    """The whole district at a glance: one merged path per street look.

    Zoomed out, painting 20,000 street items one by one costs Qt a
    transform, a clip test and a pen change each; stroking four merged paths
    is about three times faster (bench/bench_canvas.py).  Below
    :data:`COARSE_BELOW_PX_PER_M` the street items are flagged
    ``ItemHasNoContents`` (still indexed, so hit testing is unchanged, but
    not painted) and this layer draws them; selected streets keep drawing
    themselves on top.  The layer switches the mode itself when it sees the
    zoom cross the threshold, so any change of the view's transform works.
    """

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        lod = option.levelOfDetailFromTransform(painter.worldTransform())
        owner = self._owner
        want = lod < COARSE_BELOW_PX_PER_M
        if want != owner.coarse and not owner.switch_pending:
            owner.switch_pending = True  # switch after this paint, not during it
            QTimer.singleShot(0, owner, lambda: owner.set_coarse(want))
        if not (want or owner.coarse):
            return
        for service, path in owner.merged_paths().items():
            painter.setPen(_PENS[service])
            painter.drawPath(path)


class ArrowLayer(_LayerItem):
    """Arrowheads at the middle of each one-way street, when zoomed in."""

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        lod = option.levelOfDetailFromTransform(painter.worldTransform())
        if lod < ARROW_MIN_PX_PER_M:
            return
        mids, angles = self._owner.arrow_arrays()
        if len(mids) == 0:
            return
        r = option.exposedRect
        inside = _in_rect(mids, r)
        size = ARROW_PX / lod
        painter.setPen(Qt.PenStyle.NoPen)
        painter.setBrush(QBrush(QColor(ARROW_COLOUR)))
        for (mx, my), ang in zip(mids[inside], angles[inside], strict=True):
            c, s = math.cos(ang), math.sin(ang)
            tip = QPointF(mx + c * size * 0.6, my + s * size * 0.6)
            back = (mx - c * size * 0.4, my - s * size * 0.4)
            left = QPointF(back[0] - s * size * 0.45, back[1] + c * size * 0.45)
            right = QPointF(back[0] + s * size * 0.45, back[1] - c * size * 0.45)
            painter.drawPolygon(QPolygonF([tip, left, right]))


class NodeLayer(_LayerItem):
    """Junction markers (small squares), selected ones in the selection colour."""

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        lod = option.levelOfDetailFromTransform(painter.worldTransform())
        if lod < NODE_MIN_PX_PER_M:
            return
        _ids, xy = self._owner.node_arrays()
        if len(xy) == 0:
            return
        r = option.exposedRect
        inside = _in_rect(xy, r)
        half = NODE_PX / lod / 2
        painter.setPen(QPen(QColor("#FFFFFF"), 0))
        painter.setBrush(QBrush(QColor(NODE_COLOUR)))
        rects = [QRectF(x - half, y - half, 2 * half, 2 * half) for x, y in xy[inside]]
        if rects:
            painter.drawRects(rects)
        turning = self._owner.turning_places()
        if turning:
            pen = QPen(QColor(NODE_COLOUR), 1.5)
            pen.setCosmetic(True)
            painter.setPen(pen)
            painter.setBrush(Qt.BrushStyle.NoBrush)
            for x, y in turning:
                if r.contains(QPointF(x, y)):
                    painter.drawEllipse(QPointF(x, y), 3 * half, 3 * half)
            painter.setPen(QPen(QColor("#FFFFFF"), 0))
        chosen = self._owner.document.node_selection
        if chosen:
            painter.setBrush(QBrush(QColor(SELECTED_COLOUR)))
            nodes = self._owner.document.network.nodes
            for nid in chosen:
                n = nodes.get(nid)
                if n is not None and n.has_xy:
                    painter.drawRect(QRectF(n.x - 2 * half, -n.y - 2 * half, 4 * half, 4 * half))


class LabelLayer(_LayerItem):
    """Street names along the middle of named streets, when zoomed in close."""

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        lod = option.levelOfDetailFromTransform(painter.worldTransform())
        if lod < LABEL_MIN_PX_PER_M:
            return
        mids, angles, lengths, names = self._owner.label_arrays()
        if len(mids) == 0:
            return
        r = option.exposedRect
        inside = _in_rect(mids, r)
        font = QFont(painter.font())
        font.setPointSizeF(8.0)
        painter.setFont(font)
        metrics = QFontMetricsF(font)
        painter.setPen(QColor(LABEL_COLOUR))
        for i in np.flatnonzero(inside):
            name = names[i]
            width = metrics.horizontalAdvance(name)
            if width > lengths[i] * lod * 0.9:
                continue  # the street is too short on screen for its name
            ang = (math.degrees(angles[i]) + 180.0) % 360.0 - 180.0
            if ang > 90 or ang < -90:
                ang += 180  # never upside down
            painter.save()
            painter.translate(mids[i, 0], mids[i, 1])
            painter.scale(1 / lod, 1 / lod)
            painter.rotate(ang)
            painter.drawText(QPointF(-width / 2, -4), name)
            painter.restore()


class DepotItem(QGraphicsItem):
    """The depot: an orange pentagon (a house outline) of fixed screen size."""

    SIZE = 16.0

    def __init__(self) -> None:
        super().__init__()
        self.setFlag(QGraphicsItem.GraphicsItemFlag.ItemIgnoresTransformations, True)
        self.setZValue(Z_DEPOT)
        s = self.SIZE / 2
        self._shape = QPolygonF(
            [
                QPointF(0, -s),
                QPointF(s, -s * 0.2),
                QPointF(s, s),
                QPointF(-s, s),
                QPointF(-s, -s * 0.2),
            ]
        )

    def boundingRect(self) -> QRectF:
        s = self.SIZE / 2 + 2
        return QRectF(-s, -s, 2 * s, 2 * s)

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.setPen(QPen(QColor("#000000"), 1.5))
        painter.setBrush(QBrush(QColor(DEPOT_COLOUR)))
        painter.drawPolygon(self._shape)


class StreetScene(QGraphicsScene):
    """Shows a :class:`NetworkDocument`; never changes it."""

    def __init__(self, document: NetworkDocument, parent=None) -> None:
        super().__init__(parent)
        self.document = document
        self._items: dict[str, StreetItem] = {}
        self._node_cache: tuple[list[str], np.ndarray] | None = None
        self._arrow_cache: tuple[np.ndarray, np.ndarray] | None = None
        self.coarse = False
        """True while streets are drawn merged by :class:`CoarseLayer`."""
        self._merged: dict | None = None
        self.switch_pending = False
        self.coarse_layer = CoarseLayer(self)
        self.coarse_layer.setZValue(Z_STREET - 0.1)
        self.arrows = ArrowLayer(self)
        self.arrows.setZValue(Z_ARROW)
        self.nodes_layer = NodeLayer(self)
        self.nodes_layer.setZValue(Z_NODE)
        self.labels = LabelLayer(self)
        self.labels.setZValue(Z_ARROW)
        self._label_cache: tuple[np.ndarray, np.ndarray, np.ndarray, list[str]] | None = None
        self._arrow_info: dict[str, tuple[float, float, float]] = {}
        self._label_info: dict[str, tuple[float, float, float, float, str]] = {}
        self._node_info: dict[str, tuple[float, float]] = {}
        self._turning: dict[str, tuple[float, float]] = {}
        self.depot_item = DepotItem()
        self.depot_item.hide()
        for item in (
            self.coarse_layer,
            self.arrows,
            self.labels,
            self.nodes_layer,
            self.depot_item,
        ):
            self.addItem(item)
        document.reset.connect(self.rebuild)
        document.changed.connect(self.on_changed)
        document.depotChanged.connect(self.on_depot)
        document.selectionChanged.connect(self.on_selection)
        document.nodeSelectionChanged.connect(self._node_selection_changed)
        self._selected: set[str] = set()
        self.rebuild()

    # -- building -------------------------------------------------------------
    def rebuild(self) -> None:
        """Draw the whole network again (after new/open/import)."""
        for item in self._items.values():
            self.removeItem(item)
        self._items.clear()
        self._arrow_info.clear()
        self._label_info.clear()
        self._selected = set(self.document.selection)
        network = self.document.network
        self._turning = {
            n.id: (n.x, -n.y)  # type: ignore[operator]
            for n in network.nodes.values()
            if n.has_xy and n.turning_place
        }
        self._node_info = {
            n.id: (n.x, -n.y)  # type: ignore[operator]
            for n in network.nodes.values()
            if n.has_xy
        }
        self.setItemIndexMethod(QGraphicsScene.ItemIndexMethod.NoIndex)
        for seg in network.segments.values():
            self._show(seg, network)
        self.setItemIndexMethod(QGraphicsScene.ItemIndexMethod.BspTreeIndex)
        self._invalidate_layers()
        self.fit_scene_rect()
        self.on_depot(network.depot)

    def _show(self, seg: Segment, network: Network) -> None:
        coords = street_coords(seg, network)
        item = self._items.get(seg.id)
        if coords is None:
            if item is not None:
                self.removeItem(item)
                del self._items[seg.id]
            self._forget_marks(seg.id)
            return
        if item is None:
            item = StreetItem(seg.id)
            if self.coarse and seg.id not in self._selected:
                item.setFlag(_NO_CONTENTS, True)
            self._items[seg.id] = item
            self.addItem(item)
        item.show_segment(seg, coords, seg.id in self._selected)
        self._note_marks(seg, item)

    def _note_marks(self, seg: Segment, item: StreetItem) -> None:
        """Keep the street's arrow and label placement (O(1) per street)."""
        if seg.oneway is OneWay.NO and not seg.name:
            self._forget_marks(seg.id)
            return
        path = item.path()
        mid = path.pointAtPercent(0.5)
        ang = -math.radians(path.angleAtPercent(0.5))
        if seg.oneway is OneWay.NO:
            self._arrow_info.pop(seg.id, None)
        else:
            turn = math.pi if seg.oneway is OneWay.BACKWARD else 0.0
            self._arrow_info[seg.id] = (mid.x(), mid.y(), ang + turn)
        if seg.name:
            self._label_info[seg.id] = (mid.x(), mid.y(), ang, path.length(), seg.name)
        else:
            self._label_info.pop(seg.id, None)

    def _forget_marks(self, seg_id: str) -> None:
        self._arrow_info.pop(seg_id, None)
        self._label_info.pop(seg_id, None)

    def fit_scene_rect(self) -> None:
        """A scene rectangle around the district with room to pan past its edge."""
        box = self.district_rect()
        if box.isNull():
            box = QRectF(-500, -500, 1000, 1000)
        margin = max(2000.0, 2.0 * max(box.width(), box.height()))
        rect = box.adjusted(-margin, -margin, margin, margin)
        for layer in (self.coarse_layer, self.arrows, self.labels, self.nodes_layer):
            layer.set_rect(rect)
        self.setSceneRect(rect)

    def district_rect(self) -> QRectF:
        """The bounding rectangle of the streets and junctions (scene coordinates)."""
        _ids, xy = self.node_arrays()
        rect = QRectF()
        if len(xy):
            lo, hi = xy.min(axis=0), xy.max(axis=0)
            rect = QRectF(QPointF(lo[0], lo[1]), QPointF(hi[0], hi[1]))
        for item in self._items.values() if len(self._items) < 5000 else ():
            rect = rect.united(item.boundingRect())
        return rect

    # -- reacting to the document ---------------------------------------------
    def on_changed(self, segment_ids: set[str], node_ids: set[str]) -> None:
        network = self.document.network
        for sid in segment_ids:
            seg = network.segments.get(sid)
            if seg is None:
                item = self._items.pop(sid, None)
                if item is not None:
                    self.removeItem(item)
                self._selected.discard(sid)
                self._forget_marks(sid)
            else:
                self._show(seg, network)
        for nid in node_ids:
            node = network.nodes.get(nid)
            if node is None or not node.has_xy:
                self._node_info.pop(nid, None)
                self._turning.pop(nid, None)
            else:
                self._node_info[nid] = (node.x, -node.y)  # type: ignore[operator]
                if node.turning_place:
                    self._turning[nid] = self._node_info[nid]
                else:
                    self._turning.pop(nid, None)
        self._invalidate_layers()
        rect = QRectF()
        for sid in segment_ids:
            item = self._items.get(sid)
            if item is not None:
                rect = rect.united(item.sceneBoundingRect())
        if not rect.isNull() and not self.sceneRect().contains(rect):
            self.fit_scene_rect()
        self.on_depot(network.depot)

    def on_depot(self, node_id: str | None) -> None:
        node = self.document.network.nodes.get(node_id) if node_id else None
        if node is None or not node.has_xy:
            self.depot_item.hide()
            return
        self.depot_item.setPos(to_scene(node.x, node.y))  # type: ignore[arg-type]
        self.depot_item.show()

    def on_selection(self, segment_ids: list[str]) -> None:
        network = self.document.network
        new = set(segment_ids)
        for sid in self._selected ^ new:
            item = self._items.get(sid)
            seg = network.segments.get(sid)
            if item is not None and seg is not None:
                item.set_look(seg, sid in new)
                item.setZValue(Z_STREET + (0.5 if sid in new else 0.0))
                item.setFlag(_NO_CONTENTS, self.coarse and sid not in new)
        self._selected = new

    def set_coarse(self, coarse: bool) -> None:
        """Switch between merged drawing (zoomed out) and item drawing. Cost O(m)."""
        self.switch_pending = False
        if coarse == self.coarse:
            return
        self.coarse = coarse
        for sid, item in self._items.items():
            item.setFlag(_NO_CONTENTS, coarse and sid not in self._selected)
        self.coarse_layer.update()

    def merged_paths(self) -> dict:
        """One painter path per service requirement, all streets of that look."""
        if self._merged is None:
            merged = {svc: QPainterPath() for svc in _PENS}
            network = self.document.network
            for sid, item in self._items.items():
                seg = network.segments.get(sid)
                if seg is not None:
                    merged[seg.service].addPath(item.path())
            self._merged = {svc: p for svc, p in merged.items() if not p.isEmpty()}
        return self._merged

    def _node_selection_changed(self, _ids: list) -> None:
        self.nodes_layer.update()

    def _invalidate_layers(self) -> None:
        self._node_cache = None
        self._arrow_cache = None
        self._label_cache = None
        self._merged = None
        self.coarse_layer.update()
        self.labels.update()
        self.arrows.update()
        self.nodes_layer.update()

    # -- arrays for the layers and for hit testing ----------------------------
    def node_arrays(self) -> tuple[list[str], np.ndarray]:
        """Junction ids and their scene coordinates (rebuilt after an edit
        from the per-junction table, O(n) in C-speed NumPy)."""
        if self._node_cache is None:
            xy = np.array(list(self._node_info.values()), dtype=float).reshape(-1, 2)
            self._node_cache = (list(self._node_info), xy)
        return self._node_cache

    def turning_places(self) -> list[tuple[float, float]]:
        """Scene positions of the junctions marked as turning places."""
        return list(self._turning.values())

    def arrow_arrays(self) -> tuple[np.ndarray, np.ndarray]:
        """Mid-points (scene) and scene angles of the one-way streets' arrows."""
        if self._arrow_cache is None:
            a = np.array(list(self._arrow_info.values()), dtype=float).reshape(-1, 3)
            self._arrow_cache = (a[:, :2], a[:, 2])
        return self._arrow_cache

    def label_arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[str]]:
        """Mid-points, angles (radians, scene), lengths (m) and names of named streets."""
        if self._label_cache is None:
            rows = list(self._label_info.values())
            a = np.array([r[:4] for r in rows], dtype=float).reshape(-1, 4)
            self._label_cache = (a[:, :2], a[:, 2], a[:, 3], [r[4] for r in rows])
        return self._label_cache

    # -- lookup -----------------------------------------------------------------
    def street_item(self, segment_id: str) -> StreetItem | None:
        return self._items.get(segment_id)

    def streets_near(self, point: QPointF, tolerance: float) -> list[tuple[float, str]]:
        """Streets within ``tolerance`` scene units of ``point``, nearest first,
        as ``(distance, segment_id)``.  Cost: a BSP query plus O(v) per candidate."""
        box = QRectF(point.x() - tolerance, point.y() - tolerance, 2 * tolerance, 2 * tolerance)
        x, y = point.x(), -point.y()
        found = []
        for item in self.items(box, Qt.ItemSelectionMode.IntersectsItemBoundingRect):
            if isinstance(item, StreetItem):
                d = item.distance(x, y)
                if d <= tolerance:
                    found.append((d, item.segment_id))
        found.sort()
        return found

    def node_near(self, point: QPointF, tolerance: float) -> str | None:
        """The junction nearest to ``point`` within ``tolerance`` (scene units). Cost O(n)."""
        ids, xy = self.node_arrays()
        if not ids:
            return None
        d = np.hypot(xy[:, 0] - point.x(), xy[:, 1] - point.y())
        i = int(np.argmin(d))
        return ids[i] if d[i] <= tolerance else None

    def streets_in(self, rect: QRectF) -> list[str]:
        """Streets whose line meets the scene rectangle ``rect``.

        ``QPainterPath.intersects`` treats a path as an area, so a straight
        street lying wholly inside the box (no edge crossing) is caught by the
        second query, for items whose bounding box the box contains.
        """
        out = {
            item.segment_id
            for item in self.items(rect, Qt.ItemSelectionMode.IntersectsItemBoundingRect)
            if isinstance(item, StreetItem) and item.path().intersects(rect)
        }
        out |= {
            item.segment_id
            for item in self.items(rect, Qt.ItemSelectionMode.ContainsItemBoundingRect)
            if isinstance(item, StreetItem)
        }
        return sorted(out)

    def attached_items(self, node_id: str) -> list[StreetItem]:
        network = self.document.network
        return [
            self._items[s.id]
            for s in network.segments.values()
            if node_id in (s.start, s.end) and s.id in self._items
        ]

    def preview_move(
        self, node_id: str, x: float, y: float, items: list[StreetItem] | None = None
    ) -> None:
        """Show a junction's streets following it while it is dragged (the
        network is changed only when the drag ends).  ``items``: the junction's
        street items, if the caller keeps them (saves an O(m) search per move)."""
        network = self.document.network
        for item in self.attached_items(node_id) if items is None else items:
            seg = network.segments[item.segment_id]
            coords = street_coords(seg, network)
            if coords is None:
                continue
            if seg.start == node_id:
                coords[0] = (x, y)
            if seg.end == node_id:
                coords[-1] = (x, y)
            item.setPath(path_of(coords))
