"""Route cards and exports of fleet plans: one card per vehicle route, reloads as rows.

References outside this code:

* the fleet plans are passed by :mod:`core.fleet.check`, the independent checker
  (it reads only the network, the settings and the steps); its recomputed totals
  are the reference for the cards' totals;
* the PDF is read back with pypdf (a general-purpose PDF library);
* the GPX is read with gpxpy (a general-purpose GPX 1.1 reader) and its points
  projected back with pyproj (PROJ) to the plan's coordinates;
* the GeoJSON is checked against RFC 7946 (Butler et al., 2016: WGS 84 lon/lat,
  LineStrings of two or more positions), the CSV read with Python's csv module
  (RFC 4180);
* the command line runs on the published salt-spreading instance "BelBen" of
  ``../shared/benchmarks/salt-spreading`` (skipped with a message when absent).
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
import subprocess
import sys
import unicodedata
from pathlib import Path

import gpxpy
import pytest
from pypdf import PdfReader
from pyproj import Transformer

from app.card import render
from core.activity import GRITTING, SWEEPING
from core.directions import Kind, step_coords
from core.files.fleet_exports import (
    FLEET_COLUMNS,
    fleet_csv_text,
    fleet_geojson,
    fleet_gpx_text,
)
from core.fleet import FleetSettings, VehicleType, check_plan, plan_fleet
from core.fleet.cards import (
    STOP_MINUTES,
    fleet_cards,
    route_exports,
    route_label,
    stop_note,
    weekday_code,
)
from core.model import Network, Node, Segment

ROOT = Path(__file__).resolve().parents[1]
BENCH = ROOT.parent / "shared" / "benchmarks"
BELBEN = BENCH / "salt-spreading" / "belben.json"
CRS = "EPSG:32626"  # UTM 26N: the open Atlantic, where our invented town lies


def _words(text: str) -> str:
    return re.sub(r"\s+", " ", unicodedata.normalize("NFKC", text)).strip()


def _grid(n: int = 4, step: float = 200.0) -> Network:
    """An invented 4 × 4 street grid with bent streets (so every pass has a middle vertex)."""
    net = Network("Thistlewick grid", CRS)
    x0, y0 = 500_000.0, 5_900_000.0
    for i in range(n):
        for j in range(n):
            net.add_node(Node(f"n{i}_{j}", x0 + i * step, y0 + j * step))
    k = 0
    for i in range(n):
        for j in range(n):
            for di, dj in ((1, 0), (0, 1)):
                if i + di >= n or j + dj >= n:
                    continue
                a, b = net.nodes[f"n{i}_{j}"], net.nodes[f"n{i + di}_{j + dj}"]
                mid = ((a.x + b.x) / 2 + 5.0, (a.y + b.y) / 2 + 3.0)
                name = f"Row {j} Street" if dj == 0 else f"Column {i} Road"
                geometry = ((a.x, a.y), mid, (b.x, b.y))
                net.add_segment(Segment(f"s{k}", a.id, b.id, geometry=geometry, name=name))
                k += 1
    net.depot = "n0_0"
    return net


@pytest.fixture(scope="module")
def fleet():
    network = _grid()
    # 24 streets of about 0.2 km at 1 t per km, 1 t a load, 2 vehicles: reloads are needed.
    vt = VehicleType(
        name="gritter", home="n0_0", count=2, capacity=1.0, capacity_unit="t", demand_per_km=1.0
    )
    settings = FleetSettings(
        vehicles=(vt,),
        refill_sites=("n3_3",),
        reload_min=STOP_MINUTES["gritting"],
        seed=0,
        time_limit=5.0,
        iterations=300,
    )
    plan = plan_fleet(network, settings)
    report = check_plan(network, plan, settings)
    assert report.feasible, report.issues
    assert sum(len(r.trips) - 1 for r in plan.routes) >= 1, "the instance should need reloads"
    cards = fleet_cards(network, plan, activity=GRITTING, start="05:00", load_unit="t")
    return network, settings, plan, report, cards


@pytest.fixture(scope="module")
def pdf(qapp, fleet, tmp_path_factory):
    _network, _settings, _plan, _report, cards = fleet
    path = tmp_path_factory.mktemp("fleetcards") / "cards.pdf"
    pages = render.write_cards_pdf([c.content for c in cards], str(path))
    texts = [_words(p.extract_text()) for p in PdfReader(path).pages]
    return pages, texts


def _sections(texts: list[str]) -> list[list[str]]:
    """Split the pages where the footer says "page 1 of n"."""
    out: list[list[str]] = []
    for t in texts:
        m = re.search(r"page (\d+) of (\d+)", t)
        assert m, "every page has its own page number"
        if m.group(1) == "1":
            out.append([])
        out[-1].append(t)
    return out


def test_one_section_per_route_named_on_every_page(fleet, pdf) -> None:
    _network, _settings, plan, _report, cards = fleet
    pages, texts = pdf
    sections = _sections(texts)
    assert len(sections) == len(plan.routes) == len(pages)
    for k, (section, route) in enumerate(zip(sections, plan.routes, strict=True), 1):
        assert len(section) == pages[k - 1] == render.page_count(len(cards[k - 1].content.rows))
        label = route_label(k, len(plan.routes), route)
        for i, t in enumerate(section, 1):
            assert label in t, f"page {i} of route {k} does not name its route"
            assert f"page {i} of {len(section)}" in t


def test_instructions_in_route_order_and_reloads_where_the_plan_says(fleet, pdf) -> None:
    _network, _settings, _plan, _report, cards = fleet
    _, texts = pdf
    for section, card in zip(_sections(texts), cards, strict=True):
        route = card.route
        # Where the fleet plan reloads: after each trip but the last, at the trip's end.
        bounds, n = [], 0
        for trip in route.trips[:-1]:
            n += len(trip.steps)
            bounds.append((n, trip.end))
        rows = card.directions.instructions
        stops = [i for i, row in enumerate(rows) if row.kind == Kind.STOP]
        assert len(stops) == len(bounds)
        for i, (n_before, node) in zip(stops, bounds, strict=True):
            row = rows[i]
            assert row.node == node
            assert row.text == f"Stop: {stop_note(GRITTING, node, route.trips[0].start)}"
            assert row.duration_s == pytest.approx(STOP_MINUTES["gritting"] * 60)
            assert rows[i - 1].steps[-1] == n_before - 1  # the last pass of the trip
            assert rows[i + 1].steps[0] == n_before  # the first pass of the next trip
        # Every row's words in the route's order on the route's own table pages.
        table = " ".join(section[1:])
        pos = 0
        for ins in rows:
            found = table.find(_words(ins.text), pos)
            assert found >= 0, f"{ins.number} ({ins.text}) missing or out of order"
            pos = found + 1
        assert "salt store" in table


def test_card_totals_add_up_to_the_checked_plan(fleet, pdf) -> None:
    _network, _settings, plan, report, cards = fleet
    _, texts = pdf
    # Reference: the totals core.fleet.check recomputes from the steps and settings.
    for card, ref in zip(cards, report.routes, strict=True):
        t = card.content.totals
        assert t.service_m == pytest.approx(ref.service_m)
        assert t.deadhead_m == pytest.approx(ref.deadhead_m)
        assert card.loads == pytest.approx([x.load for x in ref.trips])
        assert len(card.stops) == len(ref.trips) - 1
        assert card.content.header.vehicle.startswith(card.route.vehicle)
    assert sum(c.content.totals.service_m for c in cards) == pytest.approx(
        sum(r.service_m for r in report.routes)
    )
    assert sum(c.content.totals.deadhead_m for c in cards) == pytest.approx(
        sum(r.deadhead_m for r in report.routes)
    )
    assert sum(c.content.totals.total_m for c in cards) == pytest.approx(plan.total_m)
    # The printed totals say the same.
    for section, card in zip(_sections(texts), cards, strict=True):
        first = section[0]
        assert f"Service {card.content.totals.service}" in first
        assert f"Load per trip ({len(card.loads)})" in first
        assert ", ".join(f"{x:.3g} t" for x in card.loads) in first
        assert f"{len(card.stops)} reload stop" in first


def test_gpx_one_track_per_route_reproduces_the_geometry(fleet) -> None:
    network, _settings, plan, _report, cards = fleet
    routes = route_exports(cards)
    gpx = gpxpy.parse(fleet_gpx_text(network, routes))  # a general-purpose GPX 1.1 reader
    assert len(gpx.tracks) == len(plan.routes) == len(gpx.routes)
    back = Transformer.from_crs("EPSG:4326", CRS, always_xy=True)
    for trk, card in zip(gpx.tracks, cards, strict=True):
        assert trk.name == route_label(card.number, card.of, card.route)
        assert len(trk.segments) == len(card.route.trips)  # one track segment per load
        got = [p for seg in trk.segments for p in seg.points]
        xs, ys = back.transform([p.longitude for p in got], [p.latitude for p in got])
        want: list[tuple[float, float]] = []
        for trip in card.route.trips:
            for k, s in enumerate(trip.steps):
                coords = step_coords(network, s)
                want += list(coords if k == 0 else coords[1:])
        assert len(want) == len(got)
        for (wx, wy), gx, gy in zip(want, xs, ys, strict=True):
            assert math.hypot(wx - gx, wy - gy) < 0.05  # 1e-7 degrees written: about 1 cm


def test_geojson_carries_route_and_trip_numbers(fleet) -> None:
    network, _settings, plan, _report, cards = fleet
    doc = fleet_geojson(network, route_exports(cards))
    feats = doc["features"]
    assert doc["type"] == "FeatureCollection"
    assert len(feats) == sum(len(r.steps) for r in plan.routes)
    expected = [
        (k, t_no, s.segment)
        for k, r in enumerate(plan.routes, 1)
        for t_no, t in enumerate(r.trips, 1)
        for s in t.steps
    ]
    got = [
        (f["properties"]["route"], f["properties"]["trip"], f["properties"]["segment"])
        for f in feats
    ]
    assert got == expected
    for f in feats:  # RFC 7946 3.1.4 and 4: lon/lat, two or more positions
        coords = f["geometry"]["coordinates"]
        assert f["geometry"]["type"] == "LineString" and len(coords) >= 2
        assert all(-180 <= lon <= 180 and -90 <= lat <= 90 for lon, lat in coords)
    json.dumps(doc)


def test_csv_reads_back_with_route_and_trip_columns(fleet) -> None:
    _network, _settings, _plan, _report, cards = fleet
    rows = list(csv.DictReader(io.StringIO(fleet_csv_text(route_exports(cards)))))
    assert tuple(rows[0].keys()) == FLEET_COLUMNS
    for k, card in enumerate(cards, 1):
        mine = [r for r in rows if r["route"] == str(k)]
        assert [r["instruction"] for r in mine] == [i.text for i in card.directions.instructions]
        assert {r["vehicle"] for r in mine} == {card.route.vehicle}
        trips = [int(r["trip"]) for r in mine]
        assert trips == sorted(trips) and set(trips) == set(range(1, len(card.route.trips) + 1))
        stops = [r for r in mine if r["kind"] == "stop"]
        assert [int(r["trip"]) for r in stops] == list(range(1, len(card.route.trips)))


def test_day_and_sweeping_wording() -> None:
    assert weekday_code("2026-12-02") == "wed"  # ISO 8601 date; a Wednesday
    assert weekday_code("Tuesday") == "tue" and weekday_code("SAT") == "sat"
    assert weekday_code("after the market") is None
    assert stop_note(SWEEPING, "n9", "n1") == "empty the hopper at the tipping point (n9)"
    assert stop_note(SWEEPING, "n1", "n1") == "empty the hopper at the depot (n1)"


@pytest.mark.skipif(not BELBEN.is_file(), reason=f"published instance not found at {BELBEN}")
def test_card_command_on_a_published_fleet_instance(tmp_path) -> None:
    run = lambda *a: subprocess.run(  # noqa: E731
        [sys.executable, "-m", "app.launcher", *a],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=tmp_path,
        env={"QT_QPA_PLATFORM": "offscreen", "PATH": "/usr/bin:/bin"},
    )
    plan_json = tmp_path / "belben.plan.json"
    done = run("plan", str(BELBEN), "--search-time", "1", "--out", str(plan_json))
    assert done.returncode == 0, done.stderr
    doc = json.loads(plan_json.read_text())
    assert doc["fleet"] and doc["feasible"]
    n_routes = len(doc["routes"])
    n_stops = sum(len(r["trips"]) - 1 for r in doc["routes"])
    out = tmp_path / "cards.pdf"
    done = run("card", str(BELBEN), "--plan", str(plan_json), "--pdf", str(out),
               "--activity", "gritting", "--stop-minutes", "25")  # fmt: skip
    assert done.returncode == 0, done.stderr
    texts = [_words(p.extract_text()) for p in PdfReader(out).pages]
    assert len(_sections(texts)) == n_routes
    assert " ".join(texts).count("Stop: reload salt at") == n_stops
    assert "about 25 min" in " ".join(texts) or n_stops == 0
    one = tmp_path / "one.pdf"
    done = run("card", str(BELBEN), "--pdf", str(one), "--one-circuit", "--strategy", "heuristic")
    assert done.returncode == 0, done.stderr
    texts = [_words(p.extract_text()) for p in PdfReader(one).pages]
    assert len(_sections(texts)) == 1 and "Route 1 of" not in " ".join(texts)
    bad = run("card", str(BELBEN), "--plan", str(plan_json), "--pdf", str(one), "--one-circuit")
    assert bad.returncode == 2 and "fleet plan" in bad.stderr


def test_plan_command_writes_fleet_exports(fleet, tmp_path) -> None:
    from core.cli import main
    from core.files import write_network

    network = fleet[0]
    src = tmp_path / "grid.geojson"
    write_network(network, src, fmt="geojson")
    gpx_path, csv_path, gj = tmp_path / "r.gpx", tmp_path / "r.csv", tmp_path / "r.geojson"
    code = main(["plan", str(src), "--depot", "500000,5900000", "--capacity", "0.1", "--activity",
                 "gritting", "--search-time", "2", "--out", str(tmp_path / "p.json"),
                 "--gpx", str(gpx_path), "--instructions-csv", str(csv_path),
                 "--circuit-geojson", str(gj)])  # fmt: skip
    assert code == 0
    doc = json.loads((tmp_path / "p.json").read_text())
    n = len(doc["routes"])
    assert n >= 2
    assert len(gpxpy.parse(gpx_path.read_text()).tracks) == n
    rows = list(csv.DictReader(io.StringIO(csv_path.read_text())))
    assert {r["route"] for r in rows} == {str(k) for k in range(1, n + 1)}
    feats = json.loads(gj.read_text())["features"]
    assert len(feats) == sum(len(t["steps"]) for r in doc["routes"] for t in r["trips"])


def test_sweeping_cards_per_service_day() -> None:
    from dataclasses import replace

    base = _grid(3)
    network = Network(base.name, base.crs)
    for node in base.nodes.values():
        network.add_node(node)
    for k, seg in enumerate(base.segments.values()):  # alternate Monday and Thursday streets
        network.add_segment(replace(seg, attrs={"days": ["mon"] if k % 2 else ["thu"]}))
    network.depot = base.depot
    mondays = {s.id for s in network.segments.values() if s.attrs["days"] == ["mon"]}
    vt = VehicleType.from_activity(SWEEPING, home="n0_0", count=1, capacity=0.1)
    settings = FleetSettings(vehicles=(vt,), refill_sites=("n2_2",), day="mon", iterations=200)
    plan = plan_fleet(network, settings)
    assert check_plan(network, plan, settings).feasible  # the checker covers Monday only
    cards = fleet_cards(network, plan, activity=SWEEPING, load_unit="m3")
    assert {c.content.header.day for c in cards} == {"Monday"}
    served = {s.segment for c in cards for s in c.directions.steps if s.service}
    assert served == mondays
    stops = [i for c in cards for i in c.directions.instructions if i.kind == Kind.STOP]
    assert stops and all("empty the hopper at the tipping point (n2_2)" in i.text for i in stops)
