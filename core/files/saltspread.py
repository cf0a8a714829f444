"""Salt-spreading instances: gritting on a mixed road network (JSON, RFC 8259).

The JSON instances of the salt-spreading problem statement (COST Action
CA22137, CC-BY-4.0) have these members:

``nodes``     ``{"label", "position"}``; the position ``[x, y]`` may be null
              (or ``[null, null]``) when the instance has no coordinates.
``vehicles``  ``{"id", "home", "capacity"}``.
``depots``    refill sites ``{"label", "refill"}``.
``A``         one-way links driven without service: ``{"arc": [from, to],
              "len", "time"}``.
``A_R``       one-way links salted in their direction: ``arc``, ``len``,
              ``time``, ``dem``.
``E_R``       two-way roads salted once in either direction: ``{"edge": [a, b],
              "len", "time", "dem"}``.
``U``         nodes where a U-turn is allowed ``{"label"}``.
``max_time``  minutes each vehicle may work.

Mapping to the network model: node ids are the labels; ``A`` → one-way
(``OneWay.FORWARD``) ``Service.NONE`` segments ``"A1"``, ``"A2"``…; ``A_R`` →
one-way ``Service.ALONG`` segments ``"AR1"``… with the demand; ``E_R`` →
two-way ``Service.EITHER`` segments ``"ER1"``… with the demand.  Lengths are
the given ``len`` (metres), and ``time`` is kept as ``attrs["time_min"]``.
Nodes in ``U`` are turning places; the depot is the first vehicle's home.
Errors name the list and the 0-based index in it, e.g. ``E_R[12]``.
"""

from __future__ import annotations

import copy
import math
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from core.errors import InputError, NetworkError
from core.files._jsonio import (
    NONFINITE_HINT,
    Fail,
    find_nonfinite,
    is_number,
    load_json,
    read_text,
    source_label,
)
from core.model import Network, Node, OneWay, Segment, Service

_LISTS = (
    # (key, id prefix, end member, service, one-way, has demand)
    ("A", "A", "arc", Service.NONE, OneWay.FORWARD, False),
    ("A_R", "AR", "arc", Service.ALONG, OneWay.FORWARD, True),
    ("E_R", "ER", "edge", Service.EITHER, OneWay.NO, True),
)


def read_saltspread(path: str | os.PathLike[str]) -> Network:
    """Read a salt-spreading JSON instance.  See :func:`parse_saltspread`."""
    return parse_saltspread(read_text(path), source=source_label(path), name=Path(path).stem)


def parse_saltspread(
    data: str | Mapping[str, Any], *, source: str | None = None, name: str = ""
) -> Network:
    """Build a network from salt-spreading JSON text or a parsed document.

    The document is not modified.

    Raises
    ------
    InputError
        Naming the list and index at fault (``"E_R[12]: ..."``).
    """
    doc = load_json(data, source=source) if isinstance(data, str) else data

    def fail(message: str) -> InputError:
        return InputError(message, source=source)

    if not isinstance(doc, Mapping):
        raise fail("a salt-spreading instance must be a JSON object")
    nodes = doc.get("nodes")
    if not isinstance(nodes, list) or not nodes:
        raise fail('the instance has no "nodes" array')
    for key in ("A", "A_R", "E_R", "U", "vehicles", "depots"):
        if doc.get(key) is not None and not isinstance(doc[key], list):
            raise fail(f'"{key}" must be an array')
    if not any(doc.get(key) for key, *_ in _LISTS):
        raise fail('the instance has no links or roads ("A", "A_R" and "E_R" are empty)')

    instance = doc.get("name")
    network = Network(instance if isinstance(instance, str) and instance else name)
    for i, item in enumerate(nodes):
        where = f"nodes[{i}]"
        if not isinstance(item, Mapping):
            raise fail(f"{where} is not a JSON object")
        label = _label(item.get("label"), where, fail)
        x, y = _position(item.get("position"), f"{where} (node {label!r})", fail)
        if label in network.nodes:
            raise fail(f"{where}: the node label {label!r} is used twice")
        network.add_node(Node(label, x, y))

    def node_ref(value: Any, where: str) -> str:
        label = _label(value, where, fail)
        if label not in network.nodes:
            raise fail(f"{where}: unknown node {label!r}")
        return label

    for key, prefix, member, service, oneway, has_demand in _LISTS:
        for i, item in enumerate(doc.get(key) or []):
            where = f"{key}[{i}]"
            if not isinstance(item, Mapping):
                raise fail(f"{where} is not a JSON object")
            ends = item.get(member)
            if not (isinstance(ends, list) and len(ends) == 2):
                raise fail(f'{where}: "{member}" must be a pair of node labels')
            kind = "edge" if member == "edge" else "link"
            start = _end(ends[0], f"{where}: {kind} starts at", network, fail)
            end = _end(ends[1], f"{where}: {kind} ends at", network, fail)
            length = _number(item.get("len"), "len", where, fail)
            demand = _number(item.get("dem"), "dem", where, fail) if has_demand else 0.0
            if demand < 0:
                raise fail(f"{where}: dem must not be negative ({demand:g})")
            attrs: dict[str, Any] = {}
            if item.get("time") is not None:
                attrs["time_min"] = _number(item["time"], "time", where, fail)
            try:
                network.add_segment(
                    Segment(
                        id=f"{prefix}{i + 1}",
                        start=start,
                        end=end,
                        length=length,
                        oneway=oneway,
                        service=service,
                        demand=demand,
                        attrs=attrs,
                    )
                )
            except NetworkError as exc:
                raise fail(f"{where}: {exc.message}") from None

    for i, item in enumerate(doc.get("U") or []):
        raw = item.get("label") if isinstance(item, Mapping) else item
        label = node_ref(raw, f"U[{i}]")
        node = network.nodes[label]
        network.nodes[label] = Node(label, node.x, node.y, turning_place=True)

    vehicles = doc.get("vehicles") or []
    for i, vehicle in enumerate(vehicles):
        if not isinstance(vehicle, Mapping):
            raise fail(f"vehicles[{i}] is not a JSON object")
        node_ref(vehicle.get("home"), f"vehicles[{i}]: home")
    depots = doc.get("depots") or []
    for i, depot in enumerate(depots):
        if not isinstance(depot, Mapping):
            raise fail(f"depots[{i}] is not a JSON object")
        node_ref(depot.get("label"), f"depots[{i}]")
    if vehicles:
        network.depot = _label(vehicles[0].get("home"), "vehicles[0]: home", fail)

    extra = {"vehicles": vehicles, "depots": depots, "max_time": doc.get("max_time")}
    bad = find_nonfinite(extra)
    if bad is not None:
        raise fail(f"{bad} is not a finite number; {NONFINITE_HINT}")
    network.meta = {
        "source_format": "salt-spreading",
        "instance": instance,
        "vehicles": copy.deepcopy(list(vehicles)),
        "depots": copy.deepcopy(list(depots)),
        "max_time_min": doc.get("max_time"),
    }
    return network


def _label(value: Any, where: str, fail: Fail) -> str:
    if isinstance(value, str) and value:
        return value
    if is_number(value) and float(value).is_integer():
        return str(int(value))
    raise fail(f"{where}: {value!r} is not a node label")


def _end(value: Any, where: str, network: Network, fail: Fail) -> str:
    label = _label(value, where, fail)
    if label not in network.nodes:
        raise fail(f"{where} unknown node {label!r}")
    return label


def _position(value: Any, where: str, fail: Fail) -> tuple[float | None, float | None]:
    if value is None or (isinstance(value, list) and all(v is None for v in value)):
        return None, None
    if (
        isinstance(value, list)
        and len(value) == 2
        and all(is_number(v) and math.isfinite(v) for v in value)
    ):
        return float(value[0]), float(value[1])
    raise fail(f"{where}: position must be [x, y] with finite numbers, or null; not {value!r}")


def _number(value: Any, key: str, where: str, fail: Fail) -> float:
    if not is_number(value):
        raise fail(f'{where}: "{key}" must be a number, not {value!r}')
    if not math.isfinite(value):
        raise fail(f'{where}: "{key}" is not a finite number; {NONFINITE_HINT}')
    return float(value)
