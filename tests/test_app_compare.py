"""The Depots panel (issue 5): candidates picked on the canvas or typed, the comparison
run off the window's thread with progress and cancel, table, chart, CSV and row picking.

Outside reference: the table must equal what the engine's own API,
``core.fleet.compare.compare_depots``, returns for the same network, candidates and
settings; each of its plans has passed the fleet's independent feasibility checker
(``core/fleet/check.py``: coverage, direction, capacity, time), and every street needs one
pass, so a plan's service distance is the sum of the street lengths (1,200 m here) and its
total is that plus the deadhead.
"""

from __future__ import annotations

import csv
import io

from PySide6.QtCore import Qt, QTimer

from app.compare.chart import BAR_LOOKS
from app.compare.controller import CANCELLED_TEXT
from app.compare.panel import parse_counts
from core.fleet.compare import compare_depots, row_values, rows_csv
from core.model import Network
from tests.app_support import (
    GRID_X0,
    GRID_Y0,
    at,
    make_window,
    place_view,
    snapshot,
    street_grid,
)

X0, Y0 = GRID_X0, GRID_Y0


def grid(n: int = 3) -> Network:
    """An n x n grid of 100 m streets, each needing one pass with demand 1."""
    return street_grid(n, depot="n0_0", demand=1.0)


def test_parse_counts() -> None:
    assert parse_counts("") == [None]
    assert parse_counts("1, 2;2 3") == [1, 2, 3]


def test_comparison_table_matches_the_engine(qtbot, tmp_path) -> None:
    net = grid()
    window = make_window(qtbot, tmp_path, net.copy())
    ctl = window.comparison
    panel = ctl.panel
    before = snapshot(window.document.network)

    # two candidates picked on the canvas (Pick tool, Shift adds), one typed
    place_view(window, (X0 + 100.0, Y0 + 100.0), 1.0)
    viewport = window.view.viewport()
    qtbot.mouseClick(viewport, Qt.MouseButton.LeftButton, pos=at(window, X0, Y0))
    qtbot.mouseClick(
        viewport,
        Qt.MouseButton.LeftButton,
        Qt.KeyboardModifier.ShiftModifier,
        at(window, X0 + 200.0, Y0 + 200.0),
    )
    assert window.document.node_selection == ["n0_0", "n2_2"]
    assert ctl.add_picked() == ["n0_0", "n2_2"]
    panel.id_edit.setText("n1_0 nowhere")
    assert ctl.add_typed() == ["n1_0"]
    assert "nowhere" in ctl.last_message
    assert panel.depots() == ["n0_0", "n2_2", "n1_0"]

    panel.capacity.setValue(5.0)  # 12 streets of demand 1: at least 3 trips
    panel.search_time.setValue(60.0)
    panel.iterations = 150  # runs repeat exactly (the time limit is not reached)
    ctl.workers = 2  # parallel processes, as in the window
    ticks: list[bool] = []
    ticker = QTimer()
    ticker.setInterval(5)
    ticker.timeout.connect(lambda: ticks.append(ctl.runner.running))
    ticker.start()
    with qtbot.waitSignal(ctl.runner.finished, timeout=180_000):
        assert ctl.start()
        assert ctl.dock.isVisible() and panel.progress.isVisible()
        assert not panel.run_button.isEnabled()
    assert not panel.progress.isVisible() and panel.run_button.isEnabled()
    ticker.stop()
    assert any(ticks)  # the window's event loop ran while the comparison was running
    assert snapshot(window.document.network) == before  # the drawing is untouched

    # the reference: the engine's API on the same input, in this process
    reference = compare_depots(net, panel.candidate_list(), panel.fleet_settings(net), workers=1)
    assert panel.model.cells() == [row_values(r, 1000.0) for r in reference]
    for row in ctl.rows:
        assert row.feasible and not row.error
        assert abs(row.total_m - row.deadhead_m - 1200.0) < 1e-6  # service = 12 x 100 m
        assert row.trips >= 3  # capacity 5, demand 12
    assert panel.model.rowCount() == 3 and panel.model.columnCount() == 9

    # the chart: bars in proportion to the figures, deadhead hatched, total plain
    rects = panel.chart.bar_rects()
    longest = max(r.total_m for r in ctl.rows)
    for row, (dead, total) in zip(ctl.rows, rects, strict=True):
        assert abs(total.width() / max(r[1].width() for r in rects) - row.total_m / longest) < 1e-6
        assert abs(dead.width() / total.width() - row.deadhead_m / row.total_m) < 1e-6
    assert BAR_LOOKS["deadhead"].pattern is not None and BAR_LOOKS["total"].pattern is None
    image = panel.chart.grab()
    assert not image.isNull()

    # a row picks its depot on the canvas
    panel.select_row(2)
    assert window.document.node_selection == ["n1_0"]

    # CSV: the same text as `roundsman compare --csv` (RFC 4180 rows)
    out = tmp_path / "depots.csv"
    ctl.ask_csv_path = lambda: str(out)
    assert panel.export_button.isEnabled()
    panel.export_button.click()
    text = out.read_bytes().decode("utf-8")
    assert text == rows_csv(reference, 1000.0)
    table = list(csv.reader(io.StringIO(text)))
    assert [r[0] for r in table[1:]] == ["n0_0", "n2_2", "n1_0"]


def test_cancel_stops_the_comparison(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path, grid())
    ctl = window.comparison
    panel = ctl.panel
    before = snapshot(window.document.network)
    panel.add_depots(["n0_0", "n1_1", "n2_2"])
    panel.capacity.setValue(5.0)
    panel.search_time.setValue(300.0)  # long: it must be the cancel that ends it
    ctl.workers = 2
    with qtbot.waitSignal(ctl.runner.cancelled, timeout=120_000):
        panel.run_button.click()
        assert ctl.runner.running and panel.cancel_button.isEnabled()
        panel.cancel_button.click()
    assert not ctl.runner.running
    assert ctl.last_message == CANCELLED_TEXT
    assert panel.run_button.isEnabled() and not panel.cancel_button.isEnabled()
    assert panel.model.rowCount() == 0 and not panel.export_button.isEnabled()
    assert snapshot(window.document.network) == before


def test_nothing_to_compare_says_so(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path, grid())
    ctl = window.comparison
    assert not ctl.start()
    assert "candidate" in ctl.last_message
    ctl.panel.add_depots(["n0_0"])
    ctl.panel.counts_edit.setText("two")
    assert not ctl.start()
    assert "'two'" in ctl.last_message and not ctl.runner.running
