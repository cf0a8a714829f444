"""The command line: plans every readable format, and turns bad input into one clear line."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from core.cli import main
from core.files import read_network
from core.files.plan_json import PLAN_FORMAT, plan_from_dict
from tests.circuit_checks import assert_valid_circuit

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "thistlewick.geojson"
BENCHMARKS = ROOT.parent / "shared" / "benchmarks"


def run_cli(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(args)
    out, err = capsys.readouterr()
    return code, out, err


def test_plan_sample_district(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out_file = tmp_path / "plan.json"
    code, out, err = run_cli(["plan", str(SAMPLE), "--out", str(out_file)], capsys)
    assert code == 0, err
    assert "Deadhead" in out and "Plan written" in out
    doc = json.loads(out_file.read_text())
    assert doc["format"] == PLAN_FORMAT
    route = doc["routes"][0]
    assert route["vehicle"] == "1" and len(route["trips"]) == 1
    step = route["trips"][0]["steps"][0]
    assert set(step) >= {"from", "to", "link", "service", "length_m"}
    totals = doc["totals"]
    assert math.isclose(totals["total_m"], totals["service_m"] + totals["deadhead_m"], abs_tol=0.01)
    assert totals["lower_bound_m"] <= totals["total_m"] + 0.01
    net = read_network(SAMPLE)
    assert_valid_circuit(net, plan_from_dict(doc))


def test_depot_by_coordinates_snaps_to_nearest_node(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    net = read_network(SAMPLE)
    node = next(iter(net.nodes.values()))
    code, _out, err = run_cli(
        [
            "plan",
            str(SAMPLE),
            "--depot",
            f"{node.x + 0.3},{node.y - 0.2}",
            "--out",
            str(tmp_path / "p.json"),
        ],
        capsys,
    )
    assert code == 0, err
    doc = json.loads((tmp_path / "p.json").read_text())
    assert doc["routes"][0]["trips"][0]["start"] == node.id


@pytest.mark.parametrize(
    "name",
    [
        "carp/gdb1.dat",
        "carp/val1A.dat",
        "salt-spreading/belben.json",
        "salt-spreading/gualandi.json",
    ],
)
def test_plan_research_formats(
    name: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = BENCHMARKS / name
    if not path.exists():
        pytest.skip(f"benchmark file {path} is absent")
    code, _out, err = run_cli(
        ["plan", str(path), "--one-circuit", "--out", str(tmp_path / "p.json")], capsys
    )
    assert code == 0, err
    doc = json.loads((tmp_path / "p.json").read_text())
    assert doc["routes"][0]["trips"][0]["steps"]


def test_kerteminde_single_circuit_matches_published_figure(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # ../shared/benchmarks/README.md (about the Kerteminde instance of the salt-spreading
    # problem statement, Chiarandini 2024): "a single closed circuit from node 2 needs
    # 357,887 m", solved there independently as an integer program with HiGHS.
    path = BENCHMARKS / "salt-spreading" / "kerteminde.json"
    if not path.exists():
        pytest.skip(f"benchmark file {path} is absent")
    code, _out, err = run_cli(
        ["plan", str(path), "--one-circuit", "--depot", "2", "--out", str(tmp_path / "p.json")],
        capsys,
    )
    assert code == 0, err
    doc = json.loads((tmp_path / "p.json").read_text())
    assert math.isclose(doc["totals"]["total_m"], 357_887.0, abs_tol=0.5)
    net = read_network(path)
    assert_valid_circuit(net, plan_from_dict(doc))


BAD_GEOJSON_LINE = (
    '{"type": "FeatureCollection", "features": [\n'
    ' {"type": "Feature", "properties": {"name": "Quay Street"},\n'
    '  "geometry": {"type": "LineString", "coordinates": [[-32.0, 47.0], [-32.001, 47.0]]}},\n'
    ' {"type": "Feature", "properties": {"name": "Broken Row"},\n'
    '  "geometry": {"type": "LineString", "coordinates": [[-32.0, 47.0], [NaN, 47.0]]}}\n'
    "]}\n"
)


@pytest.mark.parametrize(
    ("content", "words"),
    [
        ("", "empty"),
        ('{"type": "FeatureCollection", "features": [', "line"),
        ("hello, this is not a network\n", "none of the formats"),
        (BAD_GEOJSON_LINE, "feature 1"),
        (
            '{"nodes": [{"label": "1", "position": null}], "vehicles": [], "A": [],'
            ' "E_R": [{"edge": ["1", "2"], "len": 5, "dem": 1}]}',
            "E_R",
        ),
    ],
)
def test_bad_input_gives_one_clear_line(
    content: str, words: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "streets.json"
    path.write_text(content)
    code, _out, err = run_cli(["plan", str(path)], capsys)
    assert code == 2
    assert err.startswith("roundsman: error:")
    assert words.lower() in err.lower()
    assert "Traceback" not in err


def _line_geojson(features: list[tuple[str, list[list[float]], dict]]) -> str:
    feats = [
        {
            "type": "Feature",
            "properties": {"name": n, **props},
            "geometry": {"type": "LineString", "coordinates": coords},
        }
        for n, coords, props in features
    ]
    return json.dumps({"type": "FeatureCollection", "features": feats})


def test_one_way_trap_names_the_street(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    a, b, c = [-32.0, 47.0], [-31.999, 47.0], [-31.998, 47.0]
    path = tmp_path / "trap.geojson"
    path.write_text(
        _line_geojson([("Depot Road", [a, b], {}), ("Sump Lane", [b, c], {"oneway": "yes"})])
    )
    code, _out, err = run_cli(["plan", str(path), "--depot", "lonlat:-32.0,47.0"], capsys)
    assert code == 2
    assert "Sump Lane" in err and "one-way trap" in err


def test_unreachable_and_missing_depot(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    a, b, c, d = [-32.0, 47.0], [-31.999, 47.0], [-31.99, 47.0], [-31.989, 47.0]
    path = tmp_path / "apart.geojson"
    path.write_text(_line_geojson([("Depot Road", [a, b], {}), ("Far Lane", [c, d], {})]))
    code, _out, err = run_cli(["plan", str(path), "--depot", "lonlat:-32.0,47.0"], capsys)
    assert code == 2 and "Far Lane" in err and "cannot be reached" in err
    code, _out, err = run_cli(["plan", str(path)], capsys)
    assert code == 2 and "depot" in err
    code, _out, err = run_cli(["plan", str(path), "--depot", "no-such-node"], capsys)
    assert code == 2 and "no-such-node" in err


def test_zero_length_street_is_named(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "zero.json"
    doc = {
        "format": "roundsman-network",
        "version": 1,
        "name": "z",
        "crs": None,
        "depot": "a",
        "nodes": [{"id": "a"}, {"id": "b"}],
        "segments": [{"id": "s1", "start": "a", "end": "b", "length": 0, "name": "Nil Street"}],
    }
    path.write_text(json.dumps(doc))
    code, _out, err = run_cli(["plan", str(path)], capsys)
    assert code == 2 and "Nil Street" in err


def test_missing_file(capsys: pytest.CaptureFixture[str]) -> None:
    code, _out, err = run_cli(["plan", "/nonexistent/streets.geojson"], capsys)
    assert code == 2 and "streets.geojson" in err


def test_console_script_runs_headless(tmp_path: Path) -> None:
    # the installed entry point's module, run as a separate process, as a user would
    proc = subprocess.run(
        [sys.executable, "-m", "app.launcher", "info", str(SAMPLE)],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    assert "streets" in proc.stdout
