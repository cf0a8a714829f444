"""Editing a street network, without Qt: what the window's tools do, for scripts too.

Every operation *describes* a change and leaves its input alone: it returns an
:class:`Edit` holding the old and new versions of each node and segment it
touches (segments and nodes are immutable, so "old" is the very object that
was there) and the depot before and after.  ``edit.apply(network)`` makes the
change and ``edit.revert(network)`` undoes it exactly, including the order
of the network's dictionaries, so a saved file after undo is byte-for-byte
the file before the edit.  The window's undo stack holds these edits.

::

    from core.edit import add_node, add_street
    e = add_node(net, 10.0, 20.0); e.apply(net)
    add_street(net, e.created_nodes[0], "n1", name="Kiln Row").apply(net)

Lengths follow the geometry unless they were given
(:attr:`core.model.Segment.length_given`), as the model's ``with_geometry``
does.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from shapely.geometry import LineString, Point
from shapely.ops import substring

from core.errors import NetworkError
from core.model import (
    Coords,
    Network,
    Node,
    OneWay,
    Segment,
    Service,
    check_segment,
    parse_oneway,
    parse_service,
)

__all__ = [
    "ATTR_KEYS",
    "Edit",
    "add_node",
    "add_street",
    "combine",
    "delete",
    "fix_lengths",
    "move_node",
    "new_id",
    "replace_network",
    "reverse_oneway",
    "set_attrs",
    "set_depot",
    "set_length",
    "set_oneway",
    "set_service",
    "set_street_fields",
    "set_turning_place",
    "split_street",
]

ATTR_KEYS = ("priority", "days", "speed_kmh", "width_m", "lanes", "road_class")
"""The street attribute keys of DEVELOPERS.md ("Street attributes")."""

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")

MIN_PIECE_M = 0.01
"""A split closer than this to a street's end is refused (it would make a
street of no length)."""

_NodeChange = tuple[Node | None, Node | None]
_SegmentChange = tuple[Segment | None, Segment | None]


@dataclass(frozen=True)
class Edit:
    """One undoable change to a network.

    ``nodes`` and ``segments`` map ids to ``(before, after)``; ``None`` means
    absent (an added item has ``before=None``, a removed one ``after=None``).
    ``node_order``/``segment_order`` hold the dictionary order before the
    edit when it removes something, so :meth:`revert` puts removed items back
    where they were.
    """

    label: str
    nodes: Mapping[str, _NodeChange] = field(default_factory=dict)
    segments: Mapping[str, _SegmentChange] = field(default_factory=dict)
    depot: tuple[str | None, str | None] | None = None
    node_order: tuple[str, ...] | None = None
    segment_order: tuple[str, ...] | None = None
    node_order_after: tuple[str, ...] | None = None
    """Dictionary order after the edit, when it must be exact (:func:`replace_network`)."""
    segment_order_after: tuple[str, ...] | None = None
    meta: tuple[Mapping[str, Any], Mapping[str, Any]] | None = None
    """``network.meta`` before and after, for edits that replace it."""

    @property
    def created_nodes(self) -> list[str]:
        """Ids of the nodes this edit adds, in the order added."""
        return [k for k, (b, a) in self.nodes.items() if b is None and a is not None]

    @property
    def created_segments(self) -> list[str]:
        """Ids of the segments this edit adds, in the order added."""
        return [k for k, (b, a) in self.segments.items() if b is None and a is not None]

    @property
    def removed_segments(self) -> list[str]:
        return [k for k, (b, a) in self.segments.items() if a is None]

    @property
    def removed_nodes(self) -> list[str]:
        return [k for k, (b, a) in self.nodes.items() if a is None]

    @property
    def is_empty(self) -> bool:
        same_depot = self.depot is None or self.depot[0] == self.depot[1]
        return (
            same_depot
            and (self.meta is None or self.meta[0] == self.meta[1])
            and all(b is a for b, a in self.nodes.values())
            and all(b is a for b, a in self.segments.values())
        )

    def apply(self, network: Network) -> Edit:
        """Make the change in ``network`` (which must be in the "before" state).
        Cost: O(k) for k items changed."""
        _put(network.nodes, {k: a for k, (_, a) in self.nodes.items()}, self.node_order_after)
        _put(
            network.segments,
            {k: a for k, (_, a) in self.segments.items()},
            self.segment_order_after,
        )
        if self.depot is not None:
            network.depot = self.depot[1]
        if self.meta is not None:
            network.meta = dict(self.meta[1])
        return self

    def revert(self, network: Network) -> Edit:
        """Undo the change exactly (the network must be in the "after" state).
        Cost: O(k), or O(n) when the edit removed items (order restored)."""
        _put(network.segments, {k: b for k, (b, _) in self.segments.items()}, self.segment_order)
        _put(network.nodes, {k: b for k, (b, _) in self.nodes.items()}, self.node_order)
        if self.depot is not None:
            network.depot = self.depot[0]
        if self.meta is not None:
            network.meta = dict(self.meta[0])
        return self


def combine(label: str, edits: Iterable[Edit]) -> Edit:
    """One edit doing ``edits`` in turn (each computed on the network left by
    the one before), e.g. "cut a street, then lay a street to the cut".
    Cost: O(k) for k items changed in all."""
    nodes: dict[str, _NodeChange] = {}
    segments: dict[str, _SegmentChange] = {}
    depot: tuple[str | None, str | None] | None = None
    node_order = segment_order = None
    node_after: tuple[str, ...] | None = None
    seg_after: tuple[str, ...] | None = None
    meta: tuple[Mapping[str, Any], Mapping[str, Any]] | None = None
    for e in edits:
        for key, (b, a) in e.nodes.items():
            nodes[key] = (nodes[key][0] if key in nodes else b, a)
        for key, (b, a) in e.segments.items():
            segments[key] = (segments[key][0] if key in segments else b, a)
        if e.depot is not None:
            depot = (depot[0] if depot is not None else e.depot[0], e.depot[1])
        node_order = node_order or e.node_order
        segment_order = segment_order or e.segment_order
        if e.meta is not None:
            meta = (meta[0] if meta is not None else e.meta[0], e.meta[1])
        # an exact order after a step holds only if no later step adds or removes items
        node_after = e.node_order_after if e.node_order_after is not None else node_after
        seg_after = e.segment_order_after if e.segment_order_after is not None else seg_after
    return Edit(
        label, nodes, segments, depot, node_order, segment_order, node_after, seg_after, meta
    )


def _put(target: dict[str, Any], values: Mapping[str, Any], order: tuple[str, ...] | None) -> None:
    for key, value in values.items():
        if value is None:
            target.pop(key, None)
        else:
            target[key] = value
    if order is not None:
        items = [(k, target[k]) for k in order if k in target]
        items += [(k, v) for k, v in target.items() if k not in set(order)]
        target.clear()
        target.update(items)


def new_id(taken: Mapping[str, Any] | Iterable[str], prefix: str) -> str:
    """A fresh id ``prefix<k>`` not in ``taken``.  Starts from ``len + 1`` and
    counts up, so it is O(1) for networks numbered 1..n, O(n) at worst."""
    keys = taken if isinstance(taken, Mapping) else set(taken)
    k = len(keys) + 1
    while f"{prefix}{k}" in keys:
        k += 1
    return f"{prefix}{k}"


def _copy(seg: Segment, **changes: Any) -> Segment:
    """``dataclasses.replace`` that keeps a measured length measured.

    The model marks any explicit length as given, so a plain ``replace`` of
    a street whose length came from its geometry would freeze that length.
    """
    if not seg.length_given and "length" not in changes and seg.geometry is not None:
        changes["length"] = math.nan
    return replace(seg, **changes)


def _node(network: Network, node_id: str) -> Node:
    node = network.nodes.get(node_id)
    if node is None:
        raise NetworkError(f"there is no junction {node_id} in the network", nodes=[node_id])
    return node


def _segment(network: Network, seg_id: str) -> Segment:
    seg = network.segments.get(seg_id)
    if seg is None:
        raise NetworkError(f"there is no street {seg_id} in the network", segments=[seg_id])
    return seg


def _xy(node: Node) -> tuple[float, float]:
    if not node.has_xy:
        raise NetworkError(
            f"junction {node.id} has no coordinates, so no street can be drawn to it",
            nodes=[node.id],
        )
    return (float(node.x), float(node.y))  # type: ignore[arg-type]


# -- adding -------------------------------------------------------------------


def add_node(
    network: Network,
    x: float,
    y: float,
    *,
    node_id: str | None = None,
    turning_place: bool = False,
) -> Edit:
    """Add a junction at ``(x, y)``.  Cost: O(1)."""
    node_id = node_id or new_id(network.nodes, "n")
    if node_id in network.nodes:
        raise NetworkError(f"junction id {node_id} is already used", nodes=[node_id])
    if not (math.isfinite(x) and math.isfinite(y)):
        raise NetworkError(f"junction {node_id}: coordinates must be finite numbers")
    node = Node(node_id, float(x), float(y), turning_place=turning_place)
    return Edit("Add junction", nodes={node_id: (None, node)})


def add_street(
    network: Network,
    start: str,
    end: str,
    *,
    seg_id: str | None = None,
    geometry: Coords | None = None,
    name: str = "",
    oneway: OneWay | str = OneWay.NO,
    service: Service | str = Service.EITHER,
    passes: int = 1,
    length: float | None = None,
    attrs: Mapping[str, Any] | None = None,
) -> Edit:
    """Add a street from junction ``start`` to junction ``end``.

    The geometry defaults to the straight line between the junctions; the
    length is measured from it unless ``length`` is given.  Cost: O(1).
    """
    a, b = _node(network, start), _node(network, end)
    if geometry is None:
        geometry = (_xy(a), _xy(b))
    seg_id = seg_id or new_id(network.segments, "s")
    if seg_id in network.segments:
        raise NetworkError(f"street id {seg_id} is already used", segments=[seg_id])
    seg = Segment(
        id=seg_id,
        start=start,
        end=end,
        length=math.nan if length is None else float(length),
        geometry=tuple((float(x), float(y)) for x, y in geometry),
        name=name,
        oneway=_parsed(parse_oneway, oneway),
        service=_parsed(parse_service, service),
        passes=passes,
        attrs=dict(attrs or {}),
    )
    check_segment(seg, network.nodes)
    return Edit("Add street", segments={seg_id: (None, seg)})


def split_street(
    network: Network,
    seg_id: str,
    x: float,
    y: float,
    *,
    node_id: str | None = None,
    new_seg_id: str | None = None,
) -> Edit:
    """Cut a street in two at the point of it nearest to ``(x, y)``.

    A new junction goes at that point.  The part from the street's ``start``
    keeps the street's id; the rest gets a new id.  Both keep the name,
    direction, service and attributes.  A given length and the demand are
    shared in proportion to the geometric lengths.  Uses shapely's linear
    referencing (``project``/``substring``).  Cost: O(v) for v vertices.

    Raises
    ------
    NetworkError
        The street has no geometry, or the point is within
        :data:`MIN_PIECE_M` of one of its ends.
    """
    seg = _segment(network, seg_id)
    if seg.geometry is None:
        raise NetworkError(
            f"street {seg.label} has no geometry to cut; give it coordinates first",
            segments=[seg_id],
        )
    line = LineString(seg.geometry)
    total = line.length
    at = line.project(Point(x, y))
    if at < MIN_PIECE_M or total - at < MIN_PIECE_M:
        raise NetworkError(
            f"street {seg.label} cannot be cut so close to its end; pick a point along it",
            segments=[seg_id],
        )
    cut = line.interpolate(at)
    first = tuple(substring(line, 0.0, at).coords)
    second = tuple(substring(line, at, total).coords)
    point = (float(cut.x), float(cut.y))
    first = (*first[:-1], point)
    second = (point, *second[1:])
    node_id = node_id or new_id(network.nodes, "n")
    new_seg_id = new_seg_id or new_id(network.segments, "s")
    if node_id in network.nodes:
        raise NetworkError(f"junction id {node_id} is already used", nodes=[node_id])
    if new_seg_id in network.segments:
        raise NetworkError(f"street id {new_seg_id} is already used", segments=[new_seg_id])
    share = at / total
    part1 = _copy(seg, end=node_id, geometry=first, demand=seg.demand * share)
    part2 = _copy(
        seg,
        id=new_seg_id,
        start=node_id,
        geometry=second,
        demand=seg.demand * (1 - share),
        attrs=dict(seg.attrs),
    )
    if seg.length_given:
        part1 = replace(part1, length=seg.length * share)
        part2 = replace(part2, length=seg.length * (1 - share))
    node = Node(node_id, point[0], point[1])
    return Edit(
        "Cut street",
        nodes={node_id: (None, node)},
        segments={seg_id: (seg, part1), new_seg_id: (None, part2)},
    )


# -- moving and removing ------------------------------------------------------


def attached(network: Network, node_id: str) -> list[str]:
    """Ids of the streets that end at ``node_id``.  Cost: O(m) for m streets
    (the model keeps no adjacency index)."""
    return [s.id for s in network.segments.values() if node_id in (s.start, s.end)]


def move_node(network: Network, node_id: str, x: float, y: float) -> Edit:
    """Move a junction; the ends of its streets follow and their lengths
    update unless they were given.  Cost: O(m) to find the streets."""
    node = _node(network, node_id)
    if not (math.isfinite(x) and math.isfinite(y)):
        raise NetworkError(f"junction {node_id}: coordinates must be finite numbers")
    moved = replace(node, x=float(x), y=float(y))
    changes: dict[str, _SegmentChange] = {}
    for sid in attached(network, node_id):
        seg = network.segments[sid]
        if seg.geometry is None:
            continue
        coords = list(seg.geometry)
        if seg.start == node_id:
            coords[0] = (float(x), float(y))
        if seg.end == node_id:
            coords[-1] = (float(x), float(y))
        if len(coords) == 2 and coords[0] == coords[1]:
            raise NetworkError(
                f"moving junction {node_id} there would give street {seg.label} no length",
                segments=[sid],
                nodes=[node_id],
            )
        new = seg.with_geometry(tuple(coords))
        check_segment(new, network.nodes)
        changes[sid] = (seg, new)
    return Edit("Move junction", nodes={node_id: (node, moved)}, segments=changes)


def delete(
    network: Network,
    segments: Iterable[str] = (),
    nodes: Iterable[str] = (),
    *,
    drop_orphans: bool = True,
) -> Edit:
    """Remove streets and junctions; removing a junction removes its streets.

    With ``drop_orphans`` the junctions left with no street are removed too
    (never the depot).  Removing the depot's junction leaves no depot.
    Cost: O(n + m).
    """
    seg_ids = {_segment(network, s).id for s in segments}
    node_ids = {_node(network, n).id for n in nodes}
    for seg in network.segments.values():
        if seg.start in node_ids or seg.end in node_ids:
            seg_ids.add(seg.id)
    if drop_orphans:
        ends = {e for s in seg_ids for e in (network.segments[s].start, network.segments[s].end)}
        still_used = {
            e
            for seg in network.segments.values()
            if seg.id not in seg_ids
            for e in (seg.start, seg.end)
        }
        node_ids |= {e for e in ends - still_used if e != network.depot}
    seg_changes = {s: (network.segments[s], None) for s in network.segments if s in seg_ids}
    node_changes = {n: (network.nodes[n], None) for n in network.nodes if n in node_ids}
    depot = (network.depot, None) if network.depot in node_ids else None
    return Edit(
        "Delete",
        nodes=node_changes,
        segments=seg_changes,
        depot=depot,
        node_order=tuple(network.nodes) if node_changes else None,
        segment_order=tuple(network.segments) if seg_changes else None,
    )


# -- properties ---------------------------------------------------------------


def _parsed(parse: Any, value: Any) -> Any:
    """Read a direction or service value; a bad one is a :class:`NetworkError`
    whose message lists the valid choices."""
    try:
        return parse(value)
    except ValueError as exc:
        raise NetworkError(str(exc)) from None


def _each(network: Network, seg_ids: Iterable[str], label: str, change: Any) -> Edit:
    changes: dict[str, _SegmentChange] = {}
    for sid in seg_ids:
        seg = _segment(network, sid)
        new = change(seg)
        if new is not seg:
            check_segment(new, network.nodes)
            changes[sid] = (seg, new)
    return Edit(label, segments=changes)


def set_oneway(network: Network, seg_ids: Iterable[str], oneway: OneWay | str) -> Edit:
    """Make streets two-way or one-way (``forward``: along the drawing
    direction, start to end; ``backward``: against it).

    A street needing service ``along`` that becomes two-way needs ``either``
    instead (``along`` has no meaning on a two-way street).  Cost: O(k).
    """
    value = _parsed(parse_oneway, oneway)

    def change(seg: Segment) -> Segment:
        if seg.oneway is value:
            return seg
        service = seg.service
        if value is OneWay.NO and service is Service.ALONG:
            service = Service.EITHER
        return _copy(seg, oneway=value, service=service)

    return _each(network, seg_ids, "Set direction", change)


def reverse_oneway(network: Network, seg_ids: Iterable[str]) -> Edit:
    """Turn one-way streets round (two-way streets are left as they are). Cost: O(k)."""
    flip = {OneWay.FORWARD: OneWay.BACKWARD, OneWay.BACKWARD: OneWay.FORWARD}

    def change(seg: Segment) -> Segment:
        if seg.oneway is OneWay.NO:
            return seg
        return _copy(seg, oneway=flip[seg.oneway])

    return _each(network, seg_ids, "Reverse direction", change)


def set_service(
    network: Network, seg_ids: Iterable[str], service: Service | str, passes: int | None = None
) -> Edit:
    """Set what the streets need: ``none``, ``either``, ``along`` (one-way
    streets only) or ``both``.  Raises :class:`NetworkError` naming a two-way
    street given ``along``.  Cost: O(k)."""
    value = _parsed(parse_service, service)

    def change(seg: Segment) -> Segment:
        p = seg.passes if passes is None else passes
        if seg.service is value and seg.passes == p:
            return seg
        return _copy(seg, service=value, passes=p)

    return _each(network, seg_ids, "Set service", change)


_FIELDS = ("name", "passes", "demand")


def set_street_fields(network: Network, seg_ids: Iterable[str], **fields: Any) -> Edit:
    """Set plain fields (``name``, ``passes``, ``demand``) on streets. Cost: O(k)."""
    bad = sorted(set(fields) - set(_FIELDS))
    if bad:
        raise NetworkError(f"unknown street field(s) {bad}; choose from {', '.join(_FIELDS)}")

    def change(seg: Segment) -> Segment:
        if all(getattr(seg, k) == v for k, v in fields.items()):
            return seg
        return _copy(seg, **fields)

    return _each(network, seg_ids, "Edit street", change)


def _check_attr(key: str, value: Any, seg_ids: list[str]) -> None:
    problem = ""
    if key == "priority" and not (
        isinstance(value, int) and not isinstance(value, bool) and value >= 1
    ):
        problem = f"priority must be a whole number of at least 1, not {value!r}"
    if key == "days" and not (
        isinstance(value, list | tuple) and all(d in WEEKDAYS for d in value)
    ):
        problem = f"days must be a list of {', '.join(WEEKDAYS)}, not {value!r}"
    if key in ("speed_kmh", "width_m") and not (
        isinstance(value, int | float) and math.isfinite(value) and value > 0
    ):
        problem = f"{key} must be a positive number, not {value!r}"
    if problem:
        raise NetworkError(f"{problem} (streets {', '.join(seg_ids)})", segments=seg_ids)


def set_attrs(network: Network, seg_ids: Iterable[str], updates: Mapping[str, Any]) -> Edit:
    """Set street attributes (keys in :data:`ATTR_KEYS` are checked; a value
    of ``None`` removes the key, meaning "the default").  Cost: O(k)."""
    seg_ids = list(seg_ids)
    for key, value in updates.items():
        if value is not None:
            _check_attr(key, value, seg_ids)
    norm = {k: (list(v) if k == "days" and v is not None else v) for k, v in updates.items()}

    def change(seg: Segment) -> Segment:
        attrs = dict(seg.attrs)
        for key, value in norm.items():
            if value is None:
                attrs.pop(key, None)
            else:
                attrs[key] = value
        if attrs == dict(seg.attrs):
            return seg
        return _copy(seg, attrs=attrs)

    return _each(network, seg_ids, "Edit street attributes", change)


def set_length(network: Network, seg_ids: Iterable[str], length: float | None) -> Edit:
    """Override the streets' lengths, or with ``None`` measure them from the
    geometry again.  Cost: O(k)."""

    def change(seg: Segment) -> Segment:
        if length is None:
            if not seg.length_given or seg.geometry is None:
                return seg
            return replace(seg, length=math.nan, length_given=False)
        if seg.length_given and seg.length == length:
            return seg
        return replace(seg, length=float(length), length_given=True)

    return _each(network, seg_ids, "Set length", change)


def fix_lengths(network: Network, seg_ids: Iterable[str]) -> Edit:
    """Keep the streets' present lengths even if their drawing changes. Cost: O(k)."""

    def change(seg: Segment) -> Segment:
        return seg if seg.length_given else replace(seg, length=seg.length)

    return _each(network, seg_ids, "Fix length", change)


def set_turning_place(network: Network, node_ids: Iterable[str], turning: bool) -> Edit:
    """Mark junctions where a vehicle may turn round (or unmark them).  Dead
    ends always allow it (DEVELOPERS.md, "Street attributes").  Cost: O(k)."""
    changes: dict[str, _NodeChange] = {}
    for nid in node_ids:
        node = _node(network, nid)
        if node.turning_place != turning:
            changes[nid] = (node, replace(node, turning_place=turning))
    return Edit("Turning place", nodes=changes)


def set_depot(network: Network, node_id: str | None) -> Edit:
    """Place the depot at a junction (or remove it with ``None``). Cost: O(1)."""
    if node_id is not None:
        _node(network, node_id)
    return Edit("Place depot", depot=(network.depot, node_id))


def replace_network(network: Network, new: Network, label: str = "Replace network") -> Edit:
    """Replace the whole content of ``network`` by that of ``new`` as one edit
    (keep the largest piece, clip to a district boundary...).

    Nodes and segments that are the very same objects in both are left alone;
    the depot, ``meta`` and the dictionary order become exactly ``new``'s, and
    :meth:`Edit.revert` restores ``network`` exactly.  The name and CRS are
    not changed.  Neither network is modified.  Cost: O(n + m).
    """
    nodes: dict[str, _NodeChange] = {}
    for k in dict.fromkeys([*network.nodes, *new.nodes]):
        before, after = network.nodes.get(k), new.nodes.get(k)
        if before is not after:
            nodes[k] = (before, after)
    segments: dict[str, _SegmentChange] = {}
    for k in dict.fromkeys([*network.segments, *new.segments]):
        before_s, after_s = network.segments.get(k), new.segments.get(k)
        if before_s is not after_s:
            segments[k] = (before_s, after_s)
    return Edit(
        label,
        nodes=nodes,
        segments=segments,
        depot=(network.depot, new.depot) if network.depot != new.depot else None,
        node_order=tuple(network.nodes),
        segment_order=tuple(network.segments),
        node_order_after=tuple(new.nodes),
        segment_order_after=tuple(new.segments),
        meta=(dict(network.meta), dict(new.meta)) if network.meta != new.meta else None,
    )
