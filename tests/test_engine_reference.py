"""The engine against an independent integer program (SciPy HiGHS) and networkx.

Hundreds of random small networks of each kind: two-way, one-way, mixed and
with optional streets.  Where the engine claims exactness its total must equal
the reference optimum; otherwise the reference optimum must lie between the
engine's lower bound and its total.  Every circuit is checked with networkx
(closed walk, legal directions, exact service counts, Eulerian).
"""

from __future__ import annotations

import math

import networkx as nx
import pytest
from hypothesis import HealthCheck, given, note, settings
from hypothesis import strategies as st

from bench.synthetic import drivable_digraph
from core.errors import UnreachableError
from core.model import Network, Node, OneWay, Segment, Service
from core.plan import Plan
from core.solve import plan_circuit
from tests.circuit_checks import assert_valid_circuit
from tests.reference_ip import reference_optimum

KINDS = ("two-way", "one-way", "mixed", "optional", "optional-two-way")


@st.composite
def networks(draw: st.DrawFn, kind: str) -> Network:
    n = draw(st.integers(2, 9))
    m = draw(st.integers(n, 16))
    net = Network(f"random {kind}")
    for i in range(n):
        net.add_node(Node(str(i)))
    # A cycle through every node first, driven one way round where streets are one-way, so
    # most networks are strongly connected; then random streets (loops and parallels allowed).
    order = draw(st.permutations(range(n)))
    pairs = [(order[i], order[(i + 1) % n]) for i in range(n if n > 2 else 1)]
    on_cycle = len(pairs)
    while len(pairs) < m:
        pairs.append((draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))))
    for k, (a, b) in enumerate(pairs):
        length = float(draw(st.integers(1, 20)))
        if kind in ("two-way", "optional-two-way"):
            ow = OneWay.NO
        elif kind == "one-way":
            ow = (
                OneWay.FORWARD
                if k < on_cycle
                else draw(st.sampled_from([OneWay.FORWARD, OneWay.BACKWARD]))
            )
        else:
            ow = draw(st.sampled_from([OneWay.NO, OneWay.NO, OneWay.FORWARD, OneWay.BACKWARD]))
            if k < on_cycle and ow is OneWay.BACKWARD:
                ow = OneWay.FORWARD
        if ow is OneWay.NO:
            choices = [Service.EITHER, Service.EITHER, Service.BOTH]
        else:
            choices = [Service.ALONG, Service.EITHER, Service.BOTH]
        if kind == "one-way":
            choices = [Service.ALONG, Service.BOTH]
        if kind.startswith("optional"):
            choices = [*choices, Service.NONE, Service.NONE, Service.NONE, Service.NONE]
        svc = draw(st.sampled_from(choices))
        passes = draw(st.sampled_from([1, 1, 1, 2]))
        net.add_segment(
            Segment(f"s{k}", str(a), str(b), length=length, oneway=ow, service=svc, passes=passes)
        )
    net.depot = str(draw(st.integers(0, n - 1)))
    return net


def strongly_connected(net: Network) -> bool:
    return nx.is_strongly_connected(drivable_digraph(net))


def describe(net: Network) -> str:
    rows = [f"depot {net.depot}"]
    rows += [
        f"{s.id} {s.start}-{s.end} len={s.length} {s.oneway.value} {s.service.value} x{s.passes}"
        for s in net
    ]
    return "\n".join(rows)


def check_against_reference(net: Network) -> None:
    note(describe(net))
    ref = reference_optimum(net, net.depot)
    for strategy in ("auto", "heuristic"):
        check_plan(net, plan_circuit(net, time_limit=20.0, strategy=strategy), ref)


def check_plan(net: Network, plan: Plan, ref: float) -> None:
    assert_valid_circuit(net, plan)
    if plan.exact:
        assert math.isclose(plan.total_m, ref, abs_tol=1e-6), (plan.method, plan.total_m, ref)
    else:
        assert plan.lower_bound_m <= ref + 1e-6 <= plan.total_m + 2e-6, (
            plan.lower_bound_m,
            ref,
            plan.total_m,
        )


@pytest.mark.parametrize("kind", KINDS)
def test_engine_equals_independent_integer_program(kind: str) -> None:
    @settings(
        max_examples=120,
        deadline=None,
        derandomize=True,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
    )
    @given(networks(kind))
    def run(net: Network) -> None:
        if not strongly_connected(net):
            # one-way traps must be reported, not planned
            try:
                plan = plan_circuit(net)
            except UnreachableError:
                return
            assert_valid_circuit(net, plan)
            return
        check_against_reference(net)

    run()


def test_optional_streets_in_separate_pieces_are_linked_exactly() -> None:
    # Two service pieces joined only by deadhead streets: a rural postman case.
    net = Network("pieces")
    for i in range(6):
        net.add_node(Node(str(i)))
    specs = [
        ("0", "1", 3, Service.EITHER),
        ("1", "2", 4, Service.NONE),
        ("2", "3", 2, Service.EITHER),
        ("3", "4", 5, Service.EITHER),
        ("4", "2", 6, Service.EITHER),
        ("0", "5", 7, Service.NONE),
        ("5", "3", 1, Service.NONE),
    ]
    for k, (a, b, ln, svc) in enumerate(specs):
        net.add_segment(Segment(f"s{k}", a, b, length=float(ln), service=svc))
    net.depot = "0"
    plan = plan_circuit(net)
    assert_valid_circuit(net, plan)
    assert plan.exact
    assert math.isclose(plan.total_m, reference_optimum(net, "0"))
