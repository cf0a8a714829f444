"""core.edit: the editing operations the window and scripts share.

Lengths after moves and cuts are checked against shapely's ``LineString.length``
(GEOS, an outside planar geometry library); "undo restores the exact network"
is checked by comparing the project documents (``project_to_dict``, order
included) before an edit and after reverting it.
"""

from __future__ import annotations

import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, Point

from core import edit as ed
from core.errors import NetworkError
from core.files.project import project_to_dict
from core.model import Network, Node, OneWay, Segment, Service


def snapshot(net: Network) -> str:
    """The whole network as text, order included."""
    return json.dumps(project_to_dict(net))


def small_town() -> Network:
    """Five junctions, a bent street, a one-way street, a loop and a given length."""
    net = Network("Thistlewick test", "EPSG:32626")
    for nid, x, y in [
        ("a", 0.0, 0.0),
        ("b", 100.0, 0.0),
        ("c", 100.0, 80.0),
        ("d", 0.0, 80.0),
        ("e", 50.0, 140.0),
    ]:
        net.add_node(Node(nid, x, y))
    net.add_segment(Segment("s1", "a", "b", geometry=((0, 0), (100, 0)), name="Kiln Row"))
    net.add_segment(
        Segment("s2", "b", "c", geometry=((100, 0), (120, 40), (100, 80)), attrs={"priority": 2})
    )
    net.add_segment(
        Segment(
            "s3",
            "c",
            "d",
            geometry=((100, 80), (0, 80)),
            oneway=OneWay.FORWARD,
            service=Service.ALONG,
        )
    )
    net.add_segment(Segment("s4", "d", "a", length=95.0, geometry=((0, 80), (0, 0))))
    net.add_segment(Segment("s5", "e", "e", geometry=((50, 140), (70, 160), (30, 160), (50, 140))))
    net.add_segment(Segment("s6", "d", "e", geometry=((0, 80), (50, 140)), demand=4.0))
    net.depot = "a"
    return net


def roundtrip(net: Network, edit: ed.Edit) -> None:
    """Apply then revert: the network must be exactly as before."""
    before = snapshot(net)
    assert snapshot(net) == before  # building the edit changed nothing
    edit.apply(net)
    after = snapshot(net)
    edit.revert(net)
    assert snapshot(net) == before
    edit.apply(net)  # redo lands on the same network again
    assert snapshot(net) == after


def test_add_node_and_street() -> None:
    net = small_town()
    before = snapshot(net)
    e1 = ed.add_node(net, 200.0, 0.0)
    assert snapshot(net) == before  # the input is not changed by describing the edit
    e1.apply(net)
    (new,) = e1.created_nodes
    e2 = ed.add_street(net, "b", new, name="Tanner's Walk").apply(net)
    (sid,) = e2.created_segments
    seg = net.segments[sid]
    assert (seg.start, seg.end, seg.name) == ("b", new, "Tanner's Walk")
    assert seg.length == pytest.approx(LineString(seg.geometry).length)  # shapely as reference
    assert not seg.length_given
    e2.revert(net)
    e1.revert(net)
    assert snapshot(net) == before


def test_add_street_refuses_unknown_junction_and_zero_length() -> None:
    net = small_town()
    with pytest.raises(NetworkError, match="zz"):
        ed.add_street(net, "a", "zz")
    ed.add_node(net, 0.0, 0.0, node_id="a2").apply(net)
    with pytest.raises(NetworkError, match="length"):
        ed.add_street(net, "a", "a2")


def test_move_node_streets_follow_and_lengths_match_shapely() -> None:
    net = small_town()
    edit = ed.move_node(net, "c", 130.0, 95.0)
    roundtrip(net, edit)
    s2, s3 = net.segments["s2"], net.segments["s3"]
    assert s2.geometry[-1] == (130.0, 95.0) and s2.geometry[1] == (120.0, 40.0)
    assert s3.geometry[0] == (130.0, 95.0)
    # outside reference: shapely (GEOS) planar length
    assert s2.length == pytest.approx(LineString(s2.geometry).length, rel=1e-12)
    assert s3.length == pytest.approx(LineString(s3.geometry).length, rel=1e-12)
    assert not s2.length_given and not s3.length_given
    assert s2.attrs == {"priority": 2}  # attributes kept
    assert set(edit.segments) == {"s2", "s3"}


def test_move_node_keeps_a_given_length_and_moves_loops_at_both_ends() -> None:
    net = small_town()
    ed.move_node(net, "d", -20.0, 70.0).apply(net)
    s4 = net.segments["s4"]
    assert s4.geometry[0] == (-20.0, 70.0)
    assert s4.length == 95.0 and s4.length_given
    ed.move_node(net, "e", 55.0, 150.0).apply(net)
    s5 = net.segments["s5"]
    assert s5.geometry[0] == s5.geometry[-1] == (55.0, 150.0)
    assert s5.length == pytest.approx(LineString(s5.geometry).length)


def test_split_street_at_a_point() -> None:
    net = small_town()
    original = net.segments["s2"]
    edit = ed.split_street(net, "s2", 125.0, 20.0)
    roundtrip(net, edit)
    (node_id,) = edit.created_nodes
    (new_id,) = edit.created_segments
    first, second = net.segments["s2"], net.segments[new_id]
    assert (first.start, first.end, second.start, second.end) == ("b", node_id, node_id, "c")
    node = net.nodes[node_id]
    # the cut lies on the old line, where shapely projects the click
    line = LineString(original.geometry)
    expected = line.interpolate(line.project(Point(125.0, 20.0)))
    assert (node.x, node.y) == pytest.approx((expected.x, expected.y))
    assert first.length + second.length == pytest.approx(line.length)
    assert first.length == pytest.approx(LineString(first.geometry).length)
    assert first.attrs == second.attrs == {"priority": 2}
    assert not first.length_given and not second.length_given


def test_split_shares_given_length_and_demand_in_proportion() -> None:
    net = small_town()
    edit = ed.split_street(net, "s4", 0.0, 20.0).apply(net)  # 60 m of the 80 m drawing from d
    (new_id,) = edit.created_segments
    a, b = net.segments["s4"], net.segments[new_id]
    assert a.length_given and b.length_given
    assert a.length == pytest.approx(95.0 * 60 / 80) and b.length == pytest.approx(95.0 * 20 / 80)
    e = ed.split_street(net, "s6", 25.0, 110.0).apply(net)
    c, d = net.segments["s6"], net.segments[e.created_segments[0]]
    assert c.demand + d.demand == pytest.approx(4.0) and c.demand == pytest.approx(2.0)


def test_split_refuses_a_cut_at_the_end() -> None:
    net = small_town()
    with pytest.raises(NetworkError, match="Kiln Row"):
        ed.split_street(net, "s1", -5.0, 0.0)


def test_delete_junction_removes_its_streets_and_undo_restores_order() -> None:
    net = small_town()
    edit = ed.delete(net, nodes=["d"])
    roundtrip(net, edit)
    assert "d" not in net.nodes
    assert not {"s3", "s4", "s6"} & set(net.segments)
    assert list(net.segments) == ["s1", "s2", "s5"]


def test_delete_street_drops_orphans_but_never_the_depot() -> None:
    net = Network("t")
    for nid, x in (("p", 0.0), ("q", 50.0)):
        net.add_node(Node(nid, x, 0.0))
    net.add_segment(Segment("s1", "p", "q", geometry=((0, 0), (50, 0))))
    net.depot = "p"
    edit = ed.delete(net, segments=["s1"])
    roundtrip(net, edit)
    assert set(net.nodes) == {"p"} and net.depot == "p"
    net2 = small_town()
    edit2 = ed.delete(net2, nodes=["a"])
    roundtrip(net2, edit2)
    assert net2.depot is None


def test_direction_and_service() -> None:
    net = small_town()
    e = ed.set_oneway(net, ["s3"], OneWay.NO)
    roundtrip(net, e)
    assert net.segments["s3"].oneway is OneWay.NO
    assert net.segments["s3"].service is Service.EITHER  # 'along' has no meaning two-way
    ed.set_oneway(net, ["s1"], "yes").apply(net)
    assert net.segments["s1"].oneway is OneWay.FORWARD
    roundtrip(net, ed.reverse_oneway(net, ["s1", "s2"]))
    assert net.segments["s1"].oneway is OneWay.BACKWARD
    assert net.segments["s2"].oneway is OneWay.NO  # two-way left alone
    with pytest.raises(NetworkError, match="s2"):
        ed.set_service(net, ["s2"], Service.ALONG)
    with pytest.raises(NetworkError, match="either"):
        ed.set_service(net, ["s2"], "sometimes")
    roundtrip(net, ed.set_service(net, ["s1", "s2"], Service.BOTH, passes=2))
    assert net.segments["s2"].required_passes() == (2, 2, 0)


def test_attributes_lengths_and_depot() -> None:
    net = small_town()
    e = ed.set_attrs(net, ["s1", "s2"], {"priority": 3, "days": ("mon", "thu"), "speed_kmh": 20})
    roundtrip(net, e)
    assert net.segments["s2"].attrs == {"priority": 3, "days": ["mon", "thu"], "speed_kmh": 20}
    roundtrip(net, ed.set_attrs(net, ["s2"], {"priority": None}))
    assert "priority" not in net.segments["s2"].attrs
    for bad in ({"priority": 0}, {"days": ["someday"]}, {"speed_kmh": -3}):
        with pytest.raises(NetworkError, match="s1"):
            ed.set_attrs(net, ["s1"], bad)
    roundtrip(net, ed.set_street_fields(net, ["s1"], name="Mill Lane"))
    assert net.segments["s1"].name == "Mill Lane" and not net.segments["s1"].length_given
    roundtrip(net, ed.set_length(net, ["s1"], 120.0))
    assert net.segments["s1"].length == 120.0 and net.segments["s1"].length_given
    roundtrip(net, ed.set_length(net, ["s1"], None))
    assert net.segments["s1"].length == pytest.approx(100.0) and not net.segments["s1"].length_given
    roundtrip(net, ed.fix_lengths(net, ["s2"]))
    assert net.segments["s2"].length_given
    roundtrip(net, ed.set_turning_place(net, ["b", "c"], True))
    assert net.nodes["b"].turning_place and net.nodes["c"].turning_place
    assert ed.set_turning_place(net, ["b"], True).is_empty
    roundtrip(net, ed.set_depot(net, "e"))
    assert net.depot == "e"
    with pytest.raises(NetworkError):
        ed.set_depot(net, "nowhere")


def test_combine_is_one_exact_undo() -> None:
    net = small_town()
    before = snapshot(net)
    scratch = net.copy()
    cut = ed.split_street(scratch, "s1", 40.0, 3.0).apply(scratch)
    node = ed.add_node(scratch, 40.0, -60.0).apply(scratch)
    lay = ed.add_street(scratch, cut.created_nodes[0], node.created_nodes[0])
    both = ed.combine("Lay street", [cut, node, lay])
    assert snapshot(net) == before
    both.apply(net)
    lay.apply(scratch)
    assert snapshot(net) == snapshot(scratch)
    both.revert(net)
    assert snapshot(net) == before


def test_unchanged_edit_is_empty() -> None:
    net = small_town()
    assert ed.set_oneway(net, ["s1"], OneWay.NO).is_empty
    assert ed.set_street_fields(net, ["s1"], name="Kiln Row").is_empty
    assert not ed.set_depot(net, "b").is_empty


_OPS = st.sampled_from(["add", "move", "split", "delete", "oneway", "service", "depot"])


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(ops=st.lists(st.tuples(_OPS, st.integers(0, 10_000), st.floats(-30, 30)), max_size=12))
def test_any_sequence_of_edits_undoes_exactly(ops) -> None:
    """Random edit sequences, reverted newest first, give back the start exactly."""
    net = small_town()
    states = [snapshot(net)]
    done: list[ed.Edit] = []
    for op, k, dx in ops:
        segs, nodes = sorted(net.segments), sorted(net.nodes)
        try:
            if op == "add":
                e = ed.add_node(net, dx * 3, dx * 5 + 300)
                e.apply(net)
                done.append(e)
                states.append(snapshot(net))
                e = ed.add_street(net, nodes[k % len(nodes)], e.created_nodes[0])
            elif op == "move" and nodes:
                n = net.nodes[nodes[k % len(nodes)]]
                e = ed.move_node(net, n.id, n.x + dx, n.y - dx / 2)
            elif op == "split" and segs:
                s = net.segments[segs[k % len(segs)]]
                (x0, y0), (x1, y1) = s.geometry[0], s.geometry[1]
                e = ed.split_street(net, s.id, (x0 + x1) / 2, (y0 + y1) / 2)
            elif op == "delete" and segs:
                e = ed.delete(net, segments=[segs[k % len(segs)]])
            elif op == "oneway" and segs:
                e = ed.set_oneway(net, [segs[k % len(segs)]], ["no", "forward", "backward"][k % 3])
            elif op == "service" and segs:
                e = ed.set_service(net, [segs[k % len(segs)]], ["none", "either", "both"][k % 3])
            elif op == "depot" and nodes:
                e = ed.set_depot(net, nodes[k % len(nodes)])
            else:
                continue
        except NetworkError:
            continue
        e.apply(net)
        done.append(e)
        states.append(snapshot(net))
    for e in reversed(done):
        e.revert(net)
        states.pop()
        assert snapshot(net) == states[-1]
    assert len(states) == 1
