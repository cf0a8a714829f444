"""The route card: its content, the PDF drawn with Qt, and ``roundsman card``.

The PDF is opened with pypdf (a general-purpose PDF library) and its text
extracted; the page count follows from the layout the renderer states
(page sizes ISO 216 A4 210 × 297 mm and ANSI Letter 8.5 × 11 in, margins,
header band, column headings, footer and row height).
"""

from __future__ import annotations

import math
import os
import re
import subprocess
import sys
import unicodedata
from pathlib import Path

import pytest
from pypdf import PdfReader

from app.card import render
from core.activity import GRITTING, SWEEPING
from core.card import CAUTIONS, build_card
from core.directions import Kind, StopEvent, build_directions
from core.files import read_network
from core.solve import plan_circuit

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "thistlewick.geojson"


@pytest.fixture(scope="module")
def sample():
    network = read_network(SAMPLE)
    plan = plan_circuit(network, strategy="heuristic")
    return network, plan


def _words(text: str) -> str:
    """Extracted text with spacing made uniform (pypdf separates words by tabs)."""
    return re.sub(r"\s+", " ", unicodedata.normalize("NFKC", text)).strip()


def _expected_pages(rows: int, height_mm: float) -> int:
    # Our layout: overview page, then table pages of whole rows between the header band
    # and the footer, all in millimetres as app/card/render.py states them.
    usable = height_mm - 2 * 12.0 - 17.0 - 7.0 - 8.0
    per_page = math.floor(usable / 5.4)
    assert (render.MARGIN_MM, render.BAND_MM, render.TABLE_HEAD_MM) == (12.0, 17.0, 7.0)
    assert (render.FOOTER_MM, render.ROW_MM) == (8.0, 5.4)
    return 1 + math.ceil(rows / per_page)


def test_card_content(sample) -> None:
    network, plan = sample
    d = build_directions(network, plan.steps, activity=GRITTING, start="04:30")
    card = build_card(network, d, route="North", day="Tuesday", vehicle="G2")
    assert card.header.district == "Thistlewick" and card.header.depot == plan.depot
    assert [r.number for r in card.rows] == [str(i.number) for i in d.instructions]
    # Markers carry the numbers of the rows that begin at a point on the map.
    numbered = {int(r.number) for r in card.rows if r.kind in (Kind.DEPART, Kind.TURN)}
    assert {m[0] for m in card.map.markers} == numbered
    # Material: 10 g/m² × 7.3 m = 73 kg per km of carriageway (the trade notes'
    # arithmetic); a street treated in several passes (both sides) shares its width.
    kg = 0.0
    for s in plan.steps:
        if s.service:
            passes = sum(network.segments[s.segment].required_passes())
            kg += s.length * 10 * 7.3 / passes / 1000
    assert kg < 73.0 * plan.service_m / 1000  # the sample has streets gritted both ways
    assert card.totals.material_kg == pytest.approx(kg)
    assert card.totals.material.endswith("(1 load of 7.7 t)")
    assert card.totals.total_m == pytest.approx(plan.total_m)
    assert any("employer's safe systems of work" in c for c in card.cautions)
    assert "Signature" in card.crew_fields and "Odometer start" in card.crew_fields
    # A refill stop is its own row with its time.
    stopped = build_directions(
        network, plan.steps, activity=GRITTING, stops={50: StopEvent("refill", minutes=15)}
    )
    row = next(r for r in build_card(network, stopped).rows if r.kind == Kind.STOP)
    assert row.text == "Stop: refill" and row.service.endswith("about 15 min")
    # Sweeping spreads nothing: no material line.
    assert build_card(network, build_directions(network, plan.steps)).totals.material == ""


def test_card_turn_counts_agree_with_the_plan(sample) -> None:
    network, plan = sample
    if getattr(plan, "turns", None) is None:
        pytest.skip("this engine reports no turn counts with its plans")
    d = build_directions(network, plan.steps, drive=plan.turns.drive)
    t = plan.turns
    # Two separate counts of the same circuit: the engine's and the directions'.
    assert build_card(network, d).totals.turns == (
        f"{t.lefts} left, {t.rights} right, {t.straight_on} straight on, {t.uturns} U-turns"
    )
    assert d.turn_counts.get("across traffic", 0) == t.across_traffic


@pytest.mark.parametrize(("page", "height"), [("A4", 297.0), ("Letter", 279.4)])
def test_pdf_pages_and_text_in_circuit_order(qapp, sample, tmp_path, page, height) -> None:
    network, plan = sample
    d = build_directions(network, plan.steps, activity=SWEEPING, start="07:00", drive="left")
    card = build_card(network, d, route="South")
    path = tmp_path / f"card-{page}.pdf"
    pages = render.write_card_pdf(card, str(path), page_size=page)
    reader = PdfReader(path)
    expected = _expected_pages(len(card.rows), height)
    assert len(reader.pages) == expected == pages
    # Portrait and the right paper (PDF points, 1/72 in).
    box = reader.pages[0].mediabox
    assert float(box.height) > float(box.width)
    assert float(box.height) == pytest.approx(height / 25.4 * 72, abs=1.0)
    texts = [_words(p.extract_text()) for p in reader.pages]
    for i, t in enumerate(texts):
        assert f"page {i + 1} of {expected}" in t
    assert "Thistlewick" in texts[0] and "TAKE CARE" in texts[0]
    for words in CAUTIONS[0].split()[:6]:
        assert words in texts[0]
    # The header is repeated on every table page.
    for t in texts[1:]:
        assert "Route card" in t and "Thistlewick · South" in t
    # Every instruction's words appear in circuit order across the table pages.
    table = " ".join(texts[1:])
    pos = 0
    for ins in d.instructions:
        found = table.find(_words(ins.text), pos)
        assert found >= 0, f"instruction {ins.number} ({ins.text}) missing or out of order"
        pos = found + 1


def test_card_prints_through_a_qprinter(qapp, sample, tmp_path) -> None:
    from PySide6.QtPrintSupport import QPrinter

    network, plan = sample
    card = build_card(network, build_directions(network, plan.steps[:30]))
    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    printer.setOutputFileName(str(tmp_path / "printed.pdf"))
    printer.setFullPage(True)
    render._setup(printer, "A4")
    assert render.paint_card(printer, card, "A4") == 2
    assert len(PdfReader(tmp_path / "printed.pdf").pages) == 2


def test_card_command_headless(tmp_path) -> None:
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY")}
    env.pop("QT_QPA_PLATFORM", None)  # the command must choose offscreen by itself
    out = tmp_path / "card.pdf"
    cmd = [
        sys.executable,
        "-m",
        "app.launcher",
        "card",
        str(SAMPLE),
        "--pdf",
        str(out),
        "--strategy",
        "heuristic",
        "--activity",
        "gritting",
        "--start",
        "05:30",
        "--page",
        "letter",
    ]
    run = subprocess.run(cmd, env=env, capture_output=True, text=True, timeout=120, cwd=ROOT)
    assert run.returncode == 0, run.stderr
    reader = PdfReader(out)
    assert len(reader.pages) >= 2
    assert "Gritting" in _words(reader.pages[0].extract_text())
    bad = subprocess.run(
        [*cmd[:6], str(tmp_path / "x.pdf"), "--page", "A3"],
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
        cwd=ROOT,
    )
    assert bad.returncode == 2 and "A4, Letter" in bad.stderr
