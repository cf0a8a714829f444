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
