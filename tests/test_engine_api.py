"""The engine's contract with its callers: progress, cancel, options, inputs untouched."""

from __future__ import annotations

import copy
import threading

import pytest

from core.errors import Cancelled, DepotError
from core.model import Network, Node, OneWay, Segment, Service
from core.solve import plan_circuit
from tests.circuit_checks import assert_valid_circuit


def small_mixed() -> Network:
    net = Network("square")
    for i in range(4):
        net.add_node(Node(str(i), float(i % 2) * 100, float(i // 2) * 100))
    net.add_segment(
        Segment("a", "0", "1", length=100.0, oneway=OneWay.FORWARD, service=Service.ALONG)
    )
    net.add_segment(Segment("b", "1", "3", length=100.0))
    net.add_segment(Segment("c", "3", "2", length=100.0, service=Service.BOTH))
    net.add_segment(Segment("d", "2", "0", length=100.0, service=Service.NONE))
    net.add_segment(Segment("e", "0", "3", length=141.0, passes=2))
    net.depot = "0"
    return net


def test_progress_is_reported_and_inputs_are_not_changed() -> None:
    net = small_mixed()
    before = (copy.deepcopy(net.nodes), copy.deepcopy(net.segments), net.depot)
    seen: list[tuple[str, float]] = []
    plan = plan_circuit(net, progress=lambda what, f: seen.append((what, f)))
    assert_valid_circuit(net, plan)
    assert (net.nodes, net.segments, net.depot) == before
    fractions = [f for _w, f in seen]
    assert fractions == sorted(fractions) and fractions[-1] == 1.0


def test_stop_flag_cancels() -> None:
    stop = threading.Event()
    stop.set()
    with pytest.raises(Cancelled):
        plan_circuit(small_mixed(), stop=stop)
    with pytest.raises(Cancelled):
        plan_circuit(small_mixed(), stop=lambda: True)


def test_options_are_checked_against_the_valid_choices() -> None:
    with pytest.raises(ValueError, match="'auto', 'heuristic'"):
        plan_circuit(small_mixed(), strategy="fastest")
    with pytest.raises(DepotError, match="nowhere"):
        plan_circuit(small_mixed(), depot="nowhere")


def test_nothing_to_service_gives_an_empty_plan() -> None:
    net = Network("quiet")
    net.add_node(Node("0"))
    net.add_node(Node("1"))
    net.add_segment(Segment("a", "0", "1", length=5.0, service=Service.NONE))
    plan = plan_circuit(net, "0")
    assert plan.steps == [] and plan.total_m == 0.0 and plan.exact


def test_along_on_a_two_way_street_is_refused_with_its_name() -> None:
    net = Network()
    net.add_node(Node("0"))
    net.add_node(Node("1"))
    with pytest.raises(Exception, match="Mill Lane"):
        net.add_segment(Segment("a", "0", "1", length=5.0, name="Mill Lane", service=Service.ALONG))


def test_highs_child_process_path_solves_and_cancels(monkeypatch: pytest.MonkeyPatch) -> None:
    # The child-process path (used for large programs) must give the same answer as HiGHS
    # in this process, and end at once when asked to stop.
    import numpy as np
    import scipy.sparse as sp

    from core.solve import highs

    monkeypatch.setattr(highs, "_IN_PROCESS_COLUMNS", 0)
    # min x + 2y  s.t.  x + y >= 3.5, x <= 2, integers  ->  x = 2, y = 2, cost 6
    a = sp.csr_matrix(np.array([[1.0, 1.0]]))
    program = (
        np.array([1.0, 2.0]),
        a,
        np.array([3.5]),
        np.array([np.inf]),
        np.zeros(2),
        np.array([2.0, np.inf]),
        np.array([True, True]),
    )
    res = highs.solve(*program, time_limit=10)
    assert res.optimal and res.objective == pytest.approx(6.0)
    with pytest.raises(Cancelled):
        highs.solve(*program, time_limit=10, stop=lambda: True)
