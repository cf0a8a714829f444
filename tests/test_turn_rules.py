"""Turn rules in the circuit: classification, drive side, U-turn avoidance, detours.

Outside references: the azimuth-from-coordinates formula of surveying (Ghilani & Wolf,
*Elementary Surveying*, 13th ed., 2012, ch. 10) for the hand-computed bearings; networkx
(``tests/circuit_checks.py``) for the validity of every circuit; an independent brute
force over all transition systems (every pairing of arriving with leaving passes at every
node, Kotzig 1968) for the fewest U-turns; the published Kerteminde instance
(Chiarandini 2024, ``../shared/benchmarks``) with its list of U-turn nodes.
"""

from __future__ import annotations

import itertools
import json
import math
import random
from collections import defaultdict
from dataclasses import replace
from pathlib import Path

import networkx as nx
import numpy as np
import pytest

from core.cli import main
from core.errors import RoundsmanError
from core.files import read_network
from core.files.plan_json import plan_from_dict, plan_to_dict
from core.files.project import save_project
from core.model import Network, Node, OneWay, Segment, Service
from core.plan import Plan
from core.solve import plan_circuit
from core.solve.arcs import compile_network
from core.solve.turn_rules import TURN_CODES, turn_codes, turn_geometry
from core.turns import (
    DriveSide,
    Turn,
    bearing,
    classify,
    crosses_traffic,
    pass_turn,
    turn_angle,
)
from tests.circuit_checks import assert_valid_circuit

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "thistlewick.geojson"
BENCHMARKS = ROOT.parent / "shared" / "benchmarks"
KERTEMINDE = BENCHMARKS / "salt-spreading" / "kerteminde.json"
S3 = math.sqrt(3.0)


# -- classification on hand-computed geometry ------------------------------------------------------
@pytest.mark.parametrize(
    ("dx", "dy", "expected"),
    [
        # Azimuth from coordinates, tan(az) = dE / dN, placed in its quadrant by the signs
        # of dE and dN (Ghilani & Wolf 2012, ch. 10); worked by hand.
        (0.0, 1.0, 0.0),
        (1.0, 0.0, 90.0),
        (0.0, -1.0, 180.0),
        (-1.0, 0.0, 270.0),
        (1.0, 1.0, 45.0),
        (1.0, S3, 30.0),  # atan(1 / sqrt 3) = 30 degrees, first quadrant
        (S3, -1.0, 120.0),  # second quadrant (E+, N-): 180 - atan(sqrt 3 / 1) = 120
        (-S3, -1.0, 240.0),  # third quadrant (E-, N-): 180 + 60
        (-1.0, S3, 330.0),  # fourth quadrant (E-, N+): 360 - 30
    ],
)
def test_bearing_matches_hand_computed_azimuths(dx: float, dy: float, expected: float) -> None:
    assert bearing((10.0, 20.0), (10.0 + dx, 20.0 + dy)) == pytest.approx(expected, abs=1e-9)


@pytest.mark.parametrize(
    ("out_bearing", "angle", "kind"),
    [
        # Arriving heading north (0 degrees); the change of bearing is out - in, wrapped
        # into (-180, 180]; worked by hand.  Thresholds: core.turns (our own choice).
        (0.0, 0.0, Turn.STRAIGHT),
        (15.0, 15.0, Turn.STRAIGHT),
        (30.0, 30.0, Turn.BEAR_RIGHT),
        (330.0, -30.0, Turn.BEAR_LEFT),
        (90.0, 90.0, Turn.RIGHT),
        (270.0, -90.0, Turn.LEFT),
        (150.0, 150.0, Turn.SHARP_RIGHT),
        (210.0, -150.0, Turn.SHARP_LEFT),
        (175.0, 175.0, Turn.UTURN),
        (180.0, 180.0, Turn.UTURN),
    ],
)
def test_turn_angle_and_kind(out_bearing: float, angle: float, kind: Turn) -> None:
    a = turn_angle(0.0, out_bearing)
    assert a == pytest.approx(angle)
    assert classify(a) is kind
    # the same manoeuvre seen from another heading (rotate both bearings by 250 degrees)
    assert turn_angle(250.0, (out_bearing + 250.0) % 360.0) == pytest.approx(angle)


def junction(arms: dict[str, tuple[float, float]]) -> Network:
    """A node X at the origin with a street to each arm end (metres, our test layout)."""
    net = Network("junction", "EPSG:32626")
    net.add_node(Node("X", 0.0, 0.0))
    for name, (x, y) in arms.items():
        net.add_node(Node(name, x, y))
        net.add_segment(Segment(name, name, "X", geometry=((x, y), (0.0, 0.0))))
    return net


def test_crossing_traffic_is_mirrored_between_drive_sides() -> None:
    # Arrive from the south heading north; east is a right turn, west a left turn.
    net = junction({"S": (0.0, -100.0), "E": (100.0, 0.0), "W": (-100.0, 0.0)})
    seg = net.segments
    right, _ = pass_turn(net, seg["S"], True, seg["E"], False)
    left, _ = pass_turn(net, seg["S"], True, seg["W"], False)
    assert (right, left) == (Turn.RIGHT, Turn.LEFT)
    # Where traffic keeps right, a left turn crosses the oncoming lane; where it keeps
    # left, the right turn does (common practice in traffic engineering).
    assert crosses_traffic(left, DriveSide.RIGHT) and not crosses_traffic(right, DriveSide.RIGHT)
    assert crosses_traffic(right, DriveSide.LEFT) and not crosses_traffic(left, DriveSide.LEFT)
    # The mirror image (x -> -x) turns every right into a left: what crosses traffic on
    # one side of the road crosses it on the other side in the mirrored town.
    for t in TURN_CODES:
        mirrored = classify(-turn_angle(0.0, {"right": 90.0, "left": 270.0}.get(t.side, 0.0)))
        if t.side and t not in (Turn.BEAR_LEFT, Turn.BEAR_RIGHT):
            assert crosses_traffic(t, DriveSide.RIGHT) == crosses_traffic(mirrored, DriveSide.LEFT)


def test_vectorised_codes_agree_with_the_shared_classification() -> None:
    net = read_network(SAMPLE)
    p = compile_network(net, net.depot)
    g = turn_geometry(p, net)
    rng = np.random.default_rng(5)
    pairs = []
    for a in range(len(p.arc_seg)):  # every arc with each arc leaving its head
        for b in np.nonzero(p.arc_from == p.arc_to[a])[0]:
            pairs.append((a, int(b)))
    pick = rng.choice(len(pairs), size=min(400, len(pairs)), replace=False)
    codes = turn_codes(g, [pairs[k][0] for k in pick], [pairs[k][1] for k in pick])
    for k, code in zip(pick, codes.tolist(), strict=True):
        a, b = pairs[k]
        sa, sb = net.segments[p.seg_ids[p.arc_seg[a]]], net.segments[p.seg_ids[p.arc_seg[b]]]
        kind, _ = pass_turn(net, sa, bool(p.arc_dir[a] > 0), sb, bool(p.arc_dir[b] > 0))
        assert TURN_CODES[code] is kind


# -- the drive side changes the circuit as a mirror would ------------------------------------------
def grid(rows: int, cols: int, *, mirror: bool = False, service: Service = Service.BOTH) -> Network:
    net = Network("grid", "EPSG:32626")
    sign = -1.0 if mirror else 1.0
    for r in range(rows):
        for c in range(cols):
            net.add_node(Node(f"{r}.{c}", sign * c * 100.0, r * 100.0))
    k = 0
    for r in range(rows):
        for c in range(cols):
            for r2, c2 in ((r, c + 1), (r + 1, c)):
                if r2 < rows and c2 < cols:
                    a, b = net.nodes[f"{r}.{c}"], net.nodes[f"{r2}.{c2}"]
                    geom = ((a.x, a.y), (b.x, b.y))
                    net.add_segment(Segment(f"g{k}", a.id, b.id, geometry=geom, service=service))
                    k += 1
    net.depot = "0.0"
    return net


def test_left_hand_traffic_plans_the_mirror_image() -> None:
    right = plan_circuit(grid(3, 4), drive="right")
    left = plan_circuit(grid(3, 4, mirror=True), drive="left")
    assert [(s.segment, s.forward) for s in right.steps] == [
        (s.segment, s.forward) for s in left.steps
    ]
    tr, tl = right.turns, left.turns
    assert tr is not None and tl is not None
    assert (tr.lefts, tr.rights) == (tl.rights, tl.lefts)
    assert tr.across_traffic == tr.lefts and tl.across_traffic == tl.rights
    assert tr.across_traffic == tl.across_traffic


def test_turn_rules_cut_turns_across_traffic_and_uturns_at_the_same_length() -> None:
    net = grid(4, 5)
    plain = plan_circuit(net, turn_rules=False)
    ruled = plan_circuit(net)
    for plan in (plain, ruled):
        assert_valid_circuit(net, plan)
    assert ruled.total_m == pytest.approx(plain.total_m)
    assert ruled.turns is not None and plain.turns is not None
    assert not ruled.turns.uturn_nodes and ruled.turns.detours == 0
    # U-turns cross the oncoming lane too (core.turns.crosses_traffic); removing them may
    # cost a few left turns, but fewer manoeuvres across traffic in all and more straight on
    tr, tp = ruled.turns, plain.turns
    assert tr.uturns + tr.across_traffic < tp.uturns + tp.across_traffic
    assert tr.straight_on >= tp.straight_on


# -- U-turns: exact on small graphs, against a brute force over transition systems -----------------
def random_network(rng: random.Random, n: int, m: int) -> Network:
    net = Network("random")
    for i in range(n):
        net.add_node(Node(str(i)))
    order = list(range(n))
    rng.shuffle(order)
    pairs = [(order[i], order[(i + 1) % n]) for i in range(n)]
    while len(pairs) < m:
        a, b = rng.randrange(n), rng.randrange(n)
        if a != b:
            pairs.append((a, b))
    for k, (a, b) in enumerate(pairs):
        ow = rng.choice([OneWay.NO] * 4 + [OneWay.FORWARD])
        svc = rng.choice(
            [Service.EITHER, Service.EITHER, Service.NONE]
            + ([Service.BOTH] if ow is OneWay.NO else [])
        )
        length = float(rng.randint(1, 9))
        net.add_segment(Segment(f"s{k}", str(a), str(b), length=length, oneway=ow, service=svc))
    net.depot = "0"
    return net


def uturn_allowed(net: Network) -> set[str]:
    """Dead ends (one street, by networkx degree) and marked turning places."""
    g = nx.MultiGraph()
    g.add_nodes_from(net.nodes)
    g.add_edges_from((s.start, s.end) for s in net)
    return {v for v in net.nodes if g.degree(v) == 1 or net.nodes[v].turning_place}


def brute_force_fewest_uturns(net: Network, plan: Plan, limit: int = 100_000) -> int | None:
    """Fewest U-turns where none is allowed over every Eulerian circuit of the plan's
    passes: every transition system (a pairing of arriving with leaving passes at every
    node) is tried and kept when it forms one closed trail.  The return to the depot is
    parking (a virtual pass there).  ``None`` when there are more than ``limit`` systems."""
    ok = uturn_allowed(net)
    passes = [(s.start, s.end, s.segment, s.forward) for s in plan.steps]
    passes.append((plan.depot, plan.depot, None, None))
    park = len(passes) - 1
    ins: dict[str, list[int]] = defaultdict(list)
    outs: dict[str, list[int]] = defaultdict(list)
    for k, (a, b, _s, _f) in enumerate(passes):
        outs[a].append(k)
        ins[b].append(k)
    nodes = list(ins)
    if math.prod(math.factorial(len(ins[v])) for v in nodes) > limit:
        return None

    def forbidden(i: int, o: int, v: str) -> bool:
        si, so = passes[i], passes[o]
        same = si[2] is not None and si[2] == so[2] and si[3] != so[3]
        return same and not net.segments[si[2]].is_loop and v not in ok

    best: int | None = None
    for choice in itertools.product(*(itertools.permutations(outs[v]) for v in nodes)):
        succ = [0] * len(passes)
        count = 0
        for v, perm in zip(nodes, choice, strict=True):
            for i, o in zip(ins[v], perm, strict=True):
                succ[i] = o
                count += forbidden(i, o, v)
        if best is not None and count >= best:
            continue
        j, length = succ[park], 1
        while j != park:
            j, length = succ[j], length + 1
        if length == len(passes):
            best = count
    return best


def test_fewest_uturns_match_brute_force_on_random_small_graphs() -> None:
    rng = random.Random(20261202)
    checked = zero = 0
    for _ in range(160):
        n = rng.randint(3, 6)
        net = random_network(rng, n, rng.randint(n, n + 4))
        try:
            plan = plan_circuit(net, time_limit=5.0, uturn_detours=False)
            base = plan_circuit(net, time_limit=5.0, turn_rules=False)
        except RoundsmanError:
            continue  # one-way traps are reported, not planned
        if not plan.steps:
            continue
        assert_valid_circuit(net, plan)
        assert plan.total_m == pytest.approx(base.total_m)  # same passes, same length
        best = brute_force_fewest_uturns(net, plan)
        if best is None:
            continue
        checked += 1
        zero += best == 0
        assert plan.turns is not None
        # never more U-turns where none is allowed than the fewest any circuit of these
        # passes has: none whenever a U-turn-free circuit of this length exists
        assert len(plan.turns.uturn_nodes) == best, [
            (s.segment, s.start, s.end) for s in plan.steps
        ]
        assert set(plan.turns.uturn_nodes) <= set(net.nodes) - uturn_allowed(net)
    assert checked >= 100 and 0 < zero < checked


# -- detours round the block -----------------------------------------------------------------------
def lane_and_block(*, trap: bool = False, turning_place: bool = False) -> Network:
    """A 150 m lane from a dead end P to a corner Q of a 100 m square block Q-R-T-U; only
    the lane needs service, both kerbs.  With ``trap`` the block's street U-Q is one-way
    into Q and Q-R is gone, so nothing leaves Q but the lane."""
    net = Network("lane", "EPSG:32626")
    pts = {"P": (0.0, -150.0), "Q": (0.0, 0.0), "R": (0.0, 100.0), "T": (100.0, 100.0)}
    pts["U"] = (100.0, 0.0)
    for k, (x, y) in pts.items():
        net.add_node(Node(k, x, y, turning_place=turning_place and k == "Q"))

    def street(sid: str, a: str, b: str, **kw: object) -> None:
        net.add_segment(Segment(sid, a, b, geometry=(pts[a], pts[b]), **kw))  # type: ignore[arg-type]

    street("lane", "P", "Q", service=Service.BOTH)
    if not trap:
        street("qr", "Q", "R", service=Service.NONE)
    street("rt", "R", "T", service=Service.NONE)
    street("tu", "T", "U", service=Service.NONE)
    street("uq", "U", "Q", service=Service.NONE, oneway=OneWay.FORWARD if trap else OneWay.NO)
    if trap:
        street("pr", "P", "R", service=Service.NONE)
    net.depot = "P"
    return net


def test_detour_round_the_block_replaces_a_uturn() -> None:
    net = lane_and_block()
    without = plan_circuit(net, uturn_detours=False)
    assert without.total_m == pytest.approx(300.0)
    assert without.turns is not None and without.turns.uturn_nodes == ["Q"]
    assert any("Q" in n for n in without.notes)
    plan = plan_circuit(net)  # the network has coordinates: detours by default
    assert_valid_circuit(net, plan)
    t = plan.turns
    assert t is not None and t.uturns == 0 and not t.uturn_nodes
    # round the 100 m block (hand computed): 4 x 100 m of deadhead
    assert (t.detours, t.extra_m) == (1, pytest.approx(400.0))
    assert plan.total_m == pytest.approx(700.0)
    assert plan.deadhead_m - without.deadhead_m == pytest.approx(t.extra_m)
    assert not plan.exact and plan.gap > 0 and any("round the block" in n for n in plan.notes)


def test_turning_place_allows_the_uturn() -> None:
    plan = plan_circuit(lane_and_block(turning_place=True))
    assert plan.total_m == pytest.approx(300.0)
    assert plan.turns is not None and plan.turns.uturns == 1 and not plan.turns.uturn_nodes


def test_uturn_with_no_way_round_is_reported_with_its_node() -> None:
    net = lane_and_block(trap=True)
    plan = plan_circuit(net)
    assert_valid_circuit(net, plan)
    assert plan.turns is not None and plan.turns.uturn_nodes == ["Q"]
    assert plan.turns.detours == 0
    assert any("no way round" in n and "Q" in n for n in plan.notes)


# -- the sample district and Kerteminde ------------------------------------------------------------
def forced_uturns(net: Network, plan: Plan) -> int:
    """U-turns the layout forces on these passes: every arrival at a dead end, but for
    the last one at the depot (the vehicle parks)."""
    ok = uturn_allowed(net)
    arrivals = sum(1 for s in plan.steps[:-1] if s.end in ok)
    return arrivals


def _without_turning_places(net: Network) -> Network:
    """A copy in which only dead ends allow U-turns."""
    bare = net.copy()
    bare.nodes = {k: replace(n, turning_place=False) for k, n in net.nodes.items()}
    return bare


def test_sample_district_as_shipped_needs_no_way_round() -> None:
    # The sample marks the roundabouts where link roads meet the bypass as turning places:
    # every U-turn left is at one of them or at a dead end, and the length is the optimum's.
    net = read_network(SAMPLE)
    assert any(n.turning_place for n in net.nodes.values())
    base = plan_circuit(net, turn_rules=False, strategy="heuristic")
    plan = plan_circuit(net, strategy="heuristic")
    assert_valid_circuit(net, plan)
    assert plan.turns is not None and not plan.turns.uturn_nodes
    assert plan.turns.extra_m == 0 and plan.total_m == pytest.approx(base.total_m)


def test_sample_district_uturns_fall_to_its_dead_ends(capsys: pytest.CaptureFixture[str]) -> None:
    # Without its roundabouts the layout forces U-turns only at its dead ends.
    net = _without_turning_places(read_network(SAMPLE))
    base = plan_circuit(net, turn_rules=False, strategy="heuristic")
    plan = plan_circuit(net, strategy="heuristic")
    assert_valid_circuit(net, plan)
    tb, tp = base.turns, plan.turns
    assert tb is not None and tp is not None
    assert not tp.uturn_nodes
    # every U-turn left is one the dead ends force, and no more than the optimum's passes
    # force (the ways round make no U-turn of their own here)
    assert tp.uturns == forced_uturns(net, plan) == forced_uturns(net, base)
    assert plan.total_m == pytest.approx(base.total_m + tp.extra_m)
    with capsys.disabled():
        print(
            f"\nThistlewick: U-turns {tb.uturns} ({len(tb.uturn_nodes)} not allowed) -> "
            f"{tp.uturns} (all at dead ends); across traffic {tb.across_traffic} -> "
            f"{tp.across_traffic}; extra distance {tp.extra_m:.1f} m over "
            f"{base.total_m:.1f} m ({100 * tp.extra_m / base.total_m:.1f} %)"
        )


def test_kerteminde_uturns_outside_the_listed_nodes(capsys: pytest.CaptureFixture[str]) -> None:
    # Kerteminde, salt-spreading problem statement (Chiarandini 2024, COST CA22137): "U"
    # lists the nodes where a U-turn is allowed; a single circuit from node 2 is 357,887 m
    # (../shared/benchmarks/README.md).
    if not KERTEMINDE.exists():
        pytest.skip(f"benchmark file {KERTEMINDE} is absent")
    net = read_network(KERTEMINDE)
    base = plan_circuit(net, "2", turn_rules=False)
    free = plan_circuit(net, "2")  # no coordinates: no detours unless asked
    ruled = plan_circuit(net, "2", uturn_detours=True)
    for plan in (base, free, ruled):
        assert_valid_circuit(net, plan)
    assert base.total_m == pytest.approx(357_887.0, abs=0.5)
    assert free.total_m == pytest.approx(base.total_m)
    tb, tf, tr = base.turns, free.turns, ruled.turns
    assert tb is not None and tf is not None and tr is not None
    assert not tr.uturn_nodes and len(tf.uturn_nodes) <= len(tb.uturn_nodes)
    assert ruled.total_m == pytest.approx(base.total_m + tr.extra_m)
    with capsys.disabled():
        print(
            f"\nKerteminde: U-turns outside the listed nodes and dead ends {len(tb.uturn_nodes)}"
            f" (no turn rules) -> {len(tf.uturn_nodes)} (turn rules, same length) -> "
            f"{len(tr.uturn_nodes)} with {tr.detours} ways round adding {tr.extra_m:.0f} m "
            f"({100 * tr.extra_m / base.total_m:.1f} %)"
        )


# -- files and the command line --------------------------------------------------------------------
def test_plan_file_keeps_turns_and_old_files_still_load() -> None:
    plan = plan_circuit(lane_and_block())
    doc = json.loads(json.dumps(plan_to_dict(plan)))
    back = plan_from_dict(doc)
    assert back.turns == plan.turns
    del doc["turns"]
    assert plan_from_dict(doc).turns is None


def test_cli_reports_turns_and_takes_the_drive_side(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "p.json"
    fast = ["--strategy", "heuristic", "--out", str(out)]
    code = main(["plan", str(SAMPLE), "--drive", "left", *fast])
    text = capsys.readouterr().out
    assert code == 0
    assert "Turns" in text and "traffic keeps left" in text
    turns = json.loads(out.read_text())["turns"]
    assert turns["drive"] == "left" and turns["uturn_nodes"] == []
    bare = tmp_path / "bare.json"
    save_project(_without_turning_places(read_network(SAMPLE)), bare)
    code = main(["plan", str(bare), "--uturn-detours", "off", *fast])
    text = capsys.readouterr().out
    assert code == 0 and "where none is allowed" in text
