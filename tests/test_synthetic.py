"""The benchmark network generators: size, strong connectivity, determinism."""

from __future__ import annotations

import networkx as nx
import pytest

from bench.synthetic import CRS, drivable_digraph, grid_network, synthetic_network
from core.model import Network, OneWay, Service, check_segment


def _fingerprint(net: Network) -> list[tuple]:
    return [
        (s.id, s.start, s.end, round(s.length, 6), s.oneway, s.service, s.geometry) for s in net
    ]


@pytest.mark.parametrize("n", [60, 1_000, 5_000])
def test_size_is_close_to_the_request(n: int) -> None:
    net = synthetic_network(n, seed=3)
    assert abs(len(net) - n) <= max(2, 0.02 * n)
    assert net.crs == CRS
    assert net.depot in net.nodes
    assert nx.is_connected(drivable_digraph(net).to_undirected())
    for seg in net:
        check_segment(seg, net.nodes)


@pytest.mark.parametrize(("share", "seed"), [(0.1, 0), (0.1, 7), (0.3, 1)])
def test_one_way_streets_keep_every_street_reachable(share: float, seed: int) -> None:
    net = synthetic_network(3_000, seed=seed, oneway_share=share)
    one_way = sum(1 for s in net if s.oneway is not OneWay.NO)
    assert one_way == pytest.approx(share * len(net), rel=0.05)
    assert {s.oneway for s in net if s.oneway is not OneWay.NO} == {
        OneWay.FORWARD,
        OneWay.BACKWARD,
    }
    assert nx.is_strongly_connected(drivable_digraph(net))


def test_optional_share() -> None:
    net = synthetic_network(2_000, seed=2, optional_share=0.15)
    optional = sum(1 for s in net if s.service is Service.NONE)
    assert optional == round(0.15 * len(net))
    assert all(s.service in (Service.NONE, Service.EITHER) for s in net)


def test_same_seed_same_network_other_seed_other_network() -> None:
    a = synthetic_network(1_500, seed=11, oneway_share=0.1, optional_share=0.1)
    b = synthetic_network(1_500, seed=11, oneway_share=0.1, optional_share=0.1)
    c = synthetic_network(1_500, seed=12, oneway_share=0.1, optional_share=0.1)
    assert _fingerprint(a) == _fingerprint(b)
    assert a.depot == b.depot
    assert _fingerprint(a) != _fingerprint(c)


def test_grid_network_matches_the_comparison_size() -> None:
    net = grid_network(40, 40, seed=0)
    assert len(net.nodes) == 1_600
    assert len(net) == 2_600
    assert all(s.length == int(s.length) and s.length_given for s in net)
    assert all(s.oneway is OneWay.NO and s.service is Service.EITHER for s in net)
    assert nx.is_connected(drivable_digraph(net).to_undirected())
    assert _fingerprint(net) == _fingerprint(grid_network(40, 40, seed=0))


def test_bad_arguments_are_refused() -> None:
    with pytest.raises(ValueError, match="n_segments"):
        synthetic_network(2)
    with pytest.raises(ValueError, match="oneway_share"):
        synthetic_network(100, oneway_share=0.9)
    with pytest.raises(ValueError, match="at least 2 x 2"):
        grid_network(1, 5)
