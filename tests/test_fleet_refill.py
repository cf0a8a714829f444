"""A limited fleet reloads at the depot when the file names no refill site.

Reference: gdb1 (Golden, DeArmon & Baker 1983, from ``../shared/benchmarks/carp``) has
capacity 5 per vehicle; with only two vehicles its 22 demand units need several trips per
vehicle.  The plan is judged by the independent checker (``core/fleet/check.py``), which
recomputes coverage, loads per trip and continuity from the steps alone.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from core.files import read_network
from core.fleet import check_plan, plan_fleet, settings_from_network

BENCH = Path(__file__).resolve().parents[1].parent / "shared" / "benchmarks"


def test_limited_fleet_reloads_at_the_depot() -> None:
    if not BENCH.is_dir():
        pytest.skip(f"published benchmark instances not found at {BENCH}")
    net = read_network(BENCH / "carp" / "gdb1.dat")
    settings = settings_from_network(net, vehicles=2, time_limit=3.0, iterations=200)
    assert settings.refill_sites == (net.depot,)
    plan = plan_fleet(net, settings)
    assert plan.feasible, plan.issues
    assert len(plan.routes) <= 2
    capacity = net.meta["capacity"]
    demand = sum(s.demand for s in net.required())
    assert plan.n_trips >= -(-demand // capacity)  # at least ceil(demand / capacity) loads
    for route in plan.routes:
        for trip in route.trips:
            assert trip.load <= capacity + 1e-9
    report = check_plan(net, plan, settings)
    assert report.feasible, report.issues


def test_unlimited_fleet_keeps_one_trip_per_vehicle() -> None:
    if not BENCH.is_dir():
        pytest.skip(f"published benchmark instances not found at {BENCH}")
    net = read_network(BENCH / "carp" / "gdb1.dat")
    assert settings_from_network(net).refill_sites == ()


def test_reload_stops_count_in_route_times_and_limits() -> None:
    # gdb1 (Golden, DeArmon & Baker 1983) with two vehicles needs several loads per
    # vehicle; each reload stop between two trips must count in the route's time, in the
    # planner's figures, the independent checker's and the card's clock alike.
    if not BENCH.is_dir():
        pytest.skip(f"published benchmark instances not found at {BENCH}")
    from dataclasses import replace

    from core.fleet.cards import fleet_cards

    net = read_network(BENCH / "carp" / "gdb1.dat")
    base = settings_from_network(net, vehicles=2, time_limit=3.0, iterations=200)
    plan = plan_fleet(net, replace(base, reload_min=12.5))
    assert plan.feasible, plan.issues
    assert plan.reload_min == 12.5
    stops = [len(r.trips) - 1 for r in plan.routes]
    assert sum(stops) >= 1
    # the checker, from the steps alone, with and without the stop time
    with_stops = check_plan(net, plan, replace(base, reload_min=12.5))
    without = check_plan(net, plan, base)
    for r, n, a, b in zip(plan.routes, stops, with_stops.routes, without.routes, strict=True):
        assert a.minutes == pytest.approx(b.minutes + 12.5 * n)
        assert r.minutes == pytest.approx(a.minutes)
    # a limit the driving alone keeps but the stops break is reported, naming the route
    longest = max(plan.routes, key=lambda r: len(r.trips))
    k = plan.routes.index(longest)
    driving = without.routes[k].minutes
    tight = tuple(replace(v, max_time_min=driving + 1.0) for v in base.vehicles)
    over = check_plan(net, plan, replace(base, vehicles=tight, reload_min=12.5))
    assert any(f"route {longest.vehicle} takes" in i for i in over.issues), over.issues
    # the cards' reload rows take the plan's stop time unless told otherwise
    cards = fleet_cards(net, plan)
    halts = [i for c in cards for i in c.directions.instructions if i.kind == "stop"]
    assert len(halts) == sum(stops)
    assert all(i.duration_s == pytest.approx(12.5 * 60) for i in halts)
