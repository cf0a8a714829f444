"""Tests of the salt-spreading JSON reader (core.files.saltspread)."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import pytest

from core.errors import InputError
from core.files.saltspread import parse_saltspread, read_saltspread
from core.model import OneWay, Service

BENCHMARKS = Path(__file__).parents[1] / ".." / "shared" / "benchmarks"
SALT = BENCHMARKS / "salt-spreading"


def instance(name: str) -> Path:
    path = SALT / name
    if not path.is_file():
        pytest.skip(f"the shared salt-spreading instance {path} is absent")
    return path


def test_kerteminde_counts_from_the_readme() -> None:
    net = read_saltspread(instance("kerteminde.json"))
    # Benchmark README: 193 nodes, 233 two-way roads and 33 one-way links to
    # salt (265.6 km), 10 deadhead-only links, 2 vehicles, 2 refill depots,
    # 3.5 h limit, 34 U-turn nodes.
    assert len(net.nodes) == 193
    kinds = {
        p: [s for s in net if s.id.startswith(p) and s.id[len(p)].isdigit()]
        for p in ("A", "AR", "ER")
    }
    assert len(kinds["ER"]) == 233
    assert len(kinds["AR"]) == 33
    assert len(kinds["A"]) == 10
    assert sum(s.length for s in net.required()) / 1000 == pytest.approx(265.6, abs=0.05)
    assert sum(n.turning_place for n in net.nodes.values()) == 34
    assert len(net.meta["vehicles"]) == 2 and len(net.meta["depots"]) == 2
    assert net.meta["max_time_min"] == pytest.approx(3.5 * 60)
    assert net.meta["source_format"] == "salt-spreading"
    assert net.meta["instance"] == "kerteminde"
    assert net.depot == net.meta["vehicles"][0]["home"]
    assert not net.has_coordinates  # positions are [null, null]
    assert all(s.service is Service.EITHER and s.oneway is OneWay.NO for s in kinds["ER"])
    assert all(s.service is Service.ALONG and s.oneway is OneWay.FORWARD for s in kinds["AR"])
    assert all(s.service is Service.NONE and s.oneway is OneWay.FORWARD for s in kinds["A"])


def test_gualandi_matches_its_file() -> None:
    path = instance("gualandi.json")
    doc = json.loads(path.read_text(encoding="utf-8"))
    net = read_saltspread(path)
    assert net.has_coordinates
    assert (net.nodes["1"].x, net.nodes["1"].y) == tuple(doc["nodes"][1]["position"])
    for k, arc in enumerate(doc["A_R"], 1):
        seg = net.segments[f"AR{k}"]
        assert [seg.start, seg.end] == arc["arc"]
        assert (seg.length, seg.demand, seg.attrs["time_min"]) == (
            arc["len"],
            arc["dem"],
            arc["time"],
        )
    assert {n.id for n in net.nodes.values() if n.turning_place} == {u["label"] for u in doc["U"]}
    assert net.depot == doc["vehicles"][0]["home"]


def small() -> dict[str, Any]:
    return {
        "name": "invented",
        "max_time": 60,
        "nodes": [
            {"label": "a", "position": [0, 0]},
            {"label": "b", "position": None},
            {"label": "c"},
        ],
        "vehicles": [{"id": "1", "home": "a", "capacity": 10.0}],
        "depots": [{"label": "c", "refill": 10.0}],
        "A": [{"arc": ["b", "a"], "len": 5, "time": 0.5}],
        "A_R": [{"arc": ["a", "b"], "len": 5, "time": 0.5, "dem": 2}],
        "E_R": [{"edge": ["b", "c"], "len": 7.5, "time": 0.7, "dem": 3}],
        "U": [{"label": "c"}],
    }


def test_small_instance_and_input_not_modified() -> None:
    doc = small()
    before = copy.deepcopy(doc)
    net = parse_saltspread(doc)
    assert doc == before
    assert list(net.segments) == ["A1", "AR1", "ER1"]
    assert net.segments["ER1"].demand == 3 and net.segments["ER1"].attrs == {"time_min": 0.7}
    assert net.nodes["c"].turning_place and not net.nodes["a"].turning_place
    assert net.nodes["b"].x is None
    net.meta["vehicles"][0]["home"] = "changed"
    assert doc["vehicles"][0]["home"] == "a"


@pytest.mark.parametrize(
    ("change", "words"),
    [
        (
            lambda d: d["E_R"][0].update(edge=["b", "999"]),
            "E_R[0]: edge ends at unknown node '999'",
        ),
        (lambda d: d["A"][0].update(arc=["zz", "a"]), "A[0]: link starts at unknown node 'zz'"),
        (lambda d: d["A_R"][0].update(len=0), "A_R[0]"),
        (lambda d: d["A_R"][0].update(dem="lots"), 'A_R[0]: "dem"'),
        (lambda d: d["E_R"][0].update(len=float("nan")), "E_R[0]"),
        (lambda d: d["U"].append({"label": "q"}), "U[1]"),
        (lambda d: d["vehicles"][0].update(home="q"), "vehicles[0]"),
        (lambda d: d["nodes"].append({"label": "a"}), "nodes[3]"),
        (lambda d: d["nodes"][0].update(position=[0]), "nodes[0]"),
        (lambda d: d.update(A=[], A_R=[], E_R=[]), "no links"),
        (lambda d: d.pop("nodes"), "nodes"),
    ],
)
def test_errors_name_the_list_and_index(change: Any, words: str) -> None:
    doc = small()
    change(doc)
    with pytest.raises(InputError) as info:
        parse_saltspread(doc, source="small.json")
    assert words in str(info.value)
    assert "small.json" in str(info.value)


def test_nan_in_text_is_rejected() -> None:
    # RFC 8259 section 6: JSON has no NaN, though Python's json accepts it.
    text = json.dumps(small()).replace('"len": 7.5', '"len": NaN')
    with pytest.raises(InputError, match=r"E_R\[0\]"):
        parse_saltspread(text)
