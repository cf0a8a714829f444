"""Driving directions: turn names from geometry, merging, service changes, clock times.

The geometric cases are worked by hand from the grid-bearing formula
``bearing = atan2(dx, dy)`` (azimuth from coordinates; Ghilani & Wolf,
*Elementary Surveying*, 13th ed., 2012, ch. 10) and the turn angle as the
change of bearing; the expected kinds follow the thresholds documented in
``core/turns.py`` (straight ≤ 20°, bear ≤ 45°, turn ≤ 120°, sharp ≤ 165°).
"""

from __future__ import annotations

import math

import pytest

from core.activity import GRITTING, SWEEPING, activity_preset
from core.directions import Kind, StopEvent, build_directions, compass_point
from core.errors import ActivityError, NetworkError, RoundsmanError
from core.model import Network, Node, Segment
from core.plan import Step
from core.turns import Turn


def _net(points: dict[str, tuple[float, float]], streets: list[tuple[str, str, str, str]]):
    """Streets ``(id, start, end, name)`` drawn straight between the points."""
    net = Network("hand cases", crs="EPSG:32625")
    for k, (x, y) in points.items():
        net.add_node(Node(k, x, y))
    for sid, a, b, name in streets:
        pa, pb = points[a], points[b]
        net.add_segment(Segment(sid, a, b, geometry=(pa, pb), name=name))
    return net


def _steps(net: Network, route: list[tuple[str, bool]]) -> list[Step]:
    """Steps along ``(segment id, forward)`` with service on every pass."""
    out = []
    for sid, fwd in route:
        seg = net.segments[sid]
        a, b = (seg.start, seg.end) if fwd else (seg.end, seg.start)
        out.append(Step(sid, a, b, True, seg.length, fwd))
    return out


# Arriving at the origin O heading north (bearing 0°) from S = (0, -100), then leaving
# towards each point P below.  Hand-computed: bearing(O, P) = atan2(Px, Py) in degrees,
# turn angle = that bearing minus 0°, wrapped into (-180, 180].
HAND_CASES = [
    # (P, turn angle by hand, kind)
    ((0.0, 100.0), 0.0, Turn.STRAIGHT),  # atan2(0, 100) = 0°
    ((100 * math.sin(math.radians(10)), 100 * math.cos(math.radians(10))), 10.0, Turn.STRAIGHT),
    ((50.0, 86.60254), 30.0, Turn.BEAR_RIGHT),  # atan2(50, 86.6) = 30°
    ((-50.0, 86.60254), -30.0, Turn.BEAR_LEFT),
    ((100.0, 0.0), 90.0, Turn.RIGHT),  # atan2(100, 0) = 90°
    ((-100.0, 0.0), -90.0, Turn.LEFT),  # atan2(-100, 0) = -90°
    ((100.0, -100.0), 135.0, Turn.SHARP_RIGHT),  # atan2(100, -100) = 135°
    ((-100.0, -100.0), -135.0, Turn.SHARP_LEFT),
    ((10.0, -100.0), 174.2894, Turn.UTURN),  # atan2(10, -100) = 174.29°: comes back on itself
]


@pytest.mark.parametrize(("p", "angle", "kind"), HAND_CASES)
def test_turn_named_from_geometry(p, angle, kind) -> None:
    net = _net(
        {"S": (0.0, -100.0), "O": (0.0, 0.0), "P": p},
        [("in", "S", "O", "Long Street"), ("out", "O", "P", "Short Lane")],
    )
    d = build_directions(net, _steps(net, [("in", True), ("out", True)]))
    turn_row = d.instructions[1]
    assert turn_row.kind == Kind.TURN
    assert turn_row.turn is kind
    assert turn_row.angle == pytest.approx(angle, abs=1e-3)
    assert turn_row.street == "Short Lane"


# Which turns cross the oncoming lane: left turns where traffic keeps right, right turns
# where it keeps left (common practice; the route-shape advice of EPA SW-113, 1974, to
# minimise turns across traffic, quoted in the project's trade notes).
@pytest.mark.parametrize(
    ("p", "drive", "across"),
    [
        ((-100.0, 0.0), "right", True),  # left turn, traffic keeps right
        ((100.0, 0.0), "right", False),  # right turn, traffic keeps right
        ((-100.0, 0.0), "left", False),  # left turn, traffic keeps left
        ((100.0, 0.0), "left", True),  # right turn, traffic keeps left
        ((-50.0, 86.60254), "right", False),  # bearing left is not a turn across
    ],
)
def test_turn_across_traffic_for_each_side_of_the_road(p, drive, across) -> None:
    net = _net(
        {"S": (0.0, -100.0), "O": (0.0, 0.0), "P": p},
        [("in", "S", "O", "Long Street"), ("out", "O", "P", "Short Lane")],
    )
    d = build_directions(net, _steps(net, [("in", True), ("out", True)]), drive=drive)
    row = d.instructions[1]
    assert row.across_traffic is across
    assert d.turn_counts.get("across traffic", 0) == int(across)
    # The turn's name does not depend on the side of the road.
    other = "left" if drive == "right" else "right"
    d2 = build_directions(net, _steps(net, [("in", True), ("out", True)]), drive=other)
    assert d2.instructions[1].turn is row.turn


def test_reversal_on_a_dead_end_is_a_uturn_with_a_note() -> None:
    net = _net(
        {"A": (0.0, 0.0), "B": (0.0, 100.0), "C": (0.0, 160.0)},
        [("s1", "A", "B", "Mill Road"), ("s2", "B", "C", "")],
    )
    steps = _steps(net, [("s1", True), ("s2", True), ("s2", False), ("s1", False)])
    d = build_directions(net, steps)
    kinds = [(r.kind, r.turn) for r in d.instructions]
    assert kinds == [
        (Kind.DEPART, None),
        (Kind.TURN, Turn.STRAIGHT),
        (Kind.TURN, Turn.UTURN),
        (Kind.TURN, Turn.STRAIGHT),
        (Kind.ARRIVE, None),
    ]
    uturn = d.instructions[2]
    assert uturn.note == "dead end"  # node C has one street
    assert uturn.street == "unnamed street s2"
    assert d.turn_counts["U-turn"] == 1
    assert d.instructions[0].text.endswith("heading north")


def test_same_named_street_is_one_instruction_and_distances_add_up() -> None:
    # A -> B -> C along "High Street" (a slight bend at B), then right into "Kiln Lane".
    pts = {"A": (0.0, 0.0), "B": (0.0, 300.0), "C": (40.0, 600.0), "D": (440.0, 600.0)}
    net = _net(
        pts,
        [
            ("h1", "A", "B", "High Street"),
            ("h2", "B", "C", "High Street"),
            ("k1", "C", "D", "Kiln Lane"),
        ],
    )
    steps = _steps(net, [("h1", True), ("h2", True), ("k1", True)])
    d = build_directions(net, steps)
    rows = d.instructions
    assert [r.kind for r in rows] == [Kind.DEPART, Kind.TURN, Kind.ARRIVE]
    assert rows[0].segments == ("h1", "h2")
    h2 = math.hypot(40.0, 300.0)
    assert rows[0].length_m == pytest.approx(300.0 + h2)
    assert rows[1].start_m == pytest.approx(300.0 + h2)
    assert rows[1].length_m == pytest.approx(400.0)
    assert rows[2].start_m == pytest.approx(700.0 + h2)
    # Bearing of C->D is 90°, of B->C atan2(40, 300) = 7.595°: a right turn of 82.4°.
    assert rows[1].turn is Turn.RIGHT
    assert rows[1].angle == pytest.approx(90.0 - math.degrees(math.atan2(40.0, 300.0)))
    assert compass_point(90.0) == "east" and compass_point(350.0) == "north"


def test_turning_to_stay_on_a_street_is_its_own_row_at_a_junction_not_at_a_bend() -> None:
    # "Church Lane" turns a right angle at B.  Bearing A->B is 0° and B->C is 90°:
    # a right turn (atan2(100, 0) = 90°).
    pts = {"A": (0.0, 0.0), "B": (0.0, 100.0), "C": (100.0, 100.0), "X": (0.0, 200.0)}
    streets = [("c1", "A", "B", "Church Lane"), ("c2", "B", "C", "Church Lane")]
    bend = _net(pts, streets)
    steps = _steps(bend, [("c1", True), ("c2", True)])
    rows = build_directions(bend, steps).instructions
    # Only a bend (two street ends at B, no other way): one row.
    assert [r.kind for r in rows] == [Kind.DEPART, Kind.ARRIVE]
    # At a junction (a third street carries on ahead from B) the turn is its own row.
    junction = _net(pts, [*streets, ("x", "B", "X", "Vicarage Road")])
    rows = build_directions(junction, _steps(junction, [("c1", True), ("c2", True)])).instructions
    assert [r.kind for r in rows] == [Kind.DEPART, Kind.TURN, Kind.ARRIVE]
    assert rows[1].text == "Turn right along Church Lane"


def test_without_coordinates_only_streets_and_reversals_are_told() -> None:
    net = Network("lengths only")
    for k in "abc":
        net.add_node(Node(k))
    net.add_segment(Segment("s1", "a", "b", 120.0, name="Mill Road"))
    net.add_segment(Segment("s2", "b", "c", 80.0))
    steps = [
        Step("s1", "a", "b", True, 120.0),
        Step("s2", "b", "c", True, 80.0),
        Step("s2", "c", "b", False, 80.0, False),
        Step("s1", "b", "a", False, 120.0, False),
    ]
    rows = build_directions(net, steps).instructions
    assert [r.text for r in rows] == [
        "Leave the depot along Mill Road",
        "Continue into unnamed street s2",
        "Turn round, back along unnamed street s2",
        "Continue into Mill Road",
        "Arrive back at the depot",
    ]
    assert rows[0].position is None


def _three_street_net() -> Network:
    pts = {"A": (0.0, 0.0), "B": (0.0, 1000.0), "C": (1000.0, 1000.0), "D": (1000.0, 2000.0)}
    return _net(
        pts,
        [("a", "A", "B", "First Street"), ("b", "B", "C", "Second Street"), ("c", "C", "D", "")],
    )


def test_service_changes_and_clock_times() -> None:
    net = _three_street_net()
    s = _steps(net, [("a", True), ("b", True), ("c", True)])
    steps = [s[0], Step("b", "B", "C", False, 1000.0, True), s[2]]  # middle pass is deadhead
    d = build_directions(net, steps, activity=SWEEPING, start="06:00")
    rows = d.instructions
    assert [e.text for e in rows[0].events] == ["brushes down"]
    assert [e.text for e in rows[1].events] == ["brushes up"]
    assert [e.text for e in rows[2].events] == ["brushes down"]
    assert [e.text for e in rows[3].events] == ["brushes up"]  # arrival switches off
    # Hand arithmetic: 1 km at the sweeping preset's 8 km/h is 7.5 min; 1 km deadhead
    # at 25 km/h is 2.4 min.
    assert SWEEPING.service_speed_kmh == 8.0 and SWEEPING.deadhead_speed_kmh == 25.0
    # Rows start at 0, 7.5, 9.9 and 17.4 min; clock times to the nearest minute.
    assert [r.clock for r in rows] == ["06:00", "06:08", "06:10", "06:17"]
    assert d.total_s == pytest.approx((7.5 + 2.4 + 7.5) * 60)
    assert d.service_m == pytest.approx(2000.0) and d.deadhead_m == pytest.approx(1000.0)
    # Without a departure time the rows show the time since leaving (same arithmetic).
    elapsed = build_directions(net, steps, activity=SWEEPING).instructions
    assert [r.clock for r in elapsed] == ["+0:00", "+0:08", "+0:10", "+0:17"]


def test_street_speed_overrides_deadhead_and_caps_service() -> None:
    net = _three_street_net()
    net.replace_segment(
        Segment("b", "B", "C", geometry=((0.0, 1000.0), (1000.0, 1000.0)), attrs={"speed_kmh": 60})
    )
    net.replace_segment(
        Segment("a", "A", "B", geometry=((0.0, 0.0), (0.0, 1000.0)), attrs={"speed_kmh": 5})
    )
    steps = [
        Step("a", "A", "B", True, 1000.0, True),
        Step("b", "B", "C", False, 1000.0, True),
    ]
    d = build_directions(net, steps, activity=GRITTING)
    # 1 km at min(20, 5) = 5 km/h is 12 min; 1 km at the street's 60 km/h is 1 min.
    assert d.instructions[0].duration_s == pytest.approx(12 * 60)
    assert d.instructions[1].duration_s == pytest.approx(60)


def test_stop_events_are_rows_and_take_time() -> None:
    net = _three_street_net()
    steps = _steps(net, [("a", True), ("b", True), ("c", True)])
    d = build_directions(
        net,
        steps,
        activity=GRITTING,
        start="22:50",
        stops={2: StopEvent("refill at the salt store", minutes=15)},
    )
    kinds = [r.kind for r in d.instructions]
    assert kinds == [Kind.DEPART, Kind.TURN, Kind.STOP, Kind.TURN, Kind.ARRIVE]
    stop = d.instructions[2]
    assert stop.text == "Stop: refill at the salt store"
    assert [e.text for e in stop.events] == ["spreader off"]
    assert [e.text for e in d.instructions[3].events] == ["spreader on"]
    # 3 km at 20 km/h = 9 min, plus 15 min stopped; past midnight the clock rolls over.
    assert d.total_s == pytest.approx((9 + 15) * 60)
    assert d.finish_clock == "23:14"
    # 3 km at 8 km/h = 22.5 min: 23:55 + 22.5 min = 00:17:30, to the nearest minute 00:18.
    assert build_directions(net, steps, start="23:55").finish_clock == "00:18"


def test_material_follows_rate_and_width() -> None:
    net = _three_street_net()
    steps = _steps(net, [("a", True), ("b", True), ("c", True)])
    d = build_directions(net, steps, activity=GRITTING)
    # The trade notes' arithmetic: 10 g/m² × 7.3 m = 73 kg per km of carriageway.
    assert d.material_kg == pytest.approx(3 * 73.0)
    heavy = GRITTING.with_changes(spread_rate_g_m2=20.0)
    assert heavy.demand_per_km == pytest.approx(0.146)
    assert build_directions(net, steps, activity=heavy).material_kg == pytest.approx(3 * 146.0)
    assert build_directions(net, steps, activity=SWEEPING).material_kg == 0.0


def test_options_are_checked_and_errors_name_the_choices() -> None:
    net = _three_street_net()
    steps = _steps(net, [("a", True), ("b", True)])
    with pytest.raises(ActivityError, match="'sweeping', 'gritting'"):
        activity_preset("ploughing")
    with pytest.raises(ActivityError, match="the settings are"):
        SWEEPING.with_changes(brush_count=2)
    with pytest.raises(RoundsmanError, match="'right', 'left'"):
        build_directions(net, steps, drive="centre")
    with pytest.raises(RoundsmanError, match="HH:MM"):
        build_directions(net, steps, start="6 o'clock")
    broken = [steps[0], Step("c", "C", "D", True, 1000.0, True)]
    with pytest.raises(NetworkError, match="starts at node C"):
        build_directions(net, broken)
    with pytest.raises(RoundsmanError, match="stop position"):
        build_directions(net, steps, stops={7: "tip run"})
