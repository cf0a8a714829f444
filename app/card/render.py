"""Draw a route card (:class:`core.card.CardContent`) with QPainter.

The same drawing goes to a PDF file (:func:`write_card_pdf`, through
:class:`QPdfWriter`) and to a printer (:func:`print_card`, through a
:class:`QPrintDialog`).  Qt writes PDF text as text (embedded font subsets
with Unicode maps), so the card can be searched and its words extracted.

Layout, portrait, all sizes in millimetres (the page count follows from them,
see :func:`rows_per_page` and :func:`page_count`):

* page 1, the overview: the full header, the overview map with numbered
  markers, the totals beside the crew's fields, and the cautions;
* pages 2 to n: a header band repeated on every page, the column headings,
  then :data:`ROW_MM`-high instruction rows, :func:`rows_per_page` to a page;
* every page: a footer with "page i of n".
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QLineF, QMarginsF, QPointF, QRectF, Qt
from PySide6.QtGui import (
    QBrush,
    QColor,
    QFont,
    QFontMetricsF,
    QPagedPaintDevice,
    QPageLayout,
    QPageSize,
    QPainter,
    QPainterPath,
    QPdfWriter,
    QPen,
    QPolygonF,
)

from core import __version__
from core.card import CardContent, CardRow
from core.errors import RoundsmanError
from core.files.atomic import atomic_write_bytes

PAGE_SIZES: dict[str, QPageSize.PageSizeId] = {
    "A4": QPageSize.PageSizeId.A4,
    "Letter": QPageSize.PageSizeId.Letter,
}
"""The paper sizes the card is laid out for (portrait)."""

PAGE_MM: dict[str, tuple[float, float]] = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}
"""Width and height of each paper size in millimetres (ISO 216; ANSI 8.5 x 11 in)."""

MARGIN_MM = 12.0
BAND_MM = 17.0
"""The header band at the top of every table page."""
TABLE_HEAD_MM = 7.0
ROW_MM = 5.4
FOOTER_MM = 8.0
RESOLUTION_DPI = 600

FONT_FAMILY = "DejaVu Sans"
INK = QColor(20, 20, 20)
GREY = QColor(120, 120, 120)
LIGHT = QColor(236, 236, 236)
CAUTION_FILL = QColor(255, 236, 200)
SERVICE_INK = QColor(0, 70, 160)

__all__ = [
    "PAGE_SIZES",
    "page_count",
    "paint_card",
    "paint_cards",
    "print_card",
    "print_cards",
    "rows_per_page",
    "write_card_pdf",
    "write_cards_pdf",
]


def check_page_size(page_size: str) -> str:
    """The paper size name, case-insensitive; the error lists the choices."""
    for name in PAGE_SIZES:
        if str(page_size).strip().lower() == name.lower():
            return name
    raise RoundsmanError(f"page size {page_size!r} is not one of {', '.join(PAGE_SIZES)}")


def _rows_fit(height_mm: float) -> int:
    usable = height_mm - 2 * MARGIN_MM - BAND_MM - TABLE_HEAD_MM - FOOTER_MM
    return max(1, math.floor(usable / ROW_MM + 1e-9))


def rows_per_page(page_size: str = "A4") -> int:
    """Instruction rows on one table page: the page height less the margins,
    header band, column headings and footer, divided by :data:`ROW_MM`."""
    return _rows_fit(PAGE_MM[check_page_size(page_size)][1])


def page_count(n_rows: int, page_size: str = "A4") -> int:
    """Pages of a card with ``n_rows`` instruction rows: the overview page and
    as many table pages as the rows need (at least one)."""
    return 1 + max(1, math.ceil(n_rows / rows_per_page(page_size)))


# -- drawing helpers ---------------------------------------------------------------


@dataclass
class _Pen:
    """Millimetre geometry on a device measured in dots."""

    painter: QPainter
    dpmm: float

    def mm(self, v: float) -> float:
        return v * self.dpmm

    def rect(self, x: float, y: float, w: float, h: float) -> QRectF:
        return QRectF(self.mm(x), self.mm(y), self.mm(w), self.mm(h))

    def font(self, pt: float, bold: bool = False) -> QFont:
        f = QFont(FONT_FAMILY)
        f.setPointSizeF(pt)
        f.setBold(bold)
        # No ligatures: "ffi" stays three letters, so the PDF's text searches and
        # extracts as typed.
        f.setFeature(QFont.Tag("liga"), 0)
        self.painter.setFont(f)
        return f

    def line_pen(self, width_mm: float, colour: QColor = INK, style=Qt.PenStyle.SolidLine) -> None:
        pen = QPen(colour)
        pen.setWidthF(self.mm(width_mm))
        pen.setStyle(style)
        pen.setCapStyle(Qt.PenCapStyle.RoundCap)
        pen.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
        self.painter.setPen(pen)

    def text(
        self,
        x: float,
        y: float,
        w: float,
        h: float,
        text: str,
        pt: float = 9.0,
        bold: bool = False,
        align: Qt.AlignmentFlag = Qt.AlignmentFlag.AlignLeft,
        colour: QColor = INK,
        fit: bool = True,
        min_pt: float = 6.0,
    ) -> None:
        """One line of text in a box, shrunk down to ``min_pt`` to fit, then elided."""
        p = self.painter
        f = self.font(pt, bold)
        box = self.rect(x, y, w, h)
        if fit:
            size = pt
            fm = QFontMetricsF(f, p.device())
            while fm.horizontalAdvance(text) > box.width() and size > min_pt:
                size = max(min_pt, size - 0.5)
                f.setPointSizeF(size)
                fm = QFontMetricsF(f, p.device())
            p.setFont(f)
            text = fm.elidedText(text, Qt.TextElideMode.ElideRight, box.width())
        p.setPen(colour)
        p.drawText(box, int(align | Qt.AlignmentFlag.AlignVCenter), text)

    def wrapped(self, x: float, y: float, w: float, text: str, pt: float = 8.5) -> float:
        """Word-wrapped text from the top of a box; returns the height used (mm)."""
        p = self.painter
        self.font(pt)
        p.setPen(INK)
        box = self.rect(x, y, w, 200)
        flags = int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop) | int(
            Qt.TextFlag.TextWordWrap
        )
        used = p.boundingRect(box, flags, text)
        p.drawText(box, flags, text)
        return used.height() / self.dpmm


# -- page parts -------------------------------------------------------------------


def _header_fields(content: CardContent) -> list[tuple[str, str]]:
    h = content.header
    return [
        ("District", h.district),
        ("Route", h.route),
        ("Date / day", h.day),
        ("Depot", h.depot),
        ("Vehicle", h.vehicle),
        ("Start", h.start),
        ("Road", h.drive),
    ]


def _title(content: CardContent) -> str:
    return f"Route card · {content.header.activity}"


def _footer(pen: _Pen, page_w: float, page_h: float, page: int, pages: int) -> None:
    y = page_h - MARGIN_MM - FOOTER_MM + 2.5
    pen.line_pen(0.2, GREY)
    pen.painter.drawLine(
        QLineF(pen.mm(MARGIN_MM), pen.mm(y), pen.mm(page_w - MARGIN_MM), pen.mm(y))
    )
    w = page_w - 2 * MARGIN_MM
    pen.text(
        MARGIN_MM,
        y + 0.5,
        w * 0.7,
        5,
        f"Roundsman {__version__} · advisory plan: local rules and the employer's "
        "procedures come first",
        6.5,
        colour=GREY,
    )
    pen.text(
        MARGIN_MM + w * 0.7,
        y + 0.5,
        w * 0.3,
        5,
        f"page {page} of {pages}",
        8,
        bold=True,
        align=Qt.AlignmentFlag.AlignRight,
    )


def _full_header(pen: _Pen, content: CardContent, page_w: float) -> float:
    """Title and the header fields; returns the y (mm) below it."""
    x0, w = MARGIN_MM, page_w - 2 * MARGIN_MM
    y = MARGIN_MM
    pen.text(x0, y, w, 8, _title(content), 15, bold=True)
    y += 9
    fields = _header_fields(content)
    cols = 4
    cw = w / cols
    for k, (label, value) in enumerate(fields):
        cx = x0 + (k % cols) * cw
        cy = y + (k // cols) * 10
        pen.text(cx, cy, cw - 2, 4, label.upper(), 6.5, colour=GREY)
        pen.text(cx, cy + 3.8, cw - 2, 5.2, value or "", 10, bold=True)
        pen.line_pen(0.2, GREY)
        pen.painter.drawLine(
            QLineF(pen.mm(cx), pen.mm(cy + 9.2), pen.mm(cx + cw - 3), pen.mm(cy + 9.2))
        )
    rows = math.ceil(len(fields) / cols)
    return y + rows * 10 + 2


def _band(pen: _Pen, content: CardContent, page_w: float) -> float:
    """The header band repeated on table pages; returns the y (mm) below it."""
    x0, w = MARGIN_MM, page_w - 2 * MARGIN_MM
    y = MARGIN_MM
    h = content.header
    pen.text(x0, y, w * 0.6, 6, _title(content), 11, bold=True)
    pen.text(
        x0 + w * 0.6,
        y,
        w * 0.4,
        6,
        " · ".join(t for t in (h.district, h.route) if t),
        10,
        bold=True,
        align=Qt.AlignmentFlag.AlignRight,
    )
    parts = [
        f"{label}: {value}"
        for label, value in _header_fields(content)
        if label not in ("District", "Route") and value
    ]
    pen.text(x0, y + 6.5, w, 5, "   ".join(parts), 8)
    pen.line_pen(0.5)
    yb = y + BAND_MM - 3
    pen.painter.drawLine(QLineF(pen.mm(x0), pen.mm(yb), pen.mm(x0 + w), pen.mm(yb)))
    return y + BAND_MM


def _columns(width: float, unit: str = "km") -> list[tuple[str, float, Qt.AlignmentFlag]]:
    """Table columns: heading, width (mm), alignment. The instruction takes the rest."""
    fixed = [
        ("No.", 9.0, Qt.AlignmentFlag.AlignRight),
        ("Time", 12.0, Qt.AlignmentFlag.AlignLeft),
        ("Instruction", 0.0, Qt.AlignmentFlag.AlignLeft),
        ("Service / note", 56.0, Qt.AlignmentFlag.AlignLeft),
        ("Distance", 16.0, Qt.AlignmentFlag.AlignRight),
        (f"At {unit}".strip(), 14.0, Qt.AlignmentFlag.AlignRight),
    ]
    rest = width - sum(c[1] for c in fixed)
    return [(n, w if w else rest, a) for n, w, a in fixed]


def _row_cells(row: CardRow) -> list[str]:
    return [row.number, row.clock, row.text, row.service, row.distance, row.at]


def _table_page(
    pen: _Pen, content: CardContent, rows: list[CardRow], page_w: float, page_start: int
) -> None:
    y = _band(pen, content, page_w)
    x0, w = MARGIN_MM, page_w - 2 * MARGIN_MM
    cols = _columns(w, content.distance_unit)
    pen.painter.fillRect(pen.rect(x0, y, w, TABLE_HEAD_MM - 1), LIGHT)
    cx = x0
    for name, cw, align in cols:
        pen.text(cx + 1, y, cw - 2, TABLE_HEAD_MM - 1, name, 8, bold=True, align=align)
        cx += cw
    y += TABLE_HEAD_MM
    for k, row in enumerate(rows):
        if row.caution:
            pen.painter.fillRect(pen.rect(x0, y, w, ROW_MM), CAUTION_FILL)
        elif (page_start + k) % 2:
            pen.painter.fillRect(pen.rect(x0, y, w, ROW_MM), QColor(246, 246, 246))
        cx = x0
        for (name, cw, align), cell in zip(cols, _row_cells(row), strict=True):
            bold = name == "No." or (name == "Instruction" and row.kind in ("stop", "arrive"))
            colour = SERVICE_INK if name == "Service / note" else INK
            pen.text(cx + 1, y, cw - 2, ROW_MM, cell, 8.5, bold=bold, align=align, colour=colour)
            cx += cw
        pen.line_pen(0.1, QColor(200, 200, 200))
        pen.painter.drawLine(
            QLineF(pen.mm(x0), pen.mm(y + ROW_MM), pen.mm(x0 + w), pen.mm(y + ROW_MM))
        )
        y += ROW_MM


def _arrow(pen: _Pen, a: QPointF, b: QPointF, size: float) -> None:
    """A small filled arrowhead at the middle of a-b pointing towards b."""
    dx, dy = b.x() - a.x(), b.y() - a.y()
    d = math.hypot(dx, dy)
    if d == 0:
        return
    ux, uy = dx / d, dy / d
    tip = QPointF((a.x() + b.x()) / 2 + ux * size / 2, (a.y() + b.y()) / 2 + uy * size / 2)
    back = QPointF(tip.x() - ux * size, tip.y() - uy * size)
    left = QPointF(back.x() - uy * size * 0.5, back.y() + ux * size * 0.5)
    right = QPointF(back.x() + uy * size * 0.5, back.y() - ux * size * 0.5)
    pen.painter.drawPolygon(QPolygonF([tip, left, right]))


def _nice_length(target: float) -> float:
    """A round scale-bar length (1, 2 or 5 times a power of ten) not above target."""
    if target <= 0:
        return 0.0
    p = 10 ** math.floor(math.log10(target))
    for m in (5, 2, 1):
        if m * p <= target:
            return m * p
    return p


def _map(pen: _Pen, content: CardContent, x: float, y: float, w: float, h: float) -> None:
    p = pen.painter
    pen.line_pen(0.3)
    p.setBrush(Qt.BrushStyle.NoBrush)
    p.drawRect(pen.rect(x, y, w, h))
    m = content.map
    if m.bounds is None:
        pen.text(
            x,
            y,
            w,
            h,
            "no map: this network has no coordinates",
            9,
            colour=GREY,
            align=Qt.AlignmentFlag.AlignCenter,
        )
        return
    minx, miny, maxx, maxy = m.bounds
    pad = 5.0
    sx = (w - 2 * pad) / max(maxx - minx, 1e-9)
    sy = (h - 2 * pad - 6) / max(maxy - miny, 1e-9)
    s = min(sx, sy)  # mm per plan unit, equal in x and y
    ox = x + pad + ((w - 2 * pad) - (maxx - minx) * s) / 2
    oy = y + pad + 6 + ((h - 2 * pad - 6) - (maxy - miny) * s) / 2

    def to_page(px: float, py: float) -> QPointF:
        return QPointF(pen.mm(ox + (px - minx) * s), pen.mm(oy + (maxy - py) * s))

    p.save()
    p.setClipRect(pen.rect(x, y, w, h))
    dash = Qt.PenStyle.DashLine
    if m.background_lines:
        # The rest of the network, faint, beneath this circuit (fleet cards).
        pen.line_pen(0.15, QColor(205, 205, 205))
        for line in m.background_lines:
            path = QPainterPath()
            path.moveTo(to_page(*line[0]))
            for q in line[1:]:
                path.lineTo(to_page(*q))
            p.drawPath(path)
    for lines, width, colour, style in (
        (m.deadhead_lines, 0.3, GREY, dash),
        (m.service_lines, 0.55, SERVICE_INK, Qt.PenStyle.SolidLine),
    ):
        pen.line_pen(width, colour, style)
        for line in lines:
            path = QPainterPath()
            pts = [to_page(px, py) for px, py in line]
            path.moveTo(pts[0])
            for q in pts[1:]:
                path.lineTo(q)
            p.drawPath(path)
    # Arrowheads on the longer pieces: which way each pass runs.
    for lines, colour in ((m.service_lines, SERVICE_INK), (m.deadhead_lines, GREY)):
        pen.line_pen(0.1, colour)
        p.setBrush(QBrush(colour))
        for line in lines:
            a, b = to_page(*line[0]), to_page(*line[-1])
            if math.hypot(b.x() - a.x(), b.y() - a.y()) > pen.mm(9):
                k = len(line) // 2
                a2, b2 = (to_page(*line[k - 1]), to_page(*line[k])) if k else (a, b)
                _arrow(pen, a2, b2, pen.mm(1.6))
    # Markers, numbered as the instruction rows; numbers only where they do not overlap.
    placed: list[QRectF] = []
    f = pen.font(5.0, bold=True)
    fm = QFontMetricsF(f, p.device())
    r = pen.mm(0.55)
    for _number, mx, my in m.markers:
        c = to_page(mx, my)
        pen.line_pen(0.12, INK)
        p.setBrush(QBrush(QColor(255, 255, 255)))
        p.drawEllipse(c, r, r)
    p.setPen(INK)
    for number, mx, my in m.markers:
        c = to_page(mx, my)
        label = str(number)
        tw, th = fm.horizontalAdvance(label), fm.height()
        box = QRectF(c.x() + r, c.y() - th - r * 0.2, tw, th)
        if any(box.intersects(o) for o in placed):
            continue
        placed.append(box)
        p.setFont(f)
        p.drawText(box, int(Qt.AlignmentFlag.AlignCenter), label)
    if m.depot is not None:
        c = to_page(*m.depot)
        pen.line_pen(0.2)
        p.setBrush(QBrush(INK))
        side = pen.mm(2.6)
        p.drawRect(QRectF(c.x() - side / 2, c.y() - side / 2, side, side))
    p.restore()

    # Legend, north arrow (grid north) and scale bar along the top of the frame.
    pen.line_pen(0.55, SERVICE_INK)
    p.drawLine(QLineF(pen.mm(x + 3), pen.mm(y + 4), pen.mm(x + 11), pen.mm(y + 4)))
    pen.text(x + 12, y + 2, 22, 4, "service", 7)
    pen.line_pen(0.3, GREY, dash)
    p.drawLine(QLineF(pen.mm(x + 32), pen.mm(y + 4), pen.mm(x + 40), pen.mm(y + 4)))
    pen.text(x + 41, y + 2, 24, 4, "no service", 7)
    pen.line_pen(0.2)
    p.setBrush(QBrush(INK))
    p.drawRect(pen.rect(x + 64, y + 3, 2.4, 2.4))
    pen.text(x + 67.5, y + 2, 14, 4, "depot", 7)
    pen.line_pen(0.12)
    p.setBrush(QBrush(QColor(255, 255, 255)))
    p.drawEllipse(QPointF(pen.mm(x + 83), pen.mm(y + 4.2)), pen.mm(0.6), pen.mm(0.6))
    pen.text(x + 85, y + 2, 40, 4, "instruction point (number)", 7)
    bar_mm = _nice_length(w * 0.2 / s) * s
    bar_units = bar_mm / s
    bx = x + w - 4 - bar_mm
    pen.line_pen(0.4)
    p.drawLine(QLineF(pen.mm(bx), pen.mm(y + 4.5), pen.mm(bx + bar_mm), pen.mm(y + 4.5)))
    for tx in (bx, bx + bar_mm):
        p.drawLine(QLineF(pen.mm(tx), pen.mm(y + 3.5), pen.mm(tx), pen.mm(y + 5.5)))
    label = f"{bar_units:g} m" if bar_units < 1000 else f"{bar_units / 1000:g} km"
    pen.text(bx - 22, y + 2.3, 20, 4, label, 7, align=Qt.AlignmentFlag.AlignRight)
    pen.text(bx - 40, y + 2.3, 16, 4, "N ↑", 8, bold=True, align=Qt.AlignmentFlag.AlignRight)


def _totals_block(pen: _Pen, content: CardContent, x: float, y: float, w: float) -> float:
    t = content.totals
    pen.text(x, y, w, 5, "TOTALS", 8, bold=True)
    items = [
        ("Service", t.service),
        ("No service (deadhead)", t.deadhead),
        ("Total", t.total),
        ("Estimated time", t.time),
        ("Time target", t.target),
    ]
    if t.material:
        items.append(("Material", t.material))
    items.append(("Turns", t.turns))
    items += list(t.extra)
    yy = y + 5.5
    for label, value in items:
        pen.text(x, yy, 34, 4.6, label, 8, colour=GREY)
        pen.text(x + 34, yy, w - 34, 4.6, value, 8.5, bold=True)
        yy += 4.8
    return yy - y


def _crew_block(pen: _Pen, content: CardContent, x: float, y: float, w: float) -> float:
    """Lines to write on, each with its label above: short fields two to a row,
    driver, notes and signature across the block."""
    pen.text(x, y, w, 5, "FILLED IN BY THE CREW", 8, bold=True)
    yy = y + 5.5
    wide = ("Driver", "Notes", "Signature")
    short = [f for f in content.crew_fields if f not in wide]

    def field(label: str, fx: float, fw: float, lines: int = 1) -> None:
        pen.text(fx, yy, fw - 3, 3.6, label.upper(), 6.5, colour=GREY)
        pen.line_pen(0.25)
        for j in range(lines):
            ly = pen.mm(yy + 8.0 + j * 6.5)
            pen.painter.drawLine(QLineF(pen.mm(fx), ly, pen.mm(fx + fw - 3), ly))

    if "Driver" in content.crew_fields:
        field("Driver", x, w)
        yy += 9
    for k in range(0, len(short), 2):
        for col, label in enumerate(short[k : k + 2]):
            field(label, x + col * w / 2, w / 2)
        yy += 9
    for label in ("Notes", "Signature"):
        if label in content.crew_fields:
            lines = 2 if label == "Notes" else 1
            field(label, x, w, lines)
            yy += 9 + 6.5 * (lines - 1)
    return yy - y


def _overview_page(pen: _Pen, content: CardContent, page_w: float, page_h: float) -> None:
    y = _full_header(pen, content, page_w)
    x0, w = MARGIN_MM, page_w - 2 * MARGIN_MM
    # Measure the blocks below the map first (drawn outside the page), then give the
    # map the space left.
    below = 61.0
    pen.font(8.5)
    caution_text = "\n".join(f"• {c}" for c in content.cautions)
    flags = int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop) | int(
        Qt.TextFlag.TextWordWrap
    )
    caution_h = (
        pen.painter.boundingRect(pen.rect(0, 0, w - 4, 200), flags, caution_text).height()
        / pen.dpmm
    )
    bottom = page_h - MARGIN_MM - FOOTER_MM
    map_h = bottom - y - below - (caution_h + 9) - 3
    _map(pen, content, x0, y, w, map_h)
    y += map_h + 3
    left = w * 0.56
    _totals_block(pen, content, x0, y, left - 3)
    _crew_block(pen, content, x0 + left + 3, y, w - left - 3)
    y += below
    pen.line_pen(0.4)
    pen.painter.setBrush(Qt.BrushStyle.NoBrush)
    pen.painter.drawRect(pen.rect(x0, y, w, caution_h + 8))
    pen.text(x0 + 2, y + 0.8, w - 4, 5, "TAKE CARE", 8, bold=True)
    pen.wrapped(x0 + 2, y + 6, w - 4, caution_text, 8.5)


def paint_card(
    device: QPagedPaintDevice,
    content: CardContent,
    page_size: str = "A4",
    *,
    progress: Callable[[str, float], None] | None = None,
) -> int:
    """Draw the whole card onto a paged device (PDF writer or printer); returns pages.

    The device's page must already be set up (see :func:`write_card_pdf`).
    Layout and label placement are our own (greedy: a marker's number is
    printed where it overlaps no number already placed).  O(r + v + k²) for r
    rows, v map vertices and k markers (the overlap test scans placed labels).
    """
    return paint_cards(device, [content], page_size, progress=progress)[0]


def paint_cards(
    device: QPagedPaintDevice,
    contents: Sequence[CardContent],
    page_size: str = "A4",
    *,
    progress: Callable[[str, float], None] | None = None,
) -> list[int]:
    """Draw several cards one after the other (a fleet plan: one per vehicle route);
    each starts on a new page and has its own header and "page i of n".  Returns the
    pages of each card.  O(sum of :func:`paint_card`'s costs)."""
    name = check_page_size(page_size)
    page_w, page_h = PAGE_MM[name]
    per_page = _rows_fit(page_h)
    painter = QPainter()
    if not painter.begin(device):
        raise RoundsmanError("the route card could not be drawn: the output did not open")
    counts: list[int] = []
    try:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
        pen = _Pen(painter, device.logicalDpiX() / 25.4)
        for c_index, content in enumerate(contents):
            rows = list(content.rows)
            chunks = [rows[i : i + per_page] for i in range(0, len(rows), per_page)] or [[]]
            pages = 1 + len(chunks)
            if c_index:
                device.newPage()
            _overview_page(pen, content, page_w, page_h)
            _footer(pen, page_w, page_h, 1, pages)
            for k, chunk in enumerate(chunks):
                if progress is not None:
                    done = (c_index + (k + 1) / (len(chunks) + 1)) / len(contents)
                    progress("drawing the route card", done)
                device.newPage()
                _table_page(pen, content, chunk, page_w, k * per_page)
                _footer(pen, page_w, page_h, k + 2, pages)
            counts.append(pages)
    finally:
        painter.end()
    return counts


def _setup(device: QPagedPaintDevice, page_size: str) -> None:
    layout = QPageLayout(
        QPageSize(PAGE_SIZES[page_size]),
        QPageLayout.Orientation.Portrait,
        QMarginsF(0, 0, 0, 0),
        QPageLayout.Unit.Millimeter,
    )
    device.setPageLayout(layout)


def _pdf_bytes(title: str, page_size: str, paint: Callable[[QPdfWriter], object]) -> bytes:
    """A PDF in memory: a writer titled ``title`` on ``page_size`` paper, drawn by ``paint``."""
    data = QByteArray()
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.WriteOnly)
    writer = QPdfWriter(buf)
    writer.setResolution(RESOLUTION_DPI)
    writer.setTitle(title)
    writer.setCreator(f"Roundsman {__version__}")
    _setup(writer, page_size)
    paint(writer)
    del writer  # finishes the PDF
    buf.close()
    return bytes(data.data())


def card_pdf_bytes(content: CardContent, page_size: str = "A4") -> bytes:
    """The card as PDF bytes (needs a QGuiApplication)."""
    name = check_page_size(page_size)
    title = f"Route card: {content.header.district} {content.header.route}".strip()
    return _pdf_bytes(title, name, lambda writer: paint_card(writer, content, name))


def cards_pdf_bytes(contents: Sequence[CardContent], page_size: str = "A4") -> bytes:
    """Several cards in one PDF, each on its own pages (needs a QGuiApplication)."""
    name = check_page_size(page_size)
    if not contents:
        raise RoundsmanError("there is no route card to write")
    title = f"Route cards: {contents[0].header.district}".strip()
    return _pdf_bytes(title, name, lambda writer: paint_cards(writer, contents, name))


def write_cards_pdf(contents: Sequence[CardContent], path: str, page_size: str = "A4") -> list[int]:
    """Write several cards (one per route) as one PDF atomically; returns each card's pages."""
    name = check_page_size(page_size)
    atomic_write_bytes(path, cards_pdf_bytes(contents, name))
    return [page_count(len(c.rows), name) for c in contents]


def write_card_pdf(content: CardContent, path: str, page_size: str = "A4") -> int:
    """Write the card as a PDF file atomically; returns the number of pages."""
    name = check_page_size(page_size)
    data = card_pdf_bytes(content, name)
    atomic_write_bytes(path, data)
    return page_count(len(content.rows), name)


def print_card(parent_widget: object, content: CardContent, page_size: str = "A4") -> bool:
    """Ask for a printer with a :class:`QPrintDialog` and print the card.

    Returns False when the user cancels.  The card keeps its own margins, so
    the printer is used in full-page mode.
    """
    return print_cards(parent_widget, [content], page_size)


def print_cards(
    parent_widget: object, contents: Sequence[CardContent], page_size: str = "A4"
) -> bool:
    """Ask for a printer with a :class:`QPrintDialog` and print several cards (a fleet
    plan: one per vehicle route, each starting on a new page, as :func:`paint_cards`).

    Returns False when the user cancels.  Raises :class:`RoundsmanError` when there is
    no card to print.
    """
    from PySide6.QtPrintSupport import QPrintDialog, QPrinter

    if not contents:
        raise RoundsmanError("there is no route card to print")
    name = check_page_size(page_size)
    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    printer.setFullPage(True)
    _setup(printer, name)
    one = len(contents) == 1
    head = contents[0].header
    doc = f"Route card {head.district} {head.route}" if one else f"Route cards {head.district}"
    printer.setDocName(doc.strip())
    dialog = QPrintDialog(printer, parent_widget)  # type: ignore[arg-type]
    dialog.setWindowTitle("Print the route card" if one else "Print the route cards")
    if dialog.exec() != QPrintDialog.DialogCode.Accepted:
        return False
    chosen = printer.pageLayout().pageSize().id()
    for key, pid in PAGE_SIZES.items():
        if pid == chosen:
            name = key
    paint_cards(printer, contents, name)
    return True
