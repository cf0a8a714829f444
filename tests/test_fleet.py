"""Fleet plans: published CARP instances, the independent checker, the split, files, CLI.

Published values (gdb1 = 316, gdb2 = 339, val1A = 173) are the proven optima (lower
bound = upper bound) of the instances of Golden, DeArmon & Baker (1983) and Benavent et
al. (1992) as carried by the public Julia data package CARPData.jl by Rafael Martinelli
(github.com/rafaelmartinelli/CARPData.jl, files data/gdb1.dat, data/gdb2.dat,
data/gdb23.dat and data/val1A.dat: the last two numbers of each file are the lower and
the upper bound).
"""

from __future__ import annotations

import itertools
import json
import math
from dataclasses import replace
from pathlib import Path

import pytest

from core.cli import main
from core.errors import FleetError, InputError
from core.files import read_network
from core.files.plan_json import (
    fleet_plan_from_dict,
    fleet_plan_to_dict,
    is_fleet_doc,
    plan_from_dict,
    write_plan,
)
from core.fleet import FleetSettings, VehicleType, check_plan, plan_fleet, settings_from_network
from core.fleet.graph import StateGraph, build_tasks
from core.fleet.split import split_tour
from core.model import Network, Node, OneWay, Segment, Service
from core.plan import Step

BENCH = Path(__file__).resolve().parents[1].parent / "shared" / "benchmarks"
needs_bench = pytest.mark.skipif(
    not BENCH.is_dir(), reason=f"published benchmark instances not found at {BENCH}"
)

# (lower bound, upper bound), the last two numbers of CARPData.jl's data/gdb1.dat,
# data/gdb2.dat, data/gdb23.dat and data/val1A.dat (rafaelmartinelli/CARPData.jl); equal,
# so proven optima.
BOUNDS = {"gdb1": (316, 316), "gdb2": (339, 339), "gdb23": (233, 233), "val1A": (173, 173)}


def _carp(name: str) -> Network:
    return read_network(BENCH / "carp" / f"{name}.dat")


@pytest.fixture(scope="module")
def gdb1_plan():
    if not BENCH.is_dir():
        pytest.skip(f"published benchmark instances not found at {BENCH}")
    net = _carp("gdb1")
    settings = settings_from_network(net, time_limit=1.5, seed=0)
    return net, settings, plan_fleet(net, settings)


@needs_bench
@pytest.mark.parametrize("name", ["gdb1", "gdb2", "val1A"])
def test_published_carp_feasible_and_close(name: str) -> None:
    net = _carp(name)
    settings = settings_from_network(net, time_limit=1.5, seed=0)
    plan = plan_fleet(net, settings)
    report = check_plan(net, plan, settings)
    assert report.feasible, report.issues
    assert plan.feasible
    # never below the published lower bound; within 2 % of the best known (here the
    # proven optimum) after a short search
    lb, ub = BOUNDS[name]
    assert plan.total_m >= lb - 1e-9
    assert plan.total_m <= ub * 1.02
    cap = net.meta["capacity"]
    assert all(t.load <= cap for r in plan.routes for t in r.trips)


@needs_bench
def test_fleet_bound_is_the_route_inspection_optimum(gdb1_plan) -> None:
    # With one depot the fleet's bound is the shortest single circuit's; on gdb1 (every
    # street two-way and needing service) that is the route inspection optimum, computed
    # here independently with networkx (edge costs plus a minimum-weight perfect matching
    # of the odd-degree junctions over shortest paths, Edmonds & Johnson 1973), and it
    # cannot exceed the published optimum 316 (BOUNDS).
    import networkx as nx

    net, _, plan = gdb1_plan
    g = nx.MultiGraph()
    for seg in net.segments.values():
        g.add_edge(seg.start, seg.end, weight=seg.length)
    odd = [n for n, d in g.degree() if d % 2]
    dist = dict(nx.all_pairs_dijkstra_path_length(g, weight="weight"))
    k = nx.Graph()
    k.add_weighted_edges_from((a, b, dist[a][b]) for a, b in itertools.combinations(odd, 2))
    matching = nx.min_weight_matching(k)
    cpp = sum(seg.length for seg in net.segments.values()) + sum(dist[a][b] for a, b in matching)
    assert plan.lower_bound_m == pytest.approx(cpp)
    assert plan.lower_bound_m <= BOUNDS["gdb1"][0] <= plan.total_m + 1e-9
    assert plan.gap == pytest.approx((plan.total_m - cpp) / cpp)


@needs_bench
def test_mixed_fleet_searched_at_each_vehicles_speeds() -> None:
    # On gdb1's streets (Golden, DeArmon & Baker 1983), a slow and a fast vehicle share
    # the work under a time limit of 0.9 times what the fast one needs alone: only a plan
    # that gives the fast one most of the streets fits.  The search must time each route
    # at its own vehicle's speeds (when it timed both at the first type's, the slow
    # route took 16.2 min against a limit of 7.4); the independent checker judges.
    net = _carp("gdb1")
    fast = VehicleType(
        name="fast", home=net.depot, count=1, service_speed_kmh=2.0, deadhead_speed_kmh=4.0
    )
    slow = VehicleType(
        name="slow", home=net.depot, count=1, service_speed_kmh=0.5, deadhead_speed_kmh=1.0
    )
    alone = plan_fleet(net, FleetSettings(vehicles=(fast,), iterations=300, time_limit=20))
    limit = 0.9 * alone.routes[0].minutes
    settings = FleetSettings(
        vehicles=(replace(slow, max_time_min=limit), replace(fast, max_time_min=limit)),
        iterations=2000,
        time_limit=30,
    )
    plan = plan_fleet(net, settings)
    report = check_plan(net, plan, settings)
    assert report.feasible, report.issues
    by_type = {r.vehicle_type: r for r in plan.routes}
    assert by_type["fast"].service_m > 2 * by_type["slow"].service_m


@needs_bench
def test_mixed_fleet_loaded_by_each_vehicles_demand_model() -> None:
    # gdb1's streets (Golden, DeArmon & Baker 1983) with the demand taken from each
    # vehicle: a wide spreader loads 1 per metre, a narrow one 0.5.  With capacities of
    # 0.3 and 0.4 of the whole work in the wide one's units, only a plan that loads the
    # narrow one by its own model covers everything; the independent checker recomputes
    # every load from the streets and the vehicle.
    base = _carp("gdb1")
    net = base.copy()
    for sid, seg in base.segments.items():
        net.segments[sid] = replace(seg, demand=0.0)
    work = sum(seg.length for seg in net.segments.values())
    wide = VehicleType(name="wide", home=net.depot, count=1, demand_per_km=1000.0)
    narrow = VehicleType(name="narrow", home=net.depot, count=1, demand_per_km=500.0)
    settings = FleetSettings(
        vehicles=(replace(wide, capacity=0.3 * work), replace(narrow, capacity=0.4 * work)),
        iterations=2000,
        time_limit=30,
    )
    plan = plan_fleet(net, settings)
    report = check_plan(net, plan, settings)
    assert report.feasible, report.issues
    for route, totals in zip(plan.routes, report.routes, strict=True):
        for trip, checked in zip(route.trips, totals.trips, strict=True):
            assert trip.load == pytest.approx(checked.load)
    by_type = {r.vehicle_type: r for r in plan.routes}
    assert by_type["narrow"].service_m > 0.6 * work


@needs_bench
def test_a_street_no_vehicle_can_carry_is_named() -> None:
    # gdb1 (Golden, DeArmon & Baker 1983): its heaviest street needs more than half its
    # own load; a fleet with one vehicle large enough can still plan it.
    net = _carp("gdb1")
    heaviest = max(net.required(), key=lambda s: s.demand)
    small = VehicleType(name="small", home=net.depot, capacity=heaviest.demand / 2)
    with pytest.raises(FleetError, match=f"street {heaviest.label} needs more per pass"):
        plan_fleet(net, FleetSettings(vehicles=(small,), iterations=50))
    big = replace(small, name="big", capacity=float(net.meta["capacity"]))
    plan = plan_fleet(net, FleetSettings(vehicles=(small, big), iterations=300))
    assert plan.feasible, plan.issues


@needs_bench
def test_tight_loads_reach_the_optimum_with_fewer_routes() -> None:
    # gdb23 (Golden, DeArmon & Baker 1983) packs a demand of 266 into vehicles of 27, so
    # at least 10 routes; its proven optimum 233 (BOUNDS) uses 10, and the search settles
    # on 11 routes at 235 unless a second search is held to one route fewer.  A fixed
    # iteration count makes the run repeat exactly; the target is the benchmark's 0.5 %.
    net = _carp("gdb23")
    settings = settings_from_network(net, seed=0, iterations=6000, time_limit=120)
    plan = plan_fleet(net, settings)
    assert plan.feasible, plan.issues
    lb, ub = BOUNDS["gdb23"]
    assert lb - 1e-9 <= plan.total_m <= ub * 1.005
    assert len(plan.routes) == 10


@needs_bench
def test_salt_spreading_example_feasible() -> None:
    # Belben example (after Belenguer & Benavent 2003), two vehicles, refill at node 1.
    net = read_network(BENCH / "salt-spreading" / "belben.json")
    settings = settings_from_network(net, time_limit=1.0)
    plan = plan_fleet(net, settings)
    assert check_plan(net, plan, settings).feasible, plan.issues
    assert len(plan.routes) <= 2
    need = sum(s.demand for s in net.required())
    assert math.isclose(sum(r.load for r in plan.routes), need)


# -- the checker catches broken plans -----------------------------------------------------------
def test_checker_catches_missing_street(gdb1_plan) -> None:
    net, settings, plan = gdb1_plan
    broken = _copy(plan)
    trip = broken.routes[0].trips[0]
    k = next(i for i, s in enumerate(trip.steps) if s.service)
    trip.steps[k] = replace(trip.steps[k], service=False)
    issues = check_plan(net, broken, settings).issues
    assert any("missing service" in i and trip.steps[k].segment in i for i in issues)


def test_checker_catches_over_capacity(gdb1_plan) -> None:
    net, settings, plan = gdb1_plan
    broken = _copy(plan)
    first, second = broken.routes[0], broken.routes[1]
    first.trips[0].steps += second.trips[0].steps  # both trips start and end at the depot
    broken.routes.remove(second)
    issues = check_plan(net, broken, settings).issues
    assert any("over the capacity" in i for i in issues)


def test_checker_catches_jump_and_wrong_end(gdb1_plan) -> None:
    net, settings, plan = gdb1_plan
    broken = _copy(plan)
    del broken.routes[0].trips[0].steps[0]
    issues = check_plan(net, broken, settings).issues
    assert any("jumps" in i for i in issues)


def _oneway_network(turning: bool) -> Network:
    """A ladder: a one-way street a→b, two-way streets around, node b no turning place."""
    net = Network("ladder")
    for n in "abcdef":
        net.add_node(Node(n, turning_place=turning and n == "d"))
    net.add_segment(Segment("ab", "a", "b", 100, oneway=OneWay.FORWARD, service=Service.ALONG))
    net.add_segment(Segment("bc", "b", "c", 100))
    net.add_segment(Segment("cd", "c", "d", 100))
    net.add_segment(Segment("de", "d", "e", 100, service=Service.NONE))
    net.add_segment(Segment("ea", "e", "a", 100, service=Service.NONE))
    net.add_segment(Segment("bf", "b", "f", 100, service=Service.NONE))
    net.add_segment(Segment("fe", "f", "e", 100, service=Service.NONE))
    net.depot = "a"
    return net


def test_checker_catches_wrong_direction_and_forbidden_uturn() -> None:
    net = _oneway_network(turning=True)
    settings = FleetSettings(uturns="forbid", time_limit=0.5)
    plan = plan_fleet(net, settings)
    assert check_plan(net, plan, settings).feasible, plan.issues
    # wrong direction: drive the one-way street backwards
    broken = _copy(plan)
    trip = broken.routes[0].trips[0]
    k = next(i for i, s in enumerate(trip.steps) if s.segment == "ab")
    s = trip.steps[k]
    trip.steps[k] = replace(s, start=s.end, end=s.start, forward=not s.forward)
    assert any("backwards" in i for i in check_plan(net, broken, settings).issues)
    # a U-turn at c (not a turning place, not a dead end): c→b then b→c inserted
    broken = _copy(plan)
    trip = broken.routes[0].trips[0]
    k = next(i for i, s in enumerate(trip.steps) if s.end == "c")
    detour = [Step("bc", "c", "b", False, 100, False), Step("bc", "b", "c", False, 100, True)]
    trip.steps[k + 1 : k + 1] = detour
    issues = check_plan(net, broken, settings).issues
    assert any("U-turn at node" in i for i in issues)


def test_planner_keeps_turn_rules() -> None:
    # With U-turns forbidden, the plan never turns back except at the turning place d
    # or between trips; the checker (independent) agrees.
    net = _oneway_network(turning=True)
    for rule in ("forbid", "allow"):
        settings = FleetSettings(uturns=rule, time_limit=0.5)
        plan = plan_fleet(net, settings)
        assert check_plan(net, plan, settings).feasible, (rule, plan.issues)


# -- the split against brute force ------------------------------------------------------------
def _line_network(n: int) -> Network:
    net = Network("line")
    for k in range(n + 1):
        net.add_node(Node(str(k)))
    for k in range(n):
        net.add_segment(Segment(f"s{k}", str(k), str(k + 1), 10.0 + 3 * k, demand=1.0 + k % 3))
    net.add_segment(Segment("back", str(n), "0", 7.0, service=Service.NONE))
    net.depot = "0"
    return net


@pytest.mark.parametrize("cap", [3.0, 4.0, 6.0])
def test_split_matches_brute_force(cap: float) -> None:
    net = _line_network(7)
    settings = FleetSettings(vehicles=(VehicleType(capacity=cap),))
    graph = StateGraph(net, settings.vehicles[0], False)
    tasks = build_tasks(net, graph, settings)
    tour = [(t.index, t.arcs[0]) for t in tasks]
    start, end = graph.free("0"), graph.terminal("0")

    def end_of(arc: int) -> tuple[float, float]:
        return graph.dist(arc, end), 0.0

    trips = split_tour(tour, tasks, graph, start, end_of, cap, None)

    def cost(trip) -> float:
        here, c = start, 0.0
        for _, arc in trip:
            c += graph.dist(here, arc)
            here = arc
        return c + graph.dist(here, end)

    best = math.inf
    n = len(tour)
    for cuts in itertools.product((False, True), repeat=n - 1):  # all 2^(n-1) cuttings
        pieces, cur = [], [tour[0]]
        for k, cut in enumerate(cuts, 1):
            if cut:
                pieces.append(cur)
                cur = []
            cur.append(tour[k])
        pieces.append(cur)
        if all(sum(tasks[t].demand for t, _ in p) <= cap for p in pieces):
            best = min(best, sum(cost(p) for p in pieces))
    assert math.isclose(sum(cost(t) for t in trips), best)
    assert [v for t in trips for v in t] == tour


# -- determinism, priorities, days ---------------------------------------------------------------
def _grid(n: int = 4) -> Network:
    net = Network("grid")
    for i in range(n):
        for j in range(n):
            net.add_node(Node(f"n{i}_{j}", float(100 * i), float(100 * j)))
    k = 0
    for i in range(n):
        for j in range(n):
            for di, dj in ((1, 0), (0, 1)):
                if i + di < n and j + dj < n:
                    k += 1
                    attrs = {"priority": 1 if i == 0 or j == 0 else 2}
                    attrs["days"] = ["mon"] if k % 2 else ["tue", "thu"]
                    net.add_segment(
                        Segment(
                            f"g{k}", f"n{i}_{j}", f"n{i + di}_{j + dj}", 100.0, demand=1.0,
                            attrs=attrs,
                        )
                    )  # fmt: skip
    net.depot = "n0_0"
    return net


def test_same_seed_same_plan() -> None:
    net = _grid()
    settings = FleetSettings(
        vehicles=(VehicleType(capacity=6.0),), seed=3, iterations=300, time_limit=30
    )
    a, b = plan_fleet(net, settings), plan_fleet(net, settings)
    assert [r.steps for r in a.routes] == [r.steps for r in b.routes]
    assert a.feasible


def test_cli_iterations_repeat_a_run(tmp_path: Path, capsys) -> None:
    from core.files.project import save_project

    src = tmp_path / "grid.json"
    save_project(_grid(), src)
    outs = [tmp_path / "a.json", tmp_path / "b.json"]
    for out in outs:
        args = ["plan", str(src), "--capacity", "6", "--seed", "3", "--iterations", "200"]
        assert main([*args, "--search-time", "30", "--out", str(out)]) == 0
    capsys.readouterr()
    a, b = (json.loads(p.read_text()) for p in outs)
    assert a["fleet"] and a["routes"] == b["routes"]


def test_priorities_first_and_reported() -> None:
    net = _grid()
    settings = FleetSettings(vehicles=(VehicleType(capacity=8.0),), time_limit=1.0)
    plan = plan_fleet(net, settings)
    assert check_plan(net, plan, settings).feasible, plan.issues  # checks the class order
    assert set(plan.class_done_min) == {1, 2}
    assert plan.class_done_min[1] <= plan.class_done_min[2]


def test_service_day_covers_only_that_day() -> None:
    net = _grid()
    settings = FleetSettings(vehicles=(VehicleType(capacity=8.0),), day="mon", time_limit=0.5)
    plan = plan_fleet(net, settings)
    assert check_plan(net, plan, settings).feasible, plan.issues
    served = {s.segment for r in plan.routes for s in r.steps if s.service}
    assert served == {s.id for s in net if "mon" in s.attrs["days"]}


# -- plan file and command line --------------------------------------------------------------
def test_fleet_plan_json_round_trip(gdb1_plan, tmp_path: Path) -> None:
    _, _, plan = gdb1_plan
    path = tmp_path / "p.plan.json"
    write_plan(plan, path)
    doc = json.loads(path.read_text(encoding="utf-8"))
    assert is_fleet_doc(doc)
    back = fleet_plan_from_dict(doc)
    assert [r.vehicle for r in back.routes] == [r.vehicle for r in plan.routes]
    assert [r.steps for r in back.routes] == [r.steps for r in plan.routes]
    assert [t.load for r in back.routes for t in r.trips] == pytest.approx(
        [t.load for r in plan.routes for t in r.trips]
    )
    assert fleet_plan_to_dict(back)["totals"] == doc["totals"]
    with pytest.raises(InputError, match="fleet plan"):
        plan_from_dict(doc)  # the one-circuit reader refuses rather than drop routes


@needs_bench
def test_cli_plan_and_compare(tmp_path: Path, capsys) -> None:
    src = str(BENCH / "carp" / "gdb1.dat")
    out = tmp_path / "g.plan.json"
    assert main(["plan", src, "--search-time", "0.5", "--out", str(out)]) == 0
    assert is_fleet_doc(json.loads(out.read_text(encoding="utf-8")))
    csv_path = tmp_path / "c.csv"
    code = main(["compare", src, "--depots", "1,5", "--search-time", "0.5", "--csv", str(csv_path)])
    assert code == 0
    text = capsys.readouterr().out
    assert "depot" in text
    lines = csv_path.read_text(encoding="utf-8").splitlines()
    assert lines[0].startswith("depot,") and [x.split(",")[0] for x in lines[1:]] == ["1", "5"]
    # one circuit on request
    assert main(["plan", src, "--one-circuit", "--out", str(tmp_path / "one.json")]) == 0
    assert not is_fleet_doc(json.loads((tmp_path / "one.json").read_text(encoding="utf-8")))


def test_cli_compare_refuses_unknown_depot(tmp_path: Path, capsys) -> None:
    net = tmp_path / "n.json"
    from core.files import write_network

    write_network(_grid(3), net, fmt="project")
    assert main(["compare", str(net), "--depots", "n0_0,nowhere"]) == 2
    assert "nowhere" in capsys.readouterr().err


def _copy(plan):
    return fleet_plan_from_dict(json.loads(json.dumps(fleet_plan_to_dict(plan))))


# -- the node transformations: objective = real deadhead (+ n·M for pairs) ---------------------
@needs_bench
@pytest.mark.parametrize("mode", ["groups", "pairs"])
def test_node_transformation_objective(mode: str) -> None:
    # Pearn, Assad & Golden (1987): with pairs kept together the node-routing cost is the
    # arc-routing deadhead plus the constant n·M; the group form has no constant.
    from core.fleet.hgs import NodeModel
    from core.fleet.planner import _Context, realise

    net = _carp("gdb1")
    settings = settings_from_network(net, time_limit=0.5)
    ctx = _Context(net, settings)
    model = NodeModel(
        ctx.graph, ctx.tasks, settings, ctx.homes, ctx.end_states, [], False, mode=mode
    )
    sol = model.solve(0.5, 0, lambda: False, None, 2000).best
    routes, split = model.decode(sol)
    assert split == 0
    plan = realise(ctx, routes, mode)
    assert check_plan(net, plan, settings).feasible
    assert sol.distance() == round(plan.deadhead_m) + len(ctx.tasks) * model.M


def test_compare_api_progress_and_cancel() -> None:
    from core.errors import Cancelled
    from core.fleet.compare import Candidate, compare_depots

    net = _grid(3)
    settings = FleetSettings(vehicles=(VehicleType(capacity=6.0),), time_limit=0.3)
    seen: list[float] = []
    rows = compare_depots(
        net,
        [Candidate("n0_0"), Candidate("n1_1", 2)],
        settings,
        workers=1,
        progress=lambda m, f: seen.append(f),
    )
    assert [r.depot for r in rows] == ["n0_0", "n1_1"]
    assert all(r.feasible for r in rows) and seen[-1] == 1.0
    with pytest.raises(Cancelled):
        compare_depots(net, [Candidate("n0_0")], settings, workers=1, stop=lambda: True)


def test_plan_progress_and_stop() -> None:
    import threading

    from core.errors import Cancelled

    net = _grid(3)
    settings = FleetSettings(vehicles=(VehicleType(capacity=6.0),), time_limit=1.2)
    seen: list[float] = []
    plan_fleet(net, settings, progress=lambda m, f: seen.append(f))
    assert seen == sorted(seen) and seen[-1] == 1.0 and len(seen) > 4
    stop = threading.Event()
    stop.set()
    with pytest.raises(Cancelled):
        plan_fleet(net, settings, stop=stop)
