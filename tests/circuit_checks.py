"""Checks that a plan is a real circuit, using networkx as the outside reference."""

from __future__ import annotations

import itertools
import math
from collections import Counter

import networkx as nx

from core.model import Network, OneWay, Service
from core.plan import Plan


def assert_valid_circuit(net: Network, plan: Plan) -> None:
    """Closed walk from the depot, legal directions, exact service counts, Eulerian."""
    steps = plan.steps
    if not steps:
        assert not any(s.service is not Service.NONE for s in net), "empty plan but service needed"
        return
    assert steps[0].start == plan.depot, "the circuit must leave from the depot"
    assert steps[-1].end == plan.depot, "the circuit must return to the depot"
    for a, b in itertools.pairwise(steps):
        assert a.end == b.start, f"the walk jumps from {a.end} to {b.start}"
    served: Counter[tuple[str, int]] = Counter()
    for st in steps:
        seg = net.segments[st.segment]
        d = 1 if st.forward else -1
        ends = (seg.start, seg.end) if st.forward else (seg.end, seg.start)
        assert (st.start, st.end) == ends, f"step {st} does not follow segment {seg.id}"
        if seg.oneway is OneWay.FORWARD:
            assert d == 1, f"segment {seg.id} driven against its one-way direction"
        if seg.oneway is OneWay.BACKWARD:
            assert d == -1, f"segment {seg.id} driven against its one-way direction"
        assert math.isclose(st.length, seg.length, abs_tol=5e-4)  # plan files keep millimetres
        if st.service:
            served[(seg.id, d)] += 1
    for seg in net:
        f, b = served[(seg.id, 1)], served[(seg.id, -1)]
        p = seg.passes
        if seg.service is Service.NONE:
            assert f == b == 0, f"segment {seg.id} needs no service but was serviced"
        elif seg.service is Service.BOTH:
            if seg.oneway is OneWay.NO:
                assert (f, b) == (p, p), f"segment {seg.id}: both kerbs need {p} each way"
            else:
                assert f + b == 2 * p
        else:
            assert f + b == p, f"segment {seg.id} serviced {f + b} times, needs {p}"
    # networkx: the passes form a connected Eulerian multigraph
    g = nx.MultiDiGraph()
    for st in steps:
        g.add_edge(st.start, st.end)
    assert nx.is_eulerian(g), "networkx does not find the passes Eulerian"
    assert math.isclose(plan.total_m, plan.service_m + plan.deadhead_m)
