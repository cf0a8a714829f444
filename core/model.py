"""The street network model: nodes, street segments and what each needs.

A :class:`Network` holds :class:`Node` objects (junctions, dead ends, bends
where a street changes name) and :class:`Segment` objects (one stretch of
street between two nodes).  Coordinates are metres in the network's projected
CRS; networks read from research formats may have no coordinates at all.

Segments are immutable; editing replaces a segment with a changed copy
(``dataclasses.replace``), so a solver holding a network never sees it change
under its feet, and undo in the window is a matter of putting the old object
back.  Parallel segments between the same two nodes and loops (a segment
from a node to itself, such as a cul-de-sac turning circle) are legal.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field, replace
from enum import StrEnum
from typing import Any

from core.errors import NetworkError


class OneWay(StrEnum):
    """Which way traffic may drive along a segment."""

    NO = "no"
    """Two-way street."""
    FORWARD = "forward"
    """One-way from the segment's ``start`` node to its ``end`` node."""
    BACKWARD = "backward"
    """One-way from ``end`` to ``start``."""


class Service(StrEnum):
    """What a segment needs from the crew.

    ``passes`` on the segment multiplies the need: a street with two lanes in
    each direction that are gritted one lane per pass has ``passes=2``.
    """

    NONE = "none"
    """No service; the street may be driven as deadhead."""
    EITHER = "either"
    """``passes`` service passes, each in whichever direction traffic allows."""
    ALONG = "along"
    """``passes`` service passes in the one-way direction (one-way streets only)."""
    BOTH = "both"
    """Both kerbs: a two-way street ``passes`` passes each way; a one-way street
    ``2 * passes`` passes along it."""


def _choices(enum: type[StrEnum]) -> str:
    return ", ".join(repr(m.value) for m in enum)


def parse_oneway(value: Any, *, where: str = "") -> OneWay:
    """Read a one-way value in any of the usual spellings.

    Accepts ``True``/``"yes"``/``"true"``/``"1"``/``"forward"`` (one-way along
    the line's drawing direction), ``"-1"``/``"reverse"``/``"backward"``
    (against it) and ``False``/``None``/``"no"``/``"false"``/``"0"`` (two-way).
    """
    if value is None or value is False:
        return OneWay.NO
    if value is True:
        return OneWay.FORWARD
    if isinstance(value, int | float) and not isinstance(value, bool):
        value = str(int(value)) if float(value).is_integer() else str(value)
    text = str(value).strip().lower()
    if text in ("yes", "true", "1", "forward", "fwd"):
        return OneWay.FORWARD
    if text in ("-1", "reverse", "backward", "back"):
        return OneWay.BACKWARD
    if text in ("no", "false", "0", "", "two-way", "twoway"):
        return OneWay.NO
    raise ValueError(
        f"{where}one-way value {value!r} is not understood; use one of "
        "'no', 'yes'/'forward' or '-1'/'backward'"
    )


def parse_service(value: Any, *, where: str = "") -> Service:
    """Read a service requirement; the valid choices are listed in the error."""
    if value is None:
        return Service.EITHER
    if value is False:
        return Service.NONE
    text = str(value).strip().lower()
    aliases = {"once": Service.EITHER, "no": Service.NONE, "yes": Service.EITHER}
    if text in aliases:
        return aliases[text]
    try:
        return Service(text)
    except ValueError:
        raise ValueError(
            f"{where}service value {value!r} is not one of {_choices(Service)}"
        ) from None


@dataclass(frozen=True, slots=True)
class Node:
    """A junction, dead end or bend.  ``x``/``y`` are metres, or ``None``
    when the network came without coordinates (research formats)."""

    id: str
    x: float | None = None
    y: float | None = None
    turning_place: bool = False
    """A U-turn is allowed here even though it is not a dead end."""

    @property
    def has_xy(self) -> bool:
        return self.x is not None and self.y is not None


Coords = tuple[tuple[float, float], ...]


def polyline_length(coords: Coords) -> float:
    """Planar length of a polyline in the units of its coordinates."""
    return sum(math.hypot(x1 - x0, y1 - y0) for (x0, y0), (x1, y1) in itertools.pairwise(coords))


@dataclass(frozen=True, slots=True)
class Segment:
    """One stretch of street between two nodes.

    ``length`` is in metres.  When ``length_given`` is false it was computed
    from ``geometry`` and follows the geometry when the segment is edited.
    """

    id: str
    start: str
    end: str
    length: float = math.nan
    geometry: Coords | None = None
    name: str = ""
    oneway: OneWay = OneWay.NO
    service: Service = Service.EITHER
    passes: int = 1
    demand: float = 0.0
    """Material or load the service consumes (research formats and fleet plans)."""
    length_given: bool = False
    attrs: Mapping[str, Any] = field(default_factory=dict, compare=False, hash=False)
    """Further properties kept for the window and for later planning
    (priority class, service days, speeds)."""

    def __post_init__(self) -> None:
        if math.isnan(self.length):
            if self.geometry is None or len(self.geometry) < 2:
                raise NetworkError(
                    f"street {self.label}: no length given and no geometry to measure",
                    segments=[self.id],
                )
            object.__setattr__(self, "length", polyline_length(self.geometry))
        else:
            object.__setattr__(self, "length_given", True)

    @property
    def label(self) -> str:
        """``"Mill Lane (s12)"`` or ``"s12"``, for messages."""
        return f"{self.name} ({self.id})" if self.name else self.id

    @property
    def is_loop(self) -> bool:
        return self.start == self.end

    def with_geometry(self, coords: Coords) -> Segment:
        """A copy with new geometry; the length follows unless it was given."""
        if self.length_given:
            return replace(self, geometry=coords)
        return replace(self, geometry=coords, length=math.nan, length_given=False)

    def required_passes(self) -> tuple[int, int, int]:
        """Service passes needed as ``(forward, backward, either)``.

        Forward is ``start``→``end``.  A one-way street's ``either`` becomes
        passes along it.
        """
        p = self.passes
        svc = self.service
        if svc is Service.NONE:
            return (0, 0, 0)
        if self.oneway is OneWay.NO:
            if svc is Service.EITHER:
                return (0, 0, p)
            if svc is Service.BOTH:
                return (p, p, 0)
            raise NetworkError(
                f"street {self.label}: service 'along' needs a one-way street; "
                "use 'either' or 'both' for a two-way street",
                segments=[self.id],
            )
        k = 2 * p if svc is Service.BOTH else p
        return (k, 0, 0) if self.oneway is OneWay.FORWARD else (0, k, 0)


class Network:
    """A district's street network.

    Parameters
    ----------
    name
        A label for the district.
    crs
        The projected CRS of the coordinates (any string pyproj accepts, e.g.
        ``"EPSG:32630"``), or ``None`` for networks without geography.
    """

    def __init__(self, name: str = "", crs: str | None = None) -> None:
        self.name = name
        self.crs = crs
        self.nodes: dict[str, Node] = {}
        self.segments: dict[str, Segment] = {}
        self.depot: str | None = None
        self.meta: dict[str, Any] = {}
        """Extra facts from the source file (vehicles, capacity, refill sites)."""

    # -- building -----------------------------------------------------------
    def add_node(self, node: Node) -> Node:
        if node.id in self.nodes:
            raise NetworkError(f"node {node.id} is defined twice", nodes=[node.id])
        for v in (node.x, node.y):
            if v is not None and not math.isfinite(v):
                raise NetworkError(
                    f"node {node.id} has a coordinate that is not a finite number ({v})",
                    nodes=[node.id],
                )
        self.nodes[node.id] = node
        return node

    def add_segment(self, seg: Segment) -> Segment:
        """Add a segment after checking it against the rules of the model."""
        check_segment(seg, self.nodes)
        if seg.id in self.segments:
            raise NetworkError(f"street id {seg.id} is used twice", segments=[seg.id])
        self.segments[seg.id] = seg
        return seg

    def replace_segment(self, seg: Segment) -> None:
        check_segment(seg, self.nodes)
        if seg.id not in self.segments:
            raise NetworkError(f"no street with id {seg.id}", segments=[seg.id])
        self.segments[seg.id] = seg

    def copy(self) -> Network:
        """A copy that shares the (immutable) nodes and segments."""
        other = Network(self.name, self.crs)
        other.nodes = dict(self.nodes)
        other.segments = dict(self.segments)
        other.depot = self.depot
        other.meta = dict(self.meta)
        return other

    # -- queries ------------------------------------------------------------
    def __len__(self) -> int:
        return len(self.segments)

    def __iter__(self) -> Iterator[Segment]:
        return iter(self.segments.values())

    def required(self) -> Iterable[Segment]:
        return (s for s in self.segments.values() if s.service is not Service.NONE)

    def street_names(self) -> dict[str, str]:
        return {s.id: s.name for s in self.segments.values()}

    @property
    def has_coordinates(self) -> bool:
        return bool(self.nodes) and all(n.has_xy for n in self.nodes.values())

    def nearest_node(self, x: float, y: float) -> str:
        """The id of the node nearest to ``(x, y)`` (network units)."""
        best, best_d = None, math.inf
        for n in self.nodes.values():
            if n.has_xy:
                d = math.hypot(n.x - x, n.y - y)  # type: ignore[operator]
                if d < best_d:
                    best, best_d = n.id, d
        if best is None:
            raise NetworkError("this network has no node coordinates to snap a point to")
        return best

    def summary(self) -> dict[str, float | int]:
        req = list(self.required())
        return {
            "nodes": len(self.nodes),
            "segments": len(self.segments),
            "required_segments": len(req),
            "one_way_segments": sum(1 for s in self if s.oneway is not OneWay.NO),
            "length_m": sum(s.length for s in self),
        }


def check_segment(seg: Segment, nodes: Mapping[str, Node]) -> None:
    """Raise :class:`NetworkError` naming the street if it breaks a model rule."""
    for end in (seg.start, seg.end):
        if end not in nodes:
            raise NetworkError(
                f"street {seg.label} ends at node {end}, which is not in the network",
                segments=[seg.id],
                nodes=[end],
            )
    if not math.isfinite(seg.length) or seg.length <= 0:
        raise NetworkError(
            f"street {seg.label} has length {seg.length!r}; lengths must be positive numbers",
            segments=[seg.id],
        )
    if not isinstance(seg.passes, int) or seg.passes < 1:
        raise NetworkError(
            f"street {seg.label}: passes must be a whole number of at least 1, not {seg.passes!r}",
            segments=[seg.id],
        )
    if seg.geometry is not None:
        for x, y in seg.geometry:
            if not (math.isfinite(x) and math.isfinite(y)):
                raise NetworkError(
                    f"street {seg.label} has a coordinate that is not a finite number",
                    segments=[seg.id],
                )
    seg.required_passes()  # raises for 'along' on a two-way street
