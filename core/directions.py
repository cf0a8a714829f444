"""Driving directions: the circuit as the instructions a driver reads.

From a :class:`~core.model.Network` and the ordered :class:`~core.plan.Step`
list of a circuit (a :class:`~core.plan.Plan`'s steps or one fleet trip),
:func:`build_directions` makes numbered :class:`Instruction` rows:

* consecutive passes along the same named street are one instruction (a
  U-turn or a stop always starts a new one);
* the turn into each instruction is named from the street geometry with
  :mod:`core.turns` (straight, bear, turn, sharp, U-turn; left or right), and
  flagged when it crosses the oncoming lane for the given side of the road;
* each row carries its length (the distance to the next instruction), the
  cumulative distance at its start, where service starts and stops along it
  (in the activity's own words, e.g. "brushes down" / "spreader off") and the
  estimated clock time from a start time and the activity's speeds;
* stop events (a refill at the salt store, a tip run) can be placed between
  steps; each becomes its own row.

Speeds: service passes run at the activity's service speed, deadhead at its
deadhead speed; a street's ``speed_kmh`` attribute (DEVELOPERS.md, street
attributes) replaces the deadhead speed on that street and caps the service
speed there.
"""

from __future__ import annotations

import datetime as dt
import math
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from core.activity import SWEEPING, Activity
from core.errors import NetworkError, RoundsmanError
from core.model import Coords, Network, Segment
from core.plan import Step
from core.turns import (
    DriveSide,
    Turn,
    crosses_traffic,
    leaving_bearing,
    parse_drive_side,
    pass_turn,
    segment_coords,
)

__all__ = [
    "Directions",
    "Instruction",
    "Kind",
    "ServiceEvent",
    "StopEvent",
    "build_directions",
    "compass_point",
    "format_distance",
    "parse_clock",
    "step_coords",
    "street_label",
]


class Kind:
    """What an instruction row is (plain strings, stable in the CSV export)."""

    DEPART = "depart"
    TURN = "turn"
    STOP = "stop"
    ARRIVE = "arrive"
    CHOICES = (DEPART, TURN, STOP, ARRIVE)


@dataclass(frozen=True, slots=True)
class StopEvent:
    """A halt inserted between two steps (refill, tip run, crew break)."""

    note: str
    minutes: float = 0.0
    """How long the stop takes; counted in the clock times."""


@dataclass(frozen=True, slots=True)
class ServiceEvent:
    """Service switched on or off along an instruction."""

    on: bool
    offset_m: float
    """Distance from the start of the instruction."""
    at_m: float
    """Cumulative distance from the start of the circuit."""
    text: str
    """The activity's wording, e.g. ``"brushes down"``."""


@dataclass(frozen=True, slots=True)
class Instruction:
    """One row of the driver's directions."""

    number: int
    """1-based, as printed on the card and the map markers."""
    kind: str
    """One of :attr:`Kind.CHOICES`."""
    text: str
    """The instruction in words, e.g. ``"Turn left onto Mill Lane"``."""
    street: str
    """The street driven (its name, or our description of an unnamed one)."""
    turn: Turn | None
    """The manoeuvre into this row (``None`` for depart, stop and arrive)."""
    angle: float
    """Signed change of bearing in degrees (positive to the right)."""
    across_traffic: bool
    """True when the turn crosses the oncoming lane for the side of the road driven."""
    node: str
    """The node where the instruction begins."""
    position: tuple[float, float] | None
    """That node's coordinates (network CRS), if known."""
    steps: tuple[int, ...]
    """Indices into the step list covered by this row (empty for stop/arrive)."""
    segments: tuple[str, ...]
    length_m: float
    """Distance from here to the next instruction."""
    start_m: float
    """Cumulative distance at the start of this row."""
    service_m: float
    deadhead_m: float
    events: tuple[ServiceEvent, ...]
    start_s: float
    """Seconds from the start of the circuit to this row."""
    duration_s: float
    clock: str
    """``"HH:MM"`` at the start of this row, or ``""`` without a start time."""
    note: str = ""
    """Stop note, or extra words (e.g. "dead end: turn the vehicle")."""

    @property
    def end_m(self) -> float:
        return self.start_m + self.length_m

    @property
    def service_text(self) -> str:
        """The service changes along this row, e.g. ``"brushes up after 120 m"``."""
        parts = []
        for e in self.events:
            if e.offset_m < 0.5:
                parts.append(e.text)
            else:
                parts.append(f"{e.text} after {format_distance(e.offset_m)}")
        return "; ".join(parts)


@dataclass(frozen=True, slots=True)
class Directions:
    """The numbered instructions of one circuit, with its totals."""

    instructions: tuple[Instruction, ...]
    activity: Activity
    drive: DriveSide
    start: dt.datetime | None
    total_m: float
    service_m: float
    deadhead_m: float
    total_s: float
    """Estimated time from departure to arrival, stops included."""
    stop_s: float
    turn_counts: dict[str, int] = field(default_factory=dict)
    """Turns between consecutive passes by kind (:class:`Turn` value), plus
    ``"across traffic"`` (turns across the oncoming lane, U-turns aside)."""

    steps: tuple[Step, ...] = ()
    """The passes these directions describe (what the map exports draw)."""
    material_kg: float = 0.0
    """Material spread over the circuit at the activity's rate (0 if it spreads none)."""

    def clock_at(self, seconds: float) -> str:
        return _clock(self.start, seconds)

    @property
    def finish_clock(self) -> str:
        return _clock(self.start, self.total_s)


# -- small helpers -----------------------------------------------------------


def format_distance(metres: float) -> str:
    """``"85 m"``, ``"1.25 km"``: how a driver reads a distance."""
    if metres < 1000:
        return f"{metres:.0f} m"
    return f"{metres / 1000:.2f} km"


def street_label(seg: Segment) -> str:
    """The street's name, or our description of an unnamed one."""
    return seg.name.strip() if seg.name and seg.name.strip() else f"unnamed street {seg.id}"


_COMPASS = (
    "north",
    "north-east",
    "east",
    "south-east",
    "south",
    "south-west",
    "west",
    "north-west",
)


def compass_point(bearing_deg: float) -> str:
    """The nearest of eight compass points to a (grid) bearing."""
    return _COMPASS[int(((bearing_deg % 360.0) + 22.5) // 45.0) % 8]


def parse_clock(value: str | dt.time | dt.datetime | None) -> dt.datetime | None:
    """A start time from ``"HH:MM"``, a :class:`datetime.time` or a datetime.

    A bare time is placed on today's date so that clock times roll past midnight.
    """
    if value is None or isinstance(value, dt.datetime):
        return value
    if isinstance(value, dt.time):
        return dt.datetime.combine(dt.date.today(), value)
    text = str(value).strip()
    try:
        t = dt.datetime.strptime(text, "%H:%M").time()
    except ValueError:
        raise RoundsmanError(
            f"start time {value!r} is not a time of day as HH:MM (e.g. 05:30)"
        ) from None
    return dt.datetime.combine(dt.date.today(), t)


def _clock(start: dt.datetime | None, seconds: float) -> str:
    # To the nearest minute (half a minute rounds up).
    minutes = math.floor(seconds / 60.0 + 0.5)
    if start is None:
        # No departure time: the time since leaving, so the crew can still pace the route.
        return f"+{minutes // 60}:{minutes % 60:02d}"
    return (start + dt.timedelta(minutes=minutes)).strftime("%H:%M")


def step_coords(network: Network, step: Step) -> Coords | None:
    """The polyline of one pass in the direction driven, or ``None`` without
    coordinates."""
    seg = network.segments[step.segment]
    coords = segment_coords(network, seg)
    if coords is None:
        return None
    return coords if step.forward else tuple(reversed(coords))


def _speed_kmh(activity: Activity, seg: Segment, service: bool) -> float:
    """The speed of one pass: street ``speed_kmh`` overrides deadhead, caps service."""
    street = seg.attrs.get("speed_kmh") if seg.attrs else None
    try:
        v = float(street) if street is not None else math.nan
    except (TypeError, ValueError):
        v = math.nan
    if service:
        base = activity.service_speed_kmh
        return min(base, v) if math.isfinite(v) and v > 0 else base
    return v if math.isfinite(v) and v > 0 else activity.deadhead_speed_kmh


def _pass_material_kg(activity: Activity, seg: Segment, length_m: float) -> float:
    """Material one service pass spreads: rate x width x length (trade-notes
    arithmetic), the street's treated width shared among its required passes."""
    if not activity.spreads:
        return 0.0
    passes = max(1, sum(seg.required_passes()))
    return activity.material_kg(length_m, activity.width_for(seg.attrs) / passes)


def _check_steps(network: Network, steps: Sequence[Step]) -> None:
    for i, s in enumerate(steps):
        if s.segment not in network.segments:
            raise NetworkError(
                f"step {i + 1} drives street {s.segment}, which is not in the network",
                segments=[s.segment],
            )
        if i and steps[i - 1].end != s.start:
            raise NetworkError(
                f"step {i + 1} (street {network.segments[s.segment].label}) starts at node "
                f"{s.start}, but the step before ends at node {steps[i - 1].end}",
                segments=[s.segment],
                nodes=[s.start, steps[i - 1].end],
            )


def _stops(stops: Mapping[int, str | StopEvent] | None, n: int) -> dict[int, StopEvent]:
    out: dict[int, StopEvent] = {}
    for k, v in (stops or {}).items():
        if not isinstance(k, int) or not 0 <= k <= n:
            raise RoundsmanError(
                f"stop position {k!r} is not a step index from 0 to {n} "
                "(the stop comes before that step)"
            )
        out[k] = v if isinstance(v, StopEvent) else StopEvent(str(v))
    return out


def _turn_words(turn: Turn, street: str, same_street: bool) -> str:
    if turn is Turn.UTURN:
        return f"Turn round, back along {street}"
    if turn is Turn.STRAIGHT:
        return f"Keep on along {street}" if same_street else f"Go straight on into {street}"
    words = {
        Turn.BEAR_LEFT: "Bear left",
        Turn.BEAR_RIGHT: "Bear right",
        Turn.LEFT: "Turn left",
        Turn.RIGHT: "Turn right",
        Turn.SHARP_LEFT: "Sharp left",
        Turn.SHARP_RIGHT: "Sharp right",
    }[turn]
    return f"{words} along {street}" if same_street else f"{words} into {street}"


def _degrees(network: Network) -> Counter[str]:
    """Street ends at each node (a loop counts twice). O(m)."""
    deg: Counter[str] = Counter()
    for seg in network.segments.values():
        deg[seg.start] += 1
        deg[seg.end] += 1
    return deg


def _uturn_note(network: Network, node: str, degree: int) -> str:
    if degree <= 1:
        return "dead end"
    if network.nodes[node].turning_place:
        return "turning place"
    return "no turning place marked"


# -- the builder ---------------------------------------------------------------


_AHEAD = (Turn.STRAIGHT, Turn.BEAR_LEFT, Turn.BEAR_RIGHT)


def _groups(
    network: Network,
    steps: Sequence[Step],
    stops: Mapping[int, StopEvent],
    degree: Mapping[str, int],
) -> list[list[int]]:
    """Runs of step indices that make one instruction each.

    Our own rule: a run continues while the next pass is on the same named
    street and no stop falls between them, provided the driver has nothing to
    do at the node: the way runs on ahead (straight or bearing), or the street
    only bends there (two street ends, no other way to take).  A turn to stay
    on the same street at a junction, and every U-turn, start a new row.  O(n).
    """
    groups: list[list[int]] = []
    for i, s in enumerate(steps):
        if groups and i not in stops:
            prev = steps[i - 1]
            a, b = network.segments[prev.segment], network.segments[s.segment]
            named = bool(a.name.strip()) and a.name.strip() == b.name.strip()
            if named:
                turn, _ = pass_turn(network, a, prev.forward, b, s.forward)
                bend_only = degree.get(s.start, 0) <= 2 and turn is not Turn.UTURN
                if turn in _AHEAD or bend_only:
                    groups[-1].append(i)
                    continue
        groups.append([i])
    return groups


def build_directions(
    network: Network,
    steps: Sequence[Step],
    *,
    activity: Activity = SWEEPING,
    drive: DriveSide | str = DriveSide.RIGHT,
    start: str | dt.time | dt.datetime | None = None,
    stops: Mapping[int, str | StopEvent] | None = None,
    depot_label: str = "the depot",
) -> Directions:
    """The driver's directions for one circuit.

    Parameters
    ----------
    network
        The street network the steps run on; not modified.
    steps
        The passes in driving order (``Plan.steps`` or one fleet trip).
    activity
        Sets the speeds and the words for service on and off.
    drive
        The side of the road traffic keeps to (which turns cross traffic).
    start
        Departure time (``"HH:MM"``, a time or a datetime) for clock times.
    stops
        Stop events by step index: the stop comes before that step
        (``len(steps)`` puts it at the end, before arriving).
    depot_label
        How the first and last rows name the start node.

    Returns
    -------
    Directions

    Notes
    -----
    Turns are named from grid bearings (``atan2(dx, dy)``, Ghilani & Wolf,
    *Elementary Surveying*, 2012, via :func:`core.turns.pass_turn`).  Merging
    consecutive passes is our own rule (see :func:`_groups`).  O(n + m) for
    n steps and m streets (the street ends at each node are counted once).
    """
    side = parse_drive_side(drive)
    if not isinstance(activity, Activity):
        raise RoundsmanError(f"activity must be an Activity, not {type(activity).__name__}")
    begin = parse_clock(start)
    _check_steps(network, steps)
    stop_map = _stops(stops, len(steps))
    degree = _degrees(network)
    groups = _groups(network, steps, stop_map, degree)

    rows: list[Instruction] = []
    counts: Counter[str] = Counter()
    pos_m = 0.0
    t_s = 0.0
    stop_s = 0.0
    serving = False
    service_total = 0.0
    deadhead_total = 0.0
    material_kg = 0.0

    def node_xy(node_id: str) -> tuple[float, float] | None:
        n = network.nodes[node_id]
        return (float(n.x), float(n.y)) if n.has_xy else None  # type: ignore[arg-type]

    def add_at_node(
        kind: str,
        text: str,
        node: str,
        position: tuple[float, float] | None,
        duration_s: float = 0.0,
        note: str = "",
    ) -> None:
        """A row that drives nowhere (stop, arrive): brushes up first if they were down."""
        nonlocal serving
        events: tuple[ServiceEvent, ...] = ()
        if serving:
            events = (ServiceEvent(False, 0.0, pos_m, activity.service_off),)
            serving = False
        rows.append(
            Instruction(
                number=len(rows) + 1,
                kind=kind,
                text=text,
                street="",
                turn=None,
                angle=0.0,
                across_traffic=False,
                node=node,
                position=position,
                steps=(),
                segments=(),
                length_m=0.0,
                start_m=pos_m,
                service_m=0.0,
                deadhead_m=0.0,
                events=events,
                start_s=t_s,
                duration_s=duration_s,
                clock=_clock(begin, t_s),
                note=note,
            )
        )

    def add_stop(ev: StopEvent, node: str) -> None:
        nonlocal t_s, stop_s
        dur = max(0.0, ev.minutes) * 60.0
        add_at_node(Kind.STOP, f"Stop: {ev.note}", node, node_xy(node), dur, ev.note)
        t_s += dur
        stop_s += dur

    for g_index, group in enumerate(groups):
        first = steps[group[0]]
        if group[0] in stop_map:
            add_stop(stop_map[group[0]], first.start)
        seg0 = network.segments[first.segment]
        street = street_label(seg0)
        note = ""
        if g_index == 0:
            turn: Turn | None = None
            angle = 0.0
            across = False
            coords = step_coords(network, first)
            heading = ""
            if coords is not None:
                try:
                    heading = f" heading {compass_point(leaving_bearing(coords, True))}"
                except ValueError:
                    heading = ""
            kind = Kind.DEPART
            text = f"Leave {depot_label} along {street}{heading}"
        else:
            prev = steps[group[0] - 1]
            seg_prev = network.segments[prev.segment]
            turn, angle = pass_turn(network, seg_prev, prev.forward, seg0, first.forward)
            across = crosses_traffic(turn, side)
            same = street_label(seg_prev) == street
            kind = Kind.TURN
            text = _turn_words(turn, street, same)
            no_shape = (
                segment_coords(network, seg_prev) is None or segment_coords(network, seg0) is None
            )
            if no_shape and turn is not Turn.UTURN:
                # Without coordinates the turn cannot be told, only the street.
                text = f"Continue along {street}" if same else f"Continue into {street}"
            if turn is Turn.UTURN:
                note = _uturn_note(network, first.start, degree[first.start])

        events: list[ServiceEvent] = []
        length = 0.0
        svc = 0.0
        dead = 0.0
        dur = 0.0
        offset = 0.0
        for i in group:
            s = steps[i]
            if s.service != serving:
                serving = s.service
                words = activity.service_on if serving else activity.service_off
                events.append(ServiceEvent(serving, offset, pos_m + offset, words))
            seg = network.segments[s.segment]
            length += s.length
            offset += s.length
            if s.service:
                svc += s.length
                material_kg += _pass_material_kg(activity, seg, s.length)
            else:
                dead += s.length
            dur += s.length / 1000.0 / _speed_kmh(activity, seg, s.service) * 3600.0
        rows.append(
            Instruction(
                number=len(rows) + 1,
                kind=kind,
                text=text,
                street=street,
                turn=turn,
                angle=angle,
                across_traffic=across,
                node=first.start,
                position=node_xy(first.start),
                steps=tuple(group),
                segments=tuple(steps[i].segment for i in group),
                length_m=length,
                start_m=pos_m,
                service_m=svc,
                deadhead_m=dead,
                events=tuple(events),
                start_s=t_s,
                duration_s=dur,
                clock=_clock(begin, t_s),
                note=note,
            )
        )
        pos_m += length
        t_s += dur
        service_total += svc
        deadhead_total += dead

    # Turns between consecutive passes, merged or not: the counts the plan reports.
    for i in range(1, len(steps)):
        a, b = steps[i - 1], steps[i]
        t, _ = pass_turn(
            network, network.segments[a.segment], a.forward, network.segments[b.segment], b.forward
        )
        counts[t.value] += 1
        if t is not Turn.UTURN and crosses_traffic(t, side):
            counts["across traffic"] += 1

    end_node = steps[-1].end if steps else (network.depot or "")
    if len(steps) in stop_map:
        add_stop(stop_map[len(steps)], end_node)
    if steps or stop_map:
        back = bool(steps) and end_node == steps[0].start
        add_at_node(
            Kind.ARRIVE,
            f"Arrive back at {depot_label}" if back else f"Arrive at node {end_node}",
            end_node,
            node_xy(end_node) if end_node in network.nodes else None,
        )
    return Directions(
        instructions=tuple(rows),
        activity=activity,
        drive=side,
        start=begin,
        total_m=pos_m,
        service_m=service_total,
        deadhead_m=deadhead_total,
        total_s=t_s,
        stop_s=stop_s,
        turn_counts=dict(counts),
        steps=tuple(steps),
        material_kg=material_kg,
    )
