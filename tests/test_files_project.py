"""Tests of the Roundsman project file (core.files.project)."""

from __future__ import annotations

import copy
import json
import math
import os
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from core.errors import InputError
from core.files import project
from core.files.project import (
    CURRENT_VERSION,
    MIGRATIONS,
    load_project,
    project_text,
    project_to_dict,
    save_project,
)
from core.model import Network, Node, OneWay, Segment, Service

BENCHMARKS = Path(__file__).parents[1] / ".." / "shared" / "benchmarks"


def sample_network() -> Network:
    net = Network("Test district", "EPSG:32625")
    net.add_node(Node("n1", 500_000.125, 5_200_000.5))
    net.add_node(Node("n2", 500_100.0, 5_200_010.0, turning_place=True))
    net.add_node(Node("n3", 500_100.1 + 1e-9, 5_199_950.333333333))
    net.add_segment(
        Segment(
            "s1",
            "n1",
            "n2",
            geometry=(
                (500_000.125, 5_200_000.5),
                (500_050.7, 5_200_020.1),
                (500_100.0, 5_200_010.0),
            ),
            name="Quay Row",
            demand=12.5,
            attrs={"priority": "high", "days": [1, 3]},
        )
    )
    net.add_segment(
        Segment(
            "s2",
            "n2",
            "n3",
            length=61.0,
            geometry=((500_100.0, 5_200_010.0), (500_100.1 + 1e-9, 5_199_950.333333333)),
            name="Net Lane",
            oneway=OneWay.BACKWARD,
            service=Service.ALONG,
            passes=3,
        )
    )
    net.add_segment(Segment("s3", "n3", "n3", length=40.0, service=Service.NONE))
    net.add_segment(
        Segment("s4", "n1", "n2", length=0.1 + 0.2, service=Service.BOTH, name="Ünïcode Wëg")
    )
    net.depot = "n1"
    net.meta = {"source_format": "test", "vehicles": [{"id": "1", "capacity": 5.5}]}
    return net


def assert_same(a: Network, b: Network) -> None:
    assert (a.name, a.crs, a.depot, a.meta) == (b.name, b.crs, b.depot, b.meta)
    assert a.nodes == b.nodes
    assert list(a.nodes) == list(b.nodes)
    assert a.segments == b.segments  # dataclass equality: everything but attrs
    assert list(a.segments) == list(b.segments)
    for sid, seg in a.segments.items():
        other = b.segments[sid]
        assert dict(seg.attrs) == dict(other.attrs)
        assert seg.length_given == other.length_given
        assert seg.length == other.length  # exact, not approximate


def test_round_trip_is_exact(tmp_path: Path) -> None:
    net = sample_network()
    path = tmp_path / "district.json"
    save_project(net, path)
    assert_same(net, load_project(path))
    assert_same(net, load_project(path.read_text(encoding="utf-8")))
    assert_same(net, load_project(str(path)))


def test_document_layout() -> None:
    doc = json.loads(project_text(sample_network()))
    assert doc["format"] == "roundsman-network"
    assert doc["version"] == CURRENT_VERSION == 1
    assert doc["nodes"][1] == {"id": "n2", "x": 500_100.0, "y": 5_200_010.0, "turning_place": True}
    assert "turning_place" not in doc["nodes"][0]
    s1, s2, s3 = doc["segments"][:3]
    assert "length" not in s1 and s1["demand"] == 12.5 and s1["attrs"]["priority"] == "high"
    assert s2["length"] == 61.0 and "demand" not in s2 and "attrs" not in s2
    assert "geometry" not in s3
    assert s2["oneway"] == "backward" and s2["service"] == "along" and s2["passes"] == 3


def test_round_trip_of_benchmark_networks() -> None:
    if not BENCHMARKS.is_dir():
        pytest.skip(f"the shared benchmark folder {BENCHMARKS} is absent")
    from core.files import read_network

    for name in ("carp/egl-e1-A.dat", "salt-spreading/kerteminde.json"):
        net = read_network(BENCHMARKS / name)
        assert_same(net, load_project(project_text(net)))


def test_input_document_is_not_modified() -> None:
    doc = project_to_dict(sample_network())
    before = copy.deepcopy(doc)
    load_project(doc)
    assert doc == before


def test_atomic_save_keeps_the_old_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "district.json"
    save_project(sample_network(), path)
    old = path.read_bytes()

    def broken_replace(src: Any, dst: Any) -> None:
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", broken_replace)
    changed = sample_network()
    changed.name = "Renamed"
    with pytest.raises(OSError, match="disk full"):
        save_project(changed, path)
    assert path.read_bytes() == old
    assert sorted(p.name for p in tmp_path.iterdir()) == ["district.json"]  # no temp file left


def test_migration_from_an_older_version(monkeypatch: pytest.MonkeyPatch) -> None:
    # A fake version 0 that called segments "streets" and had no "meta".
    def zero_to_one(doc: dict[str, Any]) -> dict[str, Any]:
        doc = dict(doc)
        doc["segments"] = doc.pop("streets")
        doc["meta"] = {}
        return doc

    monkeypatch.setitem(MIGRATIONS, 0, zero_to_one)
    current = project_to_dict(sample_network())
    old = {k: v for k, v in current.items() if k not in ("segments", "meta")}
    old.update(version=0, streets=current["segments"])
    snapshot = copy.deepcopy(old)
    net = load_project(old)
    assert list(net.segments) == ["s1", "s2", "s3", "s4"]
    assert net.meta == {}
    assert old == snapshot  # the migration worked on a copy


def test_migrations_are_applied_in_order(monkeypatch: pytest.MonkeyPatch) -> None:
    calls: list[int] = []

    def step(version: int) -> Any:
        def run(doc: dict[str, Any]) -> dict[str, Any]:
            calls.append(version)
            return doc

        return run

    monkeypatch.setattr(project, "CURRENT_VERSION", 3)
    monkeypatch.setitem(MIGRATIONS, 1, step(1))
    monkeypatch.setitem(MIGRATIONS, 2, step(2))
    doc = project_to_dict(sample_network())
    doc["version"] = 1
    assert project.migrate(doc)["version"] == 3
    assert calls == [1, 2]


def test_file_from_a_newer_version() -> None:
    doc = project_to_dict(sample_network())
    doc["version"] = CURRENT_VERSION + 1
    with pytest.raises(InputError, match="newer version of Roundsman") as info:
        load_project(json.dumps(doc), label="future.json")
    assert "update" in str(info.value) and "future.json" in str(info.value)


def test_version_without_migration() -> None:
    doc = project_to_dict(sample_network())
    doc["version"] = 0
    with pytest.raises(InputError, match="version 0"):
        load_project(doc)


@pytest.mark.parametrize(
    ("change", "words"),
    [
        (
            lambda d: d["segments"][1].update(service="sideways"),
            "segments[1] (street Net Lane (s2))",
        ),
        (lambda d: d["segments"][0].update(end="nowhere"), "nowhere"),
        (lambda d: d["segments"][2].update(length=-1), "segments[2]"),
        (lambda d: d["segments"][3].update(service="along"), "one-way"),
        (lambda d: d["nodes"][0].update(x="east"), "nodes[0]"),
        (lambda d: d["nodes"].append({"id": "n1", "x": 0.0, "y": 0.0}), "n1"),
        (lambda d: d.update(depot="n9"), "depot"),
        (lambda d: d.pop("segments"), "segments"),
        (lambda d: d.update(format="something-else"), "not a Roundsman project"),
    ],
)
def test_bad_documents(change: Any, words: str) -> None:
    doc = project_to_dict(sample_network())
    change(doc)
    with pytest.raises(InputError) as info:
        load_project(doc, label="bad.json")
    assert words in str(info.value)


def test_nan_is_rejected_on_both_sides(tmp_path: Path) -> None:
    # RFC 8259 section 6: JSON numbers have no NaN.
    text = project_text(sample_network()).replace("61.0", "NaN", 1)
    with pytest.raises(InputError, match="segments\\[1\\]"):
        load_project(text)
    net = sample_network()
    net.meta["bad"] = math.nan
    with pytest.raises(InputError, match="meta"):
        save_project(net, tmp_path / "x.json")
    assert not (tmp_path / "x.json").exists()


def test_missing_file(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="does not exist"):
        load_project(tmp_path / "absent.json")


# -- property-based round trip ---------------------------------------------------

finite = st.floats(allow_nan=False, allow_infinity=False, min_value=-1e7, max_value=1e7)


@st.composite
def networks(draw: st.DrawFn) -> Network:
    net = Network(draw(st.text(max_size=12)), draw(st.sampled_from([None, "EPSG:32625"])))
    n_nodes = draw(st.integers(1, 6))
    with_xy = draw(st.booleans())
    for k in range(n_nodes):
        x, y = (draw(finite), draw(finite)) if with_xy else (None, None)
        net.add_node(Node(f"v{k}", x, y, turning_place=draw(st.booleans())))
    for k in range(draw(st.integers(0, 8))):
        a = f"v{draw(st.integers(0, n_nodes - 1))}"
        b = f"v{draw(st.integers(0, n_nodes - 1))}"
        oneway = draw(st.sampled_from(list(OneWay)))
        services = [s for s in Service if not (s is Service.ALONG and oneway is OneWay.NO)]
        geometry = None
        if draw(st.booleans()):
            geometry = tuple(draw(st.lists(st.tuples(finite, finite), min_size=2, max_size=4)))
        given_length = draw(st.floats(min_value=0.001, max_value=1e6))
        measured = geometry is not None and math.hypot(*map(float.__sub__, *geometry[:2])) > 0
        length = math.nan if measured and draw(st.booleans()) else given_length
        seg = Segment(
            f"e{k}",
            a,
            b,
            length=length,
            geometry=geometry,
            name=draw(st.text(max_size=8)),
            oneway=oneway,
            service=draw(st.sampled_from(services)),
            passes=draw(st.integers(1, 4)),
            demand=draw(finite),
            attrs=draw(st.dictionaries(st.text(max_size=4), st.integers() | st.text(max_size=4))),
        )
        if seg.length > 0:
            net.add_segment(seg)
    net.depot = draw(st.sampled_from([None, *net.nodes]))
    return net


@settings(
    max_examples=60,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)
@given(networks())
def test_random_networks_round_trip(net: Network) -> None:
    assert_same(net, load_project(project_text(net)))


def test_saved_files_keep_ordinary_permissions(tmp_path: Path) -> None:
    # POSIX: a new file gets 0666 less the umask, as open() would give it; a replaced file
    # keeps its own mode (the temporary file that mkstemp makes is 0600).
    import os
    import stat

    from core.files.atomic import atomic_write_text

    new = tmp_path / "new.json"
    atomic_write_text(new, "{}")
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(new.stat().st_mode) == 0o666 & ~mask
    new.chmod(0o640)
    atomic_write_text(new, "{ }")
    assert stat.S_IMODE(new.stat().st_mode) == 0o640 and new.read_text() == "{ }"
