"""The engine on published problems: Euler's bridges and the gdb and val sets."""

from __future__ import annotations

import math
from pathlib import Path

import networkx as nx
import numpy as np
import pytest

from core.files import read_network
from core.model import Network, Node, Segment, Service
from core.solve import plan_circuit
from core.solve.arcs import compile_network
from core.solve.tjoin import min_tjoin
from tests.circuit_checks import assert_valid_circuit
from tests.reference_ip import reference_optimum

BENCHMARKS = Path(__file__).resolve().parents[1].parent / "shared" / "benchmarks"
CARP = BENCHMARKS / "carp"


def test_koenigsberg_bridges() -> None:
    # L. Euler, "Solutio problematis ad geometriam situs pertinentis", Commentarii academiae
    # scientiarum Petropolitanae 8 (1736/1741) 128-140: four land masses, seven bridges, every
    # land mass touched by an odd number of bridges (5, 3, 3, 3).  With unit lengths the
    # shortest closed walk over every bridge repeats two bridges: 9 crossings.
    net = Network("seven bridges")
    for land in ("island", "north", "south", "east"):
        net.add_node(Node(land))
    bridges = [
        ("island", "north"),
        ("island", "north"),
        ("island", "south"),
        ("island", "south"),
        ("island", "east"),
        ("north", "east"),
        ("south", "east"),
    ]
    for k, (a, b) in enumerate(bridges, 1):
        net.add_segment(Segment(f"bridge{k}", a, b, length=1.0))
    degrees = sorted(sum(1 for s in net if land in (s.start, s.end)) for land in net.nodes)
    assert degrees == [3, 3, 3, 5]
    for depot in net.nodes:
        plan = plan_circuit(net, depot)
        assert_valid_circuit(net, plan)
        assert plan.total_m == 9.0 and plan.deadhead_m == 2.0 and plan.exact


def carp_instances(prefix: str) -> list[Path]:
    if not CARP.is_dir():
        return []
    return sorted(CARP.glob(f"{prefix}*.dat"), key=lambda p: (len(p.stem), p.stem))


def _skip_without_benchmarks() -> None:
    if not CARP.is_dir():
        pytest.skip(f"published CARP instances not found at {CARP}; skipping")


@pytest.mark.parametrize("prefix", ["gdb", "val"])
def test_carp_sets_every_edge_required_match_integer_program(prefix: str) -> None:
    # Instances: gdb1-23, Golden, DeArmon & Baker (1983), Computers & OR 10(1); val1A-10D,
    # Benavent, Campos, Corberan & Mota (1992), Networks 22.  With every edge required and
    # capacity ignored each is an undirected route-inspection instance; the engine's optimum
    # must equal the independent integer program's (tests/reference_ip.py, SciPy HiGHS).
    _skip_without_benchmarks()
    files = carp_instances(prefix)
    assert files, f"no {prefix} files in {CARP}"
    for path in files:
        net = read_network(path)
        full = Network(net.name, net.crs)
        full.nodes = dict(net.nodes)
        for s in net:
            full.add_segment(Segment(s.id, s.start, s.end, length=s.length, service=Service.EITHER))
        full.depot = net.depot
        plan = plan_circuit(full)
        assert_valid_circuit(full, plan)
        ref = reference_optimum(full, full.depot)
        assert plan.exact
        assert math.isclose(plan.total_m, ref), (path.name, plan.total_m, ref)


def test_carp_required_edges_only_rural_case() -> None:
    # egl-e1-A (Li & Eglese 1996, a winter gritting network): 51 required of 98 edges.  As a
    # rural postman instance (capacity ignored) the engine's answer must equal the
    # independent integer program with connectivity flow.
    _skip_without_benchmarks()
    path = CARP / "egl-e1-A.dat"
    net = read_network(path)
    plan = plan_circuit(net, time_limit=60)
    assert_valid_circuit(net, plan)
    ref = reference_optimum(net, net.depot, time_limit=120)
    if plan.exact:
        assert math.isclose(plan.total_m, ref)
    else:
        assert plan.lower_bound_m <= ref + 1e-6 <= plan.total_m + 1e-6


def test_tjoin_matches_networkx_complete_graph_matching() -> None:
    # Reference: networkx.min_weight_matching on the complete graph of shortest-path distances
    # between odd nodes, the classic Edmonds & Johnson (1973) construction.  Lengths are
    # random reals with millimetre resolution and many near-ties.
    import random

    rng = random.Random(7)
    for trial in range(60):
        g = nx.connected_watts_strogatz_graph(rng.randint(6, 40), 4, 0.4, seed=trial)
        net = Network("ws")
        for v in g:
            net.add_node(Node(str(v)))
        for k, (a, b) in enumerate(g.edges()):
            length = round(rng.choice([rng.uniform(1, 3), rng.uniform(10, 2000)]), 3)
            g[a][b]["weight"] = length
            net.add_segment(Segment(f"e{k}", str(a), str(b), length=length))
        p = compile_network(net, "0")
        odd = (
            np.bincount(p.tail, minlength=p.n_nodes) + np.bincount(p.head, minlength=p.n_nodes)
        ) % 2 == 1
        join = min_tjoin(p.n_nodes, p.tail, p.head, p.length, odd)
        ours = float(p.length[join].sum())
        odd_nodes = [v for v in g if g.degree(v) % 2]
        dist = {v: nx.single_source_dijkstra_path_length(g, v) for v in odd_nodes}
        k = nx.Graph()
        for i, a in enumerate(odd_nodes):
            for b in odd_nodes[i + 1 :]:
                k.add_edge(a, b, weight=dist[a][b])
        ref = sum(dist[a][b] for a, b in nx.min_weight_matching(k))
        assert math.isclose(ours, ref, abs_tol=1e-6), (trial, ours, ref)
