"""Planning in the window: the worker, the circuit overlay, the step list, cancel and faults.

Everything runs offscreen in a real main window (``tests/app_support.py``), driven by
simulated clicks and Qt signals (pytest-qt's ``qtbot.waitSignal``, never timed).
Outside references: networkx checks that the worker's plan is a closed Eulerian walk
that services every street (``tests/circuit_checks.py``) and tells independently which
streets cannot be reached (connected and strongly connected components); shapely's
``offset_curve`` (GEOS) checks where the passes are drawn.
"""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
import pytest
from PySide6.QtCore import QPointF, Qt
from PySide6.QtWidgets import QApplication
from shapely.geometry import LineString

from app.plan.controller import CANCELLED_TEXT, NO_DEPOT_TEXT, STALE_TEXT
from app.plan.geometry import pass_geometry, side_slots
from bench.synthetic import synthetic_network
from core.directions import build_directions
from core.edit import set_service
from core.errors import OneWayTrapError, UnreachableError
from core.model import Network, Node, OneWay, Segment, Service
from core.plan import Step
from core.solve.circuit import plan_circuit
from tests.app_support import at, make_window, place_view, snapshot
from tests.circuit_checks import assert_valid_circuit

RUN_TIMEOUT_MS = 180_000
"""Generous: the suite shares two cores.  Waiting ends at the signal, not the timeout."""


def _run(qtbot, window) -> object:
    ctl = window.planning
    with qtbot.waitSignal(ctl.runner.finished, timeout=RUN_TIMEOUT_MS) as blocker:
        ctl.plan_action.trigger()
    return blocker.args[0]


@pytest.mark.parametrize(
    ("n", "seed", "oneway_share"),
    [(300, 4, 0.0), (120, 3, 0.25)],  # two-way (exact T-join) and mixed (small exact IP)
)
def test_worker_plan_matches_the_engine_and_the_overlay_draws_it(
    qtbot, tmp_path, n: int, seed: int, oneway_share: float
) -> None:
    net = synthetic_network(n, seed=seed, oneway_share=oneway_share)
    window = make_window(qtbot, tmp_path, net)
    ctl = window.planning
    before = snapshot(window.document.network)
    plan = _run(qtbot, window)
    assert window.document.plan is plan
    assert snapshot(window.document.network) == before  # the run never touched the drawing
    # the same engine called directly on the same network (it is deterministic)
    direct = plan_circuit(net.copy(), net.depot, **ctl.panel.engine_options())
    assert plan.steps == direct.steps
    assert math.isclose(plan.total_m, direct.total_m)
    assert_valid_circuit(net, plan)  # networkx: closed Eulerian walk serving every street
    # the overlay draws every step, service and deadhead apart, in the direction driven
    ov = ctl.overlay
    assert ov.n_steps == len(plan.steps)
    assert list(ov.service) == [s.service for s in plan.steps]
    slots = side_slots(plan.steps)
    for i, step in enumerate(plan.steps):
        line = ov.geometry.line(i)
        assert line is not None
        reach = (slots[i] + 0.5) * ov.gap_m * 3.0 + 1e-6  # the mitre limit bounds the shift
        a, b = net.nodes[step.start], net.nodes[step.end]
        assert math.hypot(line[0, 0] - a.x, line[0, 1] - a.y) <= reach
        assert math.hypot(line[-1, 0] - b.x, line[-1, 1] - b.y) <= reach
    kinds = {item.zValue() for item in ov.items}
    assert len(kinds) == 3  # casing, deadhead and service layers
    assert len(ov.items) <= 3 * math.ceil(len(plan.steps) / 1500 + 2) ** 2  # batched
    # the step list shows the same steps; the summary shows the engine's figures
    model = ctl.panel.model
    assert model.rowCount() == len(plan.steps)
    assert all(
        model.data(model.index(i, 3)) == ("service" if s.service else "deadhead")
        for i, s in enumerate(plan.steps)
    )
    text = ctl.panel.summary_text()
    assert f"{plan.total_m / 1000:.2f} km" in text
    assert ("proven shortest" in text) == plan.exact


def test_offset_passes_lie_where_shapely_puts_the_parallel_curve() -> None:
    # shapely's LineString.offset_curve (GEOS): negative distance = right of the line,
    # mitre joins; the reference for our vectorised mitre offset.
    coords = ((0.0, 0.0), (80.0, 10.0), (130.0, 70.0), (120.0, 160.0))
    net = Network("Thistlewick bend", "EPSG:32626")
    net.add_node(Node("a", *coords[0]))
    net.add_node(Node("b", *coords[-1]))
    net.add_segment(Segment("s1", "a", "b", geometry=coords))
    steps = [
        Step("s1", "a", "b", True, net.segments["s1"].length, True),
        Step("s1", "b", "a", False, net.segments["s1"].length, False),
        Step("s1", "a", "b", False, net.segments["s1"].length, True),
    ]
    geo = pass_geometry(net, steps, 2.0)
    for i, (dist, ref_coords) in enumerate(
        [(1.0, coords), (1.0, coords[::-1]), (3.0, coords)]  # slots 0, 0 and 1
    ):
        ref = LineString(ref_coords).offset_curve(-dist, join_style="mitre", mitre_limit=5.0)
        ours = geo.line(i)
        assert np.allclose(np.asarray(ref.coords), ours, atol=1e-6)
    # left-hand traffic draws on the other side
    left = pass_geometry(net, steps[:1], 2.0, left_hand=True).line(0)
    ref = LineString(coords).offset_curve(1.0, join_style="mitre", mitre_limit=5.0)
    assert np.allclose(np.asarray(ref.coords), left, atol=1e-6)


def test_cancelling_leaves_the_drawing_untouched(qtbot, tmp_path) -> None:
    # A mixed district big enough that its integer program runs for its whole budget.
    net = synthetic_network(3000, seed=1, oneway_share=0.3)
    window = make_window(qtbot, tmp_path, net)
    ctl = window.planning
    ctl.panel.time_limit.setValue(600)
    before = snapshot(window.document.network)

    def solving(what: str, fraction: float) -> bool:
        return what.startswith("finding the least deadhead")

    with qtbot.waitSignal(ctl.runner.progress, timeout=RUN_TIMEOUT_MS, check_params_cb=solving):
        ctl.plan_action.trigger()
    assert ctl.runner.running
    assert ctl.cancel_action.isEnabled() and not ctl.plan_action.isEnabled()
    QApplication.processEvents()  # the window keeps handling events while the engine runs
    with qtbot.waitSignal(ctl.runner.cancelled, timeout=RUN_TIMEOUT_MS):
        ctl.cancel_action.trigger()
    assert window.document.plan is None
    assert snapshot(window.document.network) == before
    assert window.document.undo_stack.count() == 0
    assert ctl.last_message == CANCELLED_TEXT
    assert ctl.panel.status.text() == CANCELLED_TEXT
    assert ctl.plan_action.isEnabled() and not ctl.cancel_action.isEnabled()
    assert ctl.overlay.n_steps == 0


def test_a_plan_that_ends_after_an_edit_is_not_shown(qtbot, tmp_path) -> None:
    net = synthetic_network(200, seed=2)
    window = make_window(qtbot, tmp_path, net)
    ctl = window.planning
    sid = next(iter(net.segments))
    with qtbot.waitSignal(ctl.runner.finished, timeout=RUN_TIMEOUT_MS):
        ctl.plan_action.trigger()
        # edited in the same turn of the event loop, before any result can arrive
        window.document.apply_edit(set_service(window.document.network, [sid], Service.NONE))
    assert window.document.plan is None
    assert ctl.last_message == STALE_TEXT
    assert window.document.network.segments[sid].service is Service.NONE


def _fringe(trap: bool) -> Network:
    """A street of Thistlewick's fringe: an island street, or a one-way leading into a trap."""
    net = Network("Thistlewick fringe", "EPSG:32626")
    pts = {"a": (0, 0), "b": (100, 0), "c": (200, 0), "d": (300, 0), "e": (500, 0), "f": (600, 0)}
    for k, (x, y) in pts.items():
        net.add_node(Node(k, float(x), float(y)))

    def street(sid: str, a: str, b: str, name: str, oneway: OneWay = OneWay.NO) -> None:
        net.add_segment(Segment(sid, a, b, geometry=(pts[a], pts[b]), name=name, oneway=oneway))

    street("s1", "a", "b", "Quarry Lane")
    street("s2", "b", "c", "Mill Row", OneWay.FORWARD if trap else OneWay.NO)
    street("s3", "c", "d", "Ferry Close")
    if not trap:
        street("s4", "e", "f", "Island Walk")
    net.depot = "a"
    return net


def _at_fault_by_networkx(net: Network) -> set[str]:
    """Streets needing service whose ends cannot be reached from the depot and back,
    from networkx's strongly connected components of the drivable digraph."""
    g = nx.DiGraph()
    g.add_nodes_from(net.nodes)
    for s in net:
        if s.oneway in (OneWay.NO, OneWay.FORWARD):
            g.add_edge(s.start, s.end)
        if s.oneway in (OneWay.NO, OneWay.BACKWARD):
            g.add_edge(s.end, s.start)
    home = next(c for c in nx.strongly_connected_components(g) if net.depot in c)
    return {s.id for s in net.required() if not (s.start in home and s.end in home)}


@pytest.mark.parametrize(("trap", "error"), [(False, UnreachableError), (True, OneWayTrapError)])
def test_a_failed_run_highlights_the_streets_at_fault(qtbot, tmp_path, trap, error) -> None:
    net = _fringe(trap)
    window = make_window(qtbot, tmp_path, net)
    place_view(window, (300.0, 0.0), 1.0)
    ctl = window.planning
    before = snapshot(window.document.network)
    with qtbot.waitSignal(ctl.runner.failed, timeout=RUN_TIMEOUT_MS) as blocker:
        ctl.plan_action.trigger()
    exc = blocker.args[0]
    assert isinstance(exc, error)
    expected = _at_fault_by_networkx(net)
    assert set(ctl.faults.segments) == expected
    assert window.document.plan is None
    assert snapshot(window.document.network) == before
    # drawn on the canvas over exactly those streets
    assert ctl.faults.item.isVisible()
    band = ctl.faults.item.path().boundingRect()
    for sid in expected:
        (x0, y0), (x1, y1) = net.segments[sid].geometry
        assert band.adjusted(-1, -1, 1, 1).contains(QPointF((x0 + x1) / 2, -(y0 + y1) / 2))
    # listed, with a clear message naming them, in the problems dock that is now shown
    panel = ctl.faults_panel
    names = [panel.list.item(i).text() for i in range(panel.list.count())]
    for sid in expected:
        seg = net.segments[sid]
        assert f"{seg.name} ({sid})" in names
        assert seg.name in ctl.last_message
    assert ctl.last_message.startswith("Planning failed")
    assert ctl.problems_dock.isVisible()
    # clicking a listed street centres it and selects it for editing
    place_view(window, (-400.0, 300.0), 1.0)
    sid = sorted(expected)[-1]
    row = names.index(f"{net.segments[sid].name} ({sid})")
    item = panel.list.item(row)
    rect = panel.list.visualItemRect(item)
    qtbot.mouseClick(panel.list.viewport(), Qt.MouseButton.LeftButton, pos=rect.center())
    assert window.document.selection == [sid]
    (x0, y0), (x1, y1) = net.segments[sid].geometry
    centre = window.view.mapToScene(window.view.viewport().rect().center())
    assert math.hypot(centre.x() - (x0 + x1) / 2, centre.y() + (y0 + y1) / 2) < 5.0
    # an edit clears the highlight (it was drawn for the network as it was)
    window.document.apply_edit(set_service(window.document.network, [sid], Service.NONE))
    assert not ctl.faults.visible


def test_selecting_a_step_highlights_it_and_clicking_a_pass_selects_its_step(
    qtbot, tmp_path
) -> None:
    net = synthetic_network(200, seed=7)
    window = make_window(qtbot, tmp_path, net)
    ctl = window.planning
    plan = _run(qtbot, window)
    # list -> canvas
    i = len(plan.steps) // 2
    ctl.select_step(i)
    assert ctl.selected_steps() == [i]
    assert ctl.overlay.highlighted == (i,)
    glow = ctl.overlay.highlight_path().boundingRect()
    seg = net.segments[plan.steps[i].segment]
    (x0, y0), (x1, y1) = seg.geometry[0], seg.geometry[-1]
    reach = 3.0 * ctl.overlay.gap_m + 1.0  # the pass is drawn beside the centre line
    assert glow.adjusted(-reach, -reach, reach, reach).contains(
        QPointF((x0 + x1) / 2, -(y0 + y1) / 2)
    )
    # canvas -> list: click the middle of a long street driven exactly once
    once = [s.segment for s in plan.steps]
    candidates = [
        k
        for k, s in enumerate(plan.steps)
        if once.count(s.segment) == 1 and net.segments[s.segment].length > 80
    ]
    k = candidates[len(candidates) // 2]
    seg = net.segments[plan.steps[k].segment]
    (x0, y0), (x1, y1) = seg.geometry[0], seg.geometry[-1]
    mid = ((x0 + x1) / 2, (y0 + y1) / 2)
    place_view(window, mid, 2.0)
    window.tool_actions["pick"].trigger()
    QApplication.processEvents()
    qtbot.mouseClick(window.view.viewport(), Qt.MouseButton.LeftButton, pos=at(window, *mid))
    assert ctl.selected_steps() == [k]
    assert ctl.overlay.highlighted == (k,)
    # the pick tool picked the street under the same click
    assert window.document.selection == [seg.id]


def test_time_estimate_agrees_with_the_driver_directions(qtbot, tmp_path) -> None:
    net = synthetic_network(150, seed=9)
    window = make_window(qtbot, tmp_path, net)
    ctl = window.planning
    plan = _run(qtbot, window)
    from app.plan.summary import estimate_time

    activity = ctl.panel.current_activity()
    est = estimate_time(net, plan, activity)
    directions = build_directions(net, plan.steps, activity=activity)
    assert math.isclose(est.total_h * 3600, directions.total_s, rel_tol=1e-9)
    # changing a speed in the panel changes the summary's time
    before = ctl.panel.summary_text()
    ctl.panel.service_speed.setValue(activity.service_speed_kmh * 2)
    assert ctl.panel.summary_text() != before


def test_without_a_depot_the_message_says_how_to_place_one(qtbot, tmp_path) -> None:
    net = _fringe(trap=False)
    net.depot = None
    window = make_window(qtbot, tmp_path, net)
    ctl = window.planning
    with qtbot.waitSignal(ctl.runner.failed, timeout=RUN_TIMEOUT_MS):
        ctl.plan_action.trigger()
    assert ctl.last_message == NO_DEPOT_TEXT
    assert ctl.problems_dock.isVisible()
    assert window.document.plan is None


def test_planning_settings_are_kept_for_the_next_window(qtbot, tmp_path) -> None:
    first = make_window(qtbot, tmp_path, _fringe(trap=False))
    panel = first.planning.panel
    panel.activity.setCurrentIndex(panel.activity.findData("gritting"))
    panel.deadhead_speed.setValue(33)
    panel.time_limit.setValue(45)
    panel.drive.setCurrentIndex(panel.drive.findData("left"))
    panel.detours.setChecked(False)
    first.settings.sync()
    second = make_window(qtbot, tmp_path, _fringe(trap=False))
    again = second.planning.panel
    assert again.activity.currentData() == "gritting"
    assert again.deadhead_speed.value() == 33
    assert again.time_limit.value() == 45
    assert again.engine_options() == {"time_limit": 45.0, "drive": "left", "uturn_detours": False}
    assert again.left_hand


def test_the_circuit_colours_are_none_of_the_street_colours() -> None:
    # The streets use Okabe & Ito (2008); the circuit must not be mistaken for a street.
    from app.canvas import style as streets
    from app.plan import style as circuit

    street_colours = {look.colour.upper() for look in streets.LOOKS.values()}
    street_colours |= {streets.SELECTED_COLOUR.upper(), streets.DEPOT_COLOUR.upper()}
    ours = [circuit.SERVICE, circuit.DEADHEAD, circuit.HIGHLIGHT, circuit.FAULT]
    assert not {look.colour.upper() for look in ours} & street_colours
    assert circuit.SERVICE.dashes == () and circuit.DEADHEAD.dashes  # told apart without colour
