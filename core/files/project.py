"""Roundsman's own network file: a versioned JSON document (RFC 8259).

::

    {
      "format": "roundsman-network",
      "version": 1,
      "name": "District 4",
      "crs": "EPSG:32625",            (or null)
      "depot": "n1",                  (or null)
      "meta": {...},
      "nodes": [{"id": "n1", "x": 412.5, "y": 5206.0, "turning_place": true}, ...],
      "segments": [{"id": "s1", "start": "n1", "end": "n2", "length": 120.0,
                    "geometry": [[x, y], ...], "name": "...", "oneway": "no",
                    "service": "either", "passes": 1, "demand": 3.5,
                    "attrs": {...}}, ...]
    }

``x``/``y`` are ``null`` for networks without coordinates; ``turning_place``
appears only when true; ``length`` only when it was given (otherwise it is
measured from ``geometry`` again on loading), ``geometry``, ``demand`` and
``attrs`` only when present.  Numbers are written with Python's shortest
round-trip representation, so a saved and loaded network is equal to the
original, coordinate for coordinate.

Older files are brought up to date by the functions in :data:`MIGRATIONS`,
one version step at a time; a file from a newer Roundsman is refused with a
request to update.
"""

from __future__ import annotations

import copy
import json
import math
import os
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from core.errors import InputError, NetworkError
from core.files._jsonio import (
    NONFINITE_HINT,
    Fail,
    dump_records,
    find_nonfinite,
    is_number,
    load_json,
    read_text,
    source_label,
)
from core.files.atomic import atomic_write_text
from core.model import Network, Node, Segment, parse_oneway, parse_service

FORMAT_NAME = "roundsman-network"
"""The value of the ``"format"`` member."""

CURRENT_VERSION = 1
"""The version this Roundsman writes and the newest it reads."""

Migration = Callable[[dict[str, Any]], dict[str, Any]]

MIGRATIONS: dict[int, Migration] = {}
"""``{from_version: function}``: each function takes a document of version
``from_version`` and returns the same network as a document of version
``from_version + 1``.  Version 1 is the first, so there are none yet."""


# -- writing ------------------------------------------------------------------


def project_to_dict(network: Network) -> dict[str, Any]:
    """The network as a project document (a plain JSON-ready dict)."""
    nodes = []
    for n in network.nodes.values():
        item: dict[str, Any] = {"id": n.id, "x": n.x, "y": n.y}
        if n.turning_place:
            item["turning_place"] = True
        nodes.append(item)
    segments = []
    for s in network.segments.values():
        item = {"id": s.id, "start": s.start, "end": s.end}
        if s.length_given:
            item["length"] = s.length
        if s.geometry is not None:
            item["geometry"] = [[x, y] for x, y in s.geometry]
        item.update(name=s.name, oneway=s.oneway.value, service=s.service.value, passes=s.passes)
        if s.demand:
            item["demand"] = s.demand
        if s.attrs:
            item["attrs"] = dict(s.attrs)
        segments.append(item)
    return {
        "format": FORMAT_NAME,
        "version": CURRENT_VERSION,
        "name": network.name,
        "crs": network.crs,
        "depot": network.depot,
        "meta": dict(network.meta),
        "nodes": nodes,
        "segments": segments,
    }


def project_text(network: Network) -> str:
    """The network as project JSON text, one node or segment per line.

    Raises
    ------
    InputError
        A value (in ``meta`` or a street's attributes) cannot be written as
        JSON, e.g. NaN, which RFC 8259 section 6 does not allow.
    """
    doc = project_to_dict(network)
    _check_writable(doc["meta"], "the network's extra facts (meta)")
    for item in doc["segments"]:
        _check_writable(item.get("attrs", {}), f"street {item['id']}'s attributes")
    head = {k: v for k, v in doc.items() if k not in ("nodes", "segments")}
    try:
        return dump_records(head, {"nodes": doc["nodes"], "segments": doc["segments"]})
    except (TypeError, ValueError) as exc:
        raise InputError(f"the network cannot be written as JSON: {exc}") from None


def _check_writable(value: Any, what: str) -> None:
    try:
        json.dumps(value, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise InputError(f"{what} cannot be written as JSON: {exc}") from None


def save_project(network: Network, path: str | os.PathLike[str]) -> None:
    """Save the network as a project file, atomically: if writing fails the
    previous file is left as it was."""
    try:
        text = project_text(network)
    except InputError as exc:
        raise InputError(exc.message, source=source_label(path)) from None
    atomic_write_text(path, text)


# -- reading ------------------------------------------------------------------


def load_project(
    source: str | os.PathLike[str] | Mapping[str, Any], *, label: str | None = None
) -> Network:
    """Load a project from a file path, from JSON text, or from a parsed document.

    A ``str`` whose first non-blank character is ``{`` is taken as the text
    itself; any other ``str`` or path-like is a file name.  ``label`` names
    the source in error messages (default: the file name).  The input is not
    modified.

    Raises
    ------
    InputError
        The document is not a Roundsman project, comes from a newer version,
        or breaks a rule of the network model (naming the node or segment).
    """
    if isinstance(source, Mapping):
        doc: Any = source
        default_name = ""
    elif isinstance(source, str) and source.lstrip().startswith("{"):
        doc = load_json(source, source=label)
        default_name = ""
    else:
        label = label or source_label(source)
        doc = load_json(read_text(source), source=label)
        default_name = Path(source).stem
    return project_from_dict(doc, source=label, name=default_name)


def migrate(doc: Mapping[str, Any], *, source: str | None = None) -> dict[str, Any]:
    """A copy of ``doc`` brought to :data:`CURRENT_VERSION` with :data:`MIGRATIONS`."""
    version = doc.get("version")
    if not (is_number(version) and float(version).is_integer()):
        raise InputError(f'the project has no valid "version" number ({version!r})', source=source)
    version = int(version)
    if version > CURRENT_VERSION:
        raise InputError(
            f"this project was saved by a newer version of Roundsman (file format version "
            f"{version}; this version reads up to {CURRENT_VERSION}). Please update "
            "Roundsman to open it",
            source=source,
        )
    if version == CURRENT_VERSION:
        # Nothing to migrate: a shallow copy will do, since project_from_dict only reads
        # the document and deep-copies each street's attrs (a deep copy here took a third
        # of the time to open a 20,000-street project).
        return dict(doc)
    out = copy.deepcopy(dict(doc))
    while version < CURRENT_VERSION:
        step = MIGRATIONS.get(version)
        if step is None:
            raise InputError(
                f"project file format version {version} cannot be read by this version "
                "of Roundsman",
                source=source,
            )
        out = step(out)
        version += 1
        out["version"] = version
    return out


def project_from_dict(doc: Any, *, source: str | None = None, name: str = "") -> Network:
    """Build a network from a parsed project document (see the module description)."""
    if not isinstance(doc, Mapping) or not str(doc.get("format", "")).startswith(FORMAT_NAME):
        raise InputError(
            f'this is not a Roundsman project (no "format": "{FORMAT_NAME}")', source=source
        )
    doc = migrate(doc, source=source)

    def fail(message: str) -> InputError:
        return InputError(message, source=source)

    crs = doc.get("crs")
    if crs is not None and not isinstance(crs, str):
        raise fail(f'"crs" must be text or null, not {crs!r}')
    net_name = doc.get("name")
    network = Network(net_name if isinstance(net_name, str) else name, crs)
    meta = doc.get("meta") or {}
    if not isinstance(meta, Mapping):
        raise fail('"meta" must be a JSON object')
    bad = find_nonfinite(meta)
    if bad is not None:
        raise fail(f"meta.{bad} is not a finite number; {NONFINITE_HINT}")
    network.meta = dict(meta)

    nodes = doc.get("nodes")
    segments = doc.get("segments")
    if not isinstance(nodes, list) or not isinstance(segments, list):
        raise fail('a project needs "nodes" and "segments" arrays')
    for i, item in enumerate(nodes):
        try:
            network.add_node(_node(item, f"nodes[{i}]", fail))
        except NetworkError as exc:
            raise fail(f"nodes[{i}]: {exc.message}") from None
    for i, item in enumerate(segments):
        where = f"segments[{i}]"
        if isinstance(item, Mapping) and isinstance(item.get("id"), str):
            name = item.get("name")
            label = f"{name} ({item['id']})" if isinstance(name, str) and name else item["id"]
            where += f" (street {label})"
        segment = _segment(item, where, fail)
        try:
            network.add_segment(segment)
        except NetworkError as exc:
            raise fail(f"{where}: {exc.message}") from None

    depot = doc.get("depot")
    if depot is not None:
        if not isinstance(depot, str) or depot not in network.nodes:
            raise fail(f"the depot {depot!r} is not a node of the network")
        network.depot = depot
    return network


def _text(item: Mapping[str, Any], key: str, where: str, fail: Fail) -> str:
    value = item.get(key)
    if not isinstance(value, str) or not value:
        raise fail(f"{where}: {key!r} must be non-empty text, not {value!r}")
    return value


def _coordinate(value: Any, what: str, where: str, fail: Fail) -> float | None:
    if value is None:
        return None
    if not is_number(value) or not math.isfinite(value):
        raise fail(f"{where}: {what} must be a finite number or null, not {value!r}")
    return float(value)


def _node(item: Any, where: str, fail: Fail) -> Node:
    if not isinstance(item, Mapping):
        raise fail(f"{where} is not a JSON object")
    node_id = _text(item, "id", where, fail)
    x = _coordinate(item.get("x"), "x", where, fail)
    y = _coordinate(item.get("y"), "y", where, fail)
    if (x is None) != (y is None):
        raise fail(f"{where} (node {node_id}): x and y must both be numbers or both null")
    turning = item.get("turning_place", False)
    if not isinstance(turning, bool):
        raise fail(f"{where} (node {node_id}): turning_place must be true or false")
    return Node(node_id, x, y, turning_place=turning)


def _segment(item: Any, where: str, fail: Fail) -> Segment:
    if not isinstance(item, Mapping):
        raise fail(f"{where} is not a JSON object")
    seg_id = _text(item, "id", where, fail)
    start = _text(item, "start", where, fail)
    end = _text(item, "end", where, fail)

    length = math.nan
    if item.get("length") is not None:
        length_value = item["length"]
        if not is_number(length_value) or not math.isfinite(length_value) or length_value <= 0:
            raise fail(f"{where}: length must be a positive number, not {length_value!r}")
        length = float(length_value)

    geometry = None
    if item.get("geometry") is not None:
        raw = item["geometry"]
        ok = isinstance(raw, list) and len(raw) >= 2
        ok = ok and all(
            isinstance(p, list)
            and len(p) == 2
            and all(is_number(v) and math.isfinite(v) for v in p)
            for p in raw
        )
        if not ok:
            raise fail(
                f"{where}: geometry must be an array of two or more [x, y] pairs of finite numbers"
            )
        geometry = tuple((float(x), float(y)) for x, y in raw)

    name = item.get("name") or ""
    if not isinstance(name, str):
        raise fail(f"{where}: name must be text")
    try:
        oneway = parse_oneway(item.get("oneway"))
        service = parse_service(item.get("service"))
    except ValueError as exc:
        raise fail(f"{where}: {exc}") from None
    passes = item.get("passes", 1)
    if not (is_number(passes) and float(passes).is_integer() and passes >= 1):
        raise fail(f"{where}: passes must be a whole number of at least 1, not {passes!r}")
    demand = item.get("demand", 0.0)
    if not (is_number(demand) and math.isfinite(demand)):
        raise fail(f"{where}: demand must be a finite number, not {demand!r}")
    attrs = item.get("attrs") or {}
    if not isinstance(attrs, Mapping):
        raise fail(f"{where}: attrs must be a JSON object")
    bad = find_nonfinite(attrs)
    if bad is not None:
        raise fail(f"{where}: attrs.{bad} is not a finite number; {NONFINITE_HINT}")
    try:
        return Segment(
            id=seg_id,
            start=start,
            end=end,
            length=length,
            geometry=geometry,
            name=name,
            oneway=oneway,
            service=service,
            passes=int(passes),
            demand=float(demand),
            attrs=copy.deepcopy(dict(attrs)),
        )
    except NetworkError as exc:
        raise fail(f"{where}: {exc.message}") from None
