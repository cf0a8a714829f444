"""Fleet plans in the window: the Vehicles settings, the run off the window's thread, the
Routes dock, a route on the map, cancel, stale runs, and the fleet's route cards.

Outside references:

* gdb1 of Golden, DeArmon & Baker (1983), as carried by the public Julia data package
  CARPData.jl by Rafael Martinelli (github.com/rafaelmartinelli/CARPData.jl, file
  data/gdb1.dat: its last two numbers, the lower and the upper bound, are both 316, so
  316 is the proven optimum); its capacity, 5, is the ``CAPACIDAD`` line of the
  instance file in ``../shared/benchmarks/carp`` (skipped with a message when absent);
* the salt-spreading instance "BelBen" (COST Action CA22137 problem statement, Marco
  Chiarandini 2024, CC-BY-4.0, in ``../shared/benchmarks/salt-spreading``): two
  vehicles of capacity 25 based at node 1, as its ``vehicles`` list states;
* every plan shown is checked again here by ``core.fleet.check.check_plan``, the
  independent checker (it reads only the network, the settings and the steps), with
  settings built from the file alone (``settings_from_network``), not the window's;
* the PDF is read back with pypdf (a general-purpose PDF library).

The engine runs on its own thread; the tests wait for its signals (pytest-qt's
``qtbot.waitSignal``), never for a time.
"""

from __future__ import annotations

import argparse
import math
import re
import unicodedata
from dataclasses import replace
from pathlib import Path

import pytest
from pypdf import PdfReader
from PySide6.QtGui import QAction

from app.card import render
from app.fleet.choices import parse_capacity, parse_max_time, parse_vehicles
from app.fleet.controller import CANCELLED_TEXT, NO_DEPOT_TEXT, STALE_TEXT
from core.activity import GRITTING, SWEEPING
from core.edit import set_service
from core.errors import FleetError
from core.fleet import check_plan, settings_from_network
from core.fleet.cli import settings_from_args
from core.model import Service
from tests.app_support import make_window, snapshot, street_grid

BENCH = Path(__file__).resolve().parents[1].parent / "shared" / "benchmarks"
GDB1 = BENCH / "carp" / "gdb1.dat"
BELBEN = BENCH / "salt-spreading" / "belben.json"
GDB1_OPTIMUM = 316  # CARPData.jl data/gdb1.dat: lower bound = upper bound = 316
GDB1_CAPACITY = 5  # gdb1.dat: CAPACIDAD : 5
RUN_TIMEOUT_MS = 120_000
"""Generous: the suite shares two cores.  Waiting ends at the signal, not the timeout."""

needs_gdb1 = pytest.mark.skipif(
    not GDB1.is_file(), reason=f"published benchmark instance not found at {GDB1}"
)
needs_belben = pytest.mark.skipif(
    not BELBEN.is_file(), reason=f"published benchmark instance not found at {BELBEN}"
)


def _words(text: str) -> str:
    return re.sub(r"\s+", " ", unicodedata.normalize("NFKC", text)).strip()


def _plan_routes(qtbot, ctl) -> object:
    with qtbot.waitSignal(ctl.runner.finished, timeout=RUN_TIMEOUT_MS) as blocker:
        ctl.plan_action.trigger()
    return blocker.args[0]


def test_typed_settings_are_checked_with_messages_that_name_the_field() -> None:
    assert parse_vehicles("") is None and parse_vehicles(" 3 ") == 3
    assert parse_capacity("none") is None and parse_capacity("7,5 t") == 7.5
    assert parse_max_time("") is None and parse_max_time("120 min") == 120.0
    for parse, text, words in (
        (parse_vehicles, "two", "Vehicles: 'two' is not a whole number"),
        (parse_vehicles, "0", "Vehicles: 0 is out of range"),
        (parse_capacity, "lots", "Capacity: 'lots' is not a number"),
        (parse_capacity, "-3", "Capacity: '-3' must be above 0"),
        (parse_max_time, "soon", "Time limit: 'soon' is not a number"),
    ):
        with pytest.raises(FleetError, match=re.escape(words)):
            parse(text)


@needs_gdb1
def test_fleet_plan_of_gdb1_in_the_window(qtbot, tmp_path, monkeypatch) -> None:
    window = make_window(qtbot, tmp_path)
    assert window.open_path(GDB1, ask=False)
    ctl = window.fleet
    box = ctl.panel.vehicles
    # defaults from the file: its capacity; CARPLIB's vehicle count is not a hard limit
    assert box.capacity.text() == str(GDB1_CAPACITY)
    assert box.vehicles.text() == ""
    box.search_time.setValue(2.0)
    box.iterations = 3000  # repeats exactly unless a slow machine reaches the 2 s first
    before = snapshot(window.document.network)

    plan = _plan_routes(qtbot, ctl)
    assert ctl.plan is plan and ctl.dock.isVisible()
    assert snapshot(window.document.network) == before  # the run never touched the drawing
    net = window.document.network

    # the independent checker, with settings from the file alone, and the published optimum
    # (only the vehicle type's name is the window's: the checker finds types by name)
    file_only = settings_from_network(net)
    name = ctl.settings.vehicles[0].name
    reference_settings = replace(file_only, vehicles=(replace(file_only.vehicles[0], name=name),))
    assert reference_settings.vehicles[0].capacity == GDB1_CAPACITY
    report = check_plan(net, plan, reference_settings)
    assert report.feasible, report.issues
    assert plan.feasible and "every rule holds" in ctl.panel.summary_text()
    assert plan.total_m >= GDB1_OPTIMUM - 1e-9  # never below the proven optimum (316)
    assert plan.total_m <= GDB1_OPTIMUM * 1.03  # within 3 % of it after a 2 s search
    assert all(t.load <= GDB1_CAPACITY for r in plan.routes for t in r.trips)

    # the table: one row per route; its figures add up to the checker's and the plan's
    model = ctl.panel.routes_model
    assert model.rowCount() == len(plan.routes)
    cells = model.cells()
    col = {t.split(" (")[0]: k for k, t in enumerate(model.titles())}
    assert [c[col["Vehicle"]] for c in cells] == [r.vehicle for r in plan.routes]
    assert sum(int(c[col["Trips"]]) for c in cells) == plan.n_trips
    shown_total = math.fsum(float(c[col["Total"]]) for c in cells)
    checked_total = math.fsum(rt.service_m + rt.deadhead_m for rt in report.routes)
    assert math.isclose(shown_total, plan.total_m) and math.isclose(shown_total, checked_total)
    shown_load = math.fsum(float(c[col["Load"]]) for c in cells)
    assert math.isclose(shown_load, math.fsum(rt.load for rt in report.routes))
    assert all(c[col["Feasible"]] == "yes" for c in cells)
    summary = ctl.panel.summary_text()
    assert f"Total</b></td><td>&nbsp;{plan.total_m:.6g}" in summary
    assert f"{len(plan.routes)} vehicles, {plan.n_trips} trips" in summary

    # selecting a route puts exactly its steps on the document (overlay, step list)
    k = len(plan.routes) - 1
    route = plan.routes[k]
    ctl.panel.select_route(k)
    shown = window.document.plan
    assert shown is not None and shown.steps == route.steps
    assert window.planning.panel.model.rowCount() == len(route.steps)
    assert ctl.panel.trips_model.rowCount() == len(route.trips)
    assert math.isclose(shown.total_m, route.total_m)

    # route cards: one card per route in the PDF, written atomically where asked
    out = tmp_path / "cards.pdf"
    ctl.ask_pdf_path = lambda: str(out)
    assert ctl.pdf_action.isEnabled()
    ctl.pdf_action.trigger()
    texts = [_words(p.extract_text()) for p in PdfReader(out).pages]
    firsts = [t for t in texts if re.search(r"page 1 of \d+", t)]
    assert len(firsts) == len(plan.routes)
    n = len(plan.routes)
    for i, r in enumerate(plan.routes, 1):
        assert f"Route {i} of {n} · vehicle {r.vehicle}" in firsts[i - 1]
    assert not list(tmp_path.glob(".cards.pdf.*"))  # no temporary file left behind
    printed: list[list] = []
    monkeypatch.setattr(render, "print_cards", lambda w, c, p="A4": printed.append(c) or True)
    ctl.print_action.trigger()
    assert len(printed) == 1 and len(printed[0]) == n
    # File > Print route card on the shown route prints that route's own fleet card
    single: list = []
    monkeypatch.setattr(render, "print_card", lambda w, c, *a, **k: single.append(c) or True)
    assert window.print_route_card()
    assert single and single[0] == ctl.card_contents()[k]

    # cancel: a second, long run stopped midway leaves everything as it was
    box.search_time.setValue(300.0)
    box.iterations = None

    def searching(what: str, fraction: float) -> bool:
        return what.startswith("improving the routes")

    with qtbot.waitSignal(ctl.runner.progress, timeout=RUN_TIMEOUT_MS, check_params_cb=searching):
        ctl.plan_action.trigger()
    assert ctl.runner.running and ctl.cancel_action.isEnabled()
    with qtbot.waitSignal(ctl.runner.cancelled, timeout=RUN_TIMEOUT_MS):
        ctl.cancel_action.trigger()
    assert ctl.last_message == CANCELLED_TEXT
    assert ctl.plan is plan and window.document.plan is shown
    assert snapshot(window.document.network) == before
    assert window.document.undo_stack.count() == 0
    assert ctl.plan_action.isEnabled() and not ctl.cancel_action.isEnabled()

    # an edit of the network clears the fleet plan, its table and the route on the map
    sid = route.steps[0].segment
    window.document.apply_edit(set_service(window.document.network, [sid], Service.NONE))
    assert ctl.plan is None and window.document.plan is None
    assert model.rowCount() == 0 and ctl.panel.trips_model.rowCount() == 0
    assert not ctl.pdf_action.isEnabled()


def test_a_run_that_ends_after_an_edit_is_dropped(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path, street_grid(3, depot="n0_0", demand=1.0))
    ctl = window.fleet
    ctl.panel.vehicles.search_time.setValue(0.5)
    ctl.panel.vehicles.iterations = 50
    with qtbot.waitSignal(ctl.runner.finished, timeout=RUN_TIMEOUT_MS):
        ctl.plan_action.trigger()
        # edited in the same turn of the event loop, before any result can arrive
        window.document.apply_edit(set_service(window.document.network, ["g1"], Service.NONE))
    assert ctl.plan is None and window.document.plan is None
    assert ctl.last_message == STALE_TEXT
    assert ctl.panel.routes_model.rowCount() == 0


def test_cancel_without_the_published_set_leaves_the_drawing_untouched(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path, street_grid(4, depot="n0_0", demand=1.0))
    ctl = window.fleet
    ctl.panel.vehicles.capacity.setText("5")
    ctl.panel.vehicles.search_time.setValue(300.0)  # long: it must be the cancel that ends it
    before = snapshot(window.document.network)

    def searching(what: str, fraction: float) -> bool:
        return what.startswith("improving the routes")

    with qtbot.waitSignal(ctl.runner.progress, timeout=RUN_TIMEOUT_MS, check_params_cb=searching):
        ctl.plan_action.trigger()
    with qtbot.waitSignal(ctl.runner.cancelled, timeout=RUN_TIMEOUT_MS):
        ctl.cancel_action.trigger()
    assert ctl.last_message == CANCELLED_TEXT and not ctl.runner.running
    assert ctl.plan is None and window.document.plan is None
    assert snapshot(window.document.network) == before
    assert window.document.undo_stack.count() == 0


def test_bad_settings_say_what_is_wrong_and_nothing_runs(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path, street_grid(3, depot="n0_0"))
    ctl = window.fleet
    box = ctl.panel.vehicles
    box.vehicles.setText("two")
    assert not ctl.start() and not ctl.runner.running
    assert ctl.last_message.startswith("Check the Vehicles settings: Vehicles: 'two'")
    box.vehicles.setText("2")
    box.capacity.setText("-4")
    assert not ctl.start() and not ctl.runner.running
    assert "Capacity: '-4' must be above 0" in ctl.last_message
    assert ctl.plan is None and window.document.plan is None


def test_a_failed_run_names_what_is_at_fault(qtbot, tmp_path) -> None:
    net = street_grid(3, depot="n0_0", demand=1.0)
    window = make_window(qtbot, tmp_path, net)
    ctl = window.fleet
    ctl.panel.vehicles.capacity.setText("0.5")  # every street needs 1: none fits a load
    ctl.panel.vehicles.search_time.setValue(0.5)
    with qtbot.waitSignal(ctl.runner.failed, timeout=RUN_TIMEOUT_MS) as blocker:
        ctl.plan_action.trigger()
    assert isinstance(blocker.args[0], FleetError)
    assert ctl.last_message.startswith("Route planning failed: ")
    assert re.search(r"\bg\d+\b", ctl.last_message), ctl.last_message  # names a street
    assert ctl.plan is None and window.document.plan is None
    # no depot: the message says how to place one
    net.depot = None
    window.document.load(net)
    with qtbot.waitSignal(ctl.runner.failed, timeout=RUN_TIMEOUT_MS):
        ctl.plan_action.trigger()
    assert ctl.last_message == NO_DEPOT_TEXT


def test_defaults_follow_the_activity_and_typed_settings_are_kept(qtbot, tmp_path) -> None:
    first = make_window(qtbot, tmp_path, street_grid(3, depot="n0_0"))
    box = first.fleet.panel.vehicles
    plan_panel = first.planning.panel
    # no figures in the file: the activity preset's capacity (core/activity.py, sourced)
    plan_panel.activity.setCurrentIndex(plan_panel.activity.findData("sweeping"))
    assert box.capacity.text() == f"{SWEEPING.capacity:g}"
    assert box.capacity_label.text() == "Capacity (m³)"
    plan_panel.activity.setCurrentIndex(plan_panel.activity.findData("gritting"))
    assert box.capacity.text() == f"{GRITTING.capacity:g}"
    assert box.capacity_label.text() == "Capacity (t)"
    # typed values are the user's: kept across activities and windows
    box.capacity.clear()
    qtbot.keyClicks(box.capacity, "6.5")
    box.vehicles.clear()
    qtbot.keyClicks(box.vehicles, "3")
    box.day.setCurrentIndex(box.day.findData("wed"))
    box.seed.setValue(7)
    plan_panel.activity.setCurrentIndex(plan_panel.activity.findData("sweeping"))
    assert box.capacity.text() == "6.5"
    first.settings.sync()
    second = make_window(qtbot, tmp_path, street_grid(3, depot="n0_0"))
    again = second.fleet.panel.vehicles.choices()
    assert (again.vehicles, again.capacity, again.day, again.seed) == (3, 6.5, "wed", 7)
    # a file that states a capacity rules while it is open; the typed figures come back after
    stated = street_grid(3, depot="n0_0")
    stated.meta["capacity"] = 9
    second.document.load(stated)
    assert second.fleet.panel.vehicles.capacity.text() == "9"
    second.document.load(street_grid(3, depot="n0_0"))
    assert second.fleet.panel.vehicles.capacity.text() == "6.5"
    # Defaults forgets what was typed
    second.fleet.use_defaults()
    assert second.fleet.panel.vehicles.vehicles.text() == ""


@needs_belben
def test_a_salt_spreading_file_keeps_its_own_vehicles(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path)
    assert window.open_path(BELBEN, ask=False)
    ctl = window.fleet
    box = ctl.panel.vehicles
    # BelBen's vehicles list: two vehicles of capacity 25 at node 1 (the instance file)
    assert (box.vehicles.text(), box.capacity.text()) == ("2", "25")
    net = window.document.network
    ours = box.choices().settings(net, SWEEPING, ctl.defaults)
    theirs = settings_from_network(net)

    def fleet(s):
        return [(v.name, v.home, v.count, v.capacity, v.max_time_min, v.end_at) for v in s.vehicles]

    assert fleet(ours) == fleet(theirs) and ours.refill_sites == theirs.refill_sites
    box.vehicles.setText("1")
    assert len(box.choices().settings(net, SWEEPING, ctl.defaults).vehicles) == 1


def test_menus_and_shortcuts(qtbot, tmp_path) -> None:
    window = make_window(qtbot, tmp_path)
    ctl = window.fleet
    plan_entries = [a.text() for a in window.menus["plan"].actions()]
    i = plan_entries.index("Cancel planning")
    assert plan_entries[i + 1 : i + 3] == ["Plan routes for the fleet", "Cancel route planning"]
    file_entries = [a.text() for a in window.menus["file"].actions()]
    assert ctl.print_action.text() in file_entries and ctl.pdf_action.text() in file_entries
    keys = [
        a.shortcut().toString() for a in window.findChildren(QAction) if not a.shortcut().isEmpty()
    ]
    assert len(keys) == len(set(keys)), sorted(keys)  # no two actions share a shortcut
    assert not ctl.print_action.isEnabled() and not ctl.pdf_action.isEnabled()


def test_the_window_builds_the_settings_roundsman_plan_builds(qtbot, tmp_path) -> None:
    # the same choices typed in the window and given to `roundsman plan` as options
    net = street_grid(3, depot="n0_0")
    window = make_window(qtbot, tmp_path, net)
    plan_panel = window.planning.panel
    plan_panel.activity.setCurrentIndex(plan_panel.activity.findData("gritting"))
    ctl = window.fleet
    box = ctl.panel.vehicles
    box.vehicles.setText("2")
    box.capacity.setText("3")
    box.max_time.setText("90")
    box.day.setCurrentIndex(box.day.findData("fri"))
    box.search_time.setValue(4.0)
    box.seed.setValue(5)
    ours = box.choices().settings(net, plan_panel.current_activity(), ctl.defaults)
    args = argparse.Namespace(
        activity="gritting",
        vehicles="2",
        capacity=3.0,
        max_time=90.0,
        seed=5,
        day="fri",
        search_time=4.0,
        iterations=None,
    )
    assert ours == settings_from_args(net, None, args)
