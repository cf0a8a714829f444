"""Importing in the window: read options, the import report, the district boundary.

:class:`ImportingController` extends the main window's File ▸ Import: it
recognises GeoPackage and OpenStreetMap files, asks for their options
(:class:`app.importing.options.ImportOptionsDialog`), reads the file through
the window's own ``open_path`` (which asks before dropping unsaved work and
loads the network into the document), then shows the import report
(:class:`app.importing.report.ImportReportDialog`).

Changes to the whole network — keep the largest piece, clip to a district
boundary — are single undoable edits (:func:`core.edit.replace_network`) on
the document's undo stack, so Undo gives back the network exactly.

The controller observes the document and never owns the network.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QRectF, Qt
from PySide6.QtGui import QAction, QBrush, QColor, QKeySequence, QPainterPath, QPen, QPolygonF
from PySide6.QtWidgets import (
    QApplication,
    QDialog,
    QFileDialog,
    QGraphicsPathItem,
    QMainWindow,
)
from shapely.geometry import MultiPolygon, Polygon

from app.canvas.coords import to_scene
from app.files import import_filters
from app.importing.boundary_tool import BoundaryTool
from app.importing.options import ImportOptionsDialog, file_kind, import_kind
from app.importing.report import ImportReportDialog
from app.importing.style import BOUNDARY_COLOUR, BOUNDARY_FILL_ALPHA, Z_BOUNDARY
from core import edit as ed
from core.boundary import ClipResult, boundary_polygon, clip_to_boundary, read_boundary
from core.errors import RoundsmanError
from core.report import ImportReport, import_report, keep_largest_piece

__all__ = ["ImportingController", "install_importing"]

BOUNDARY_FILTER = "District boundary (*.geojson *.json *.gpkg)"


def polygon_path(area: Polygon | MultiPolygon) -> QPainterPath:
    """A painter path (scene coordinates) of a polygon with its holes."""
    path = QPainterPath()
    path.setFillRule(Qt.FillRule.OddEvenFill)
    for poly in getattr(area, "geoms", [area]):
        for ring in (poly.exterior, *poly.interiors):
            path.addPolygon(QPolygonF([to_scene(x, y) for x, y in ring.coords]))
            path.closeSubpath()
    return path


class ImportingController(QObject):
    """File ▸ Import with options and report; the district boundary and clipping."""

    def __init__(self, window: Any) -> None:
        super().__init__(window)
        self.window = window
        self.document = window.document
        self.report_dialog = ImportReportDialog(window)
        self.report: ImportReport | None = None
        self.boundary: Polygon | MultiPolygon | None = None
        """The district boundary, in network coordinates (drawn or read from a file)."""
        self.last_clip: ClipResult | None = None
        self.last_message = ""
        self._item = QGraphicsPathItem()
        pen = QPen(QColor(BOUNDARY_COLOUR), 2.5, Qt.PenStyle.DashDotLine)
        pen.setCosmetic(True)
        self._item.setPen(pen)
        wash = QColor(BOUNDARY_COLOUR)
        wash.setAlpha(BOUNDARY_FILL_ALPHA)
        self._item.setBrush(QBrush(wash))
        self._item.setZValue(Z_BOUNDARY)
        self._item.hide()
        window.scene.addItem(self._item)
        self.tool = BoundaryTool(window.view, on_closed=self.set_boundary)
        self._make_actions()
        self.report_dialog.keepLargest.connect(self.keep_largest)
        self.report_dialog.showOthers.connect(self.show_others)
        self.report_dialog.connectionChanged.connect(self._connection_changed)
        self.document.reset.connect(self._on_reset)

    def _make_actions(self) -> None:
        w = self.window
        self.act_report = QAction("Street &report…", w)
        self.act_report.setStatusTip(
            "Segments, kilometres by road class, one-way streets, dead ends, pieces"
        )
        self.act_report.triggered.connect(lambda _c=False: self.show_report())
        self.act_keep_largest = QAction("Keep only the &largest piece", w)
        self.act_keep_largest.triggered.connect(lambda _c=False: self.keep_largest("weak"))
        self.act_clip = QAction("&Clip to boundary", w)
        self.act_clip.setStatusTip("Cut the drawing out along the district boundary")
        self.act_clip.setEnabled(False)
        self.act_clip.triggered.connect(lambda _c=False: self.clip())
        self.act_clip_file = QAction("Clip to boundary from &file…", w)
        self.act_clip_file.setStatusTip("Read the district polygon from GeoJSON or GeoPackage")
        self.act_clip_file.triggered.connect(lambda _c=False: self.clip_from_file_dialog())
        self.act_clear_boundary = QAction("Clear &boundary", w)
        self.act_clear_boundary.setEnabled(False)
        self.act_clear_boundary.triggered.connect(lambda _c=False: self.clear_boundary())

    def _say(self, text: str) -> None:
        self.last_message = text
        self.window.statusBar().showMessage(text, 12_000)

    # -- importing --------------------------------------------------------------------------
    def ask_open_path(self) -> str:
        path, _ = QFileDialog.getOpenFileName(
            self.window, "Import", self.window._last_dir(), import_filters()
        )
        return path

    def ask_options(self, path: str | Path, kind: str) -> dict[str, Any] | None:
        """The reader options for a GeoPackage or OSM file, or ``None`` when cancelled."""
        dialog = ImportOptionsDialog(path, kind, self.window)
        if dialog.exec() != QDialog.DialogCode.Accepted:
            return None
        return dialog.options()

    def import_dialog(self) -> None:
        """File ▸ Import: ask about unsaved work, choose the file, import it."""
        if not self.window.maybe_save():
            return
        path = self.ask_open_path()
        if path:
            self.import_path(path)

    def wants_options(self, path: str | Path) -> bool:
        """True for files read with options (GeoPackage, OpenStreetMap): opening or
        dropping them goes through :meth:`import_path` too."""
        return file_kind(path) is not None

    def import_path(self, path: str | Path, options: dict[str, Any] | None = None) -> bool:
        """Import ``path`` (asking for options when it is a GeoPackage or OSM file and
        none are given) and show the report.  Unsaved work is not asked about here:
        :meth:`import_dialog` asks first."""
        kind = import_kind(path)
        if kind is not None and options is None:
            options = self.ask_options(path, kind)
            if options is None:
                return False
        QApplication.setOverrideCursor(Qt.CursorShape.WaitCursor)
        try:
            ok = self.window.open_path(path, ask=False, options=options or {})
        finally:
            QApplication.restoreOverrideCursor()
        if ok and self.document.path is None:  # an import, not a project
            self.show_report(source=Path(path).name)
        return ok

    # -- the report ---------------------------------------------------------------------------
    def show_report(self, connection: str | None = None, source: str = "") -> ImportReport:
        """Count the document's network (:func:`core.report.import_report`) and show it."""
        if connection is None:
            connection = self.report_dialog.current_connection()
        self.report = import_report(self.document.network, connection=connection)
        self.report_dialog.show_report(self.report, source)
        self.report_dialog.show()
        self.report_dialog.raise_()
        return self.report

    def _connection_changed(self, connection: str) -> None:
        self.show_report(connection)

    def keep_largest(self, connection: str = "weak") -> bool:
        """Keep only the largest piece, as one undoable edit."""
        net = self.document.network
        kept = keep_largest_piece(net, connection=connection)
        if len(kept.segments) == len(net.segments):
            self._say("The drawing is one piece already.")
            return False
        dropped = len(net.segments) - len(kept.segments)
        self.document.apply_edit(ed.replace_network(net, kept, "Keep the largest piece"))
        self._say(f"Kept the largest piece; {dropped} streets removed (Undo brings them back).")
        if self.report_dialog.isVisible():
            self.show_report(connection)
        return True

    def show_others(self, connection: str = "weak") -> list[str]:
        """Pick the streets of every piece but the largest, and bring them into view."""
        report = import_report(self.document.network, connection=connection)
        ids = list(report.other_piece_segments)
        self.document.set_selection(ids)
        rect = QRectF()
        for sid in ids:
            item = self.window.scene.street_item(sid)
            if item is not None:
                rect = rect.united(item.sceneBoundingRect())
        if not rect.isNull():
            self.window.view.centerOn(rect.center())
        self._say(
            f"{len(ids)} streets in {max(len(report.pieces) - 1, 0)} other pieces are picked; "
            "join them to the rest, or Delete removes them."
        )
        return ids

    # -- the district boundary ------------------------------------------------------------------
    def set_boundary(self, boundary: Any) -> bool:
        """Use ``boundary`` (a ring of network points or a shapely polygon) as the
        district boundary and draw it."""
        try:
            area = boundary_polygon(boundary)
        except RoundsmanError as exc:
            self._say(f"Cannot use this boundary: {exc}")
            return False
        self.boundary = area
        self._item.setPath(polygon_path(area))
        self._item.show()
        self.act_clip.setEnabled(True)
        self.act_clear_boundary.setEnabled(True)
        self._say("District boundary drawn. Edit ▸ Clip to boundary cuts the drawing along it.")
        return True

    def clear_boundary(self) -> None:
        self.boundary = None
        self._item.hide()
        self._item.setPath(QPainterPath())
        self.act_clip.setEnabled(False)
        self.act_clear_boundary.setEnabled(False)

    def clip(self) -> ClipResult | None:
        """Cut the drawing along the boundary (:func:`core.boundary.clip_to_boundary`) as
        one undoable edit."""
        if self.boundary is None:
            self._say("Draw a district boundary first (District boundary tool, key O).")
            return None
        net = self.document.network
        try:
            result = clip_to_boundary(net, self.boundary)
        except RoundsmanError as exc:
            self._say(f"Cannot clip: {exc}")
            return None
        self.document.apply_edit(ed.replace_network(net, result.network, "Clip to boundary"))
        s = result.summary
        text = (
            f"Clipped: {len(s.inside)} streets inside, {len(s.outside_kept)} outside kept as "
            f"deadhead links, {len(s.cut)} cut at the boundary, {len(s.dropped)} dropped."
        )
        if s.depot_dropped:
            text += " The depot was outside and is gone: place it again."
        self._say(text)
        self.last_clip = result
        return result

    def ask_boundary_path(self) -> str:
        path, _ = QFileDialog.getOpenFileName(
            self.window, "District boundary", self.window._last_dir(), BOUNDARY_FILTER
        )
        return path

    def clip_from_file_dialog(self) -> ClipResult | None:
        path = self.ask_boundary_path()
        return self.clip_from_file(path) if path else None

    def clip_from_file(self, path: str | Path) -> ClipResult | None:
        """Read a district polygon (GeoJSON or GeoPackage) and clip along it."""
        crs = self.document.network.crs
        if crs is None:
            self._say(
                "The drawing has no coordinate system, so a boundary file cannot be placed "
                "on it; draw the boundary with the District boundary tool instead."
            )
            return None
        try:
            area = read_boundary(path, crs)
        except RoundsmanError as exc:
            self._say(f"Cannot read the boundary: {exc}")
            return None
        if not self.set_boundary(area):
            return None
        return self.clip()

    def _on_reset(self) -> None:
        self.clear_boundary()
        self.last_clip = None


def _add_tool(window: Any, tool: BoundaryTool) -> QAction:
    """Put ``tool`` among the window's canvas tools (toolbar, Tools menu, one group)."""
    act = QAction(tool.label, window)
    act.setCheckable(True)
    act.setShortcut(QKeySequence(tool.key))
    act.setToolTip(f"{tool.hint} ({tool.key})")
    act.triggered.connect(lambda _checked=False, t=tool: window.view.set_tool(t))
    actions = getattr(window, "tool_actions", {})
    first = next(iter(actions.values()), None)
    group = first.actionGroup() if first is not None else None
    if group is not None:
        group.addAction(act)
    bar = getattr(window, "tool_bar", None)
    if bar is not None:
        listed = bar.actions()
        last = list(actions.values())[-1] if actions else None
        k = listed.index(last) + 1 if last in listed else len(listed)
        if k < len(listed):
            bar.insertAction(listed[k], act)
        else:
            bar.addAction(act)
    tools_menu = getattr(window, "menus", {}).get("tools")
    if tools_menu is not None:
        tools_menu.addAction(act)
    if isinstance(getattr(window, "tools", None), dict):
        window.tools[tool.name] = tool
    if isinstance(actions, dict):
        actions[tool.name] = act
    return act


def install_importing(window: QMainWindow) -> ImportingController:
    """Add importing with options and report, the District boundary tool and the
    clipping actions to Roundsman's main window.  The window's ``import_dialog``
    hands over to :meth:`ImportingController.import_dialog`."""
    ctl = ImportingController(window)
    ctl.tool_action = _add_tool(window, ctl.tool)
    menus = getattr(window, "menus", {})
    file_menu = menus.get("file")
    export = getattr(window, "act_export_network", None)
    if file_menu is not None:
        if export is not None:
            file_menu.insertAction(export, ctl.act_report)
        else:
            file_menu.addAction(ctl.act_report)
    edit_menu = menus.get("edit")
    if edit_menu is not None:
        edit_menu.addSeparator()
        district = edit_menu.addMenu("&District")
        district.addActions(
            [
                ctl.act_clip,
                ctl.act_clip_file,
                ctl.act_clear_boundary,
                ctl.act_keep_largest,
            ]
        )
    return ctl
