"""The crew's route card as plain data, ready for any renderer (no Qt here).

:func:`build_card` gathers what the printed card shows:

* a header (district, route name, date or weekday, depot, vehicle, activity,
  side of the road);
* the overview map: the circuit's polylines in plan coordinates (service and
  deadhead apart) and numbered markers at the instruction points, numbered as
  the instruction rows;
* the instruction rows, already worded and formatted;
* the totals (service, deadhead, total, estimated time against the target,
  material where a spread rate is set, turn counts);
* the cautions block, in our own words, deferring to local codes, the
  employer's safe systems of work and licensed practice (README, "Safety");
* the fields the crew fills in by hand.

The renderer in ``app/card`` draws this on paper; tests and other front ends
can read it directly.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass

from core.activity import SWEEPING, Activity
from core.directions import Directions, Kind, build_directions, format_distance, step_coords
from core.model import Network
from core.plan import Plan
from core.turns import DriveSide, Turn

__all__ = [
    "CAUTIONS",
    "CREW_FIELDS",
    "CardContent",
    "CardHeader",
    "CardMap",
    "CardRow",
    "CardTotals",
    "build_card",
    "card_from_plan",
]

CAUTIONS: tuple[str, ...] = (
    "This plan is advisory. The local winter service plan or cleansing schedule, local codes "
    "of practice, the employer's safe systems of work and licensed practice come first.",
    "Obey traffic law and every sign and signal, whatever this card says.",
    "Check height, weight and width limits on the route before driving it with a large vehicle.",
    "Avoid reversing and U-turns. Turn only where it is safe and lawful; where reversing "
    "cannot be avoided, use a trained reversing assistant.",
    "Watch for people on foot, cyclists and parked cars while spreading or sweeping; use "
    "warning lights and markings as local rules require.",
    "Drivers' hours rules apply. Stop and report if the road is not as the plan assumes.",
)
"""The cautions printed on every card (our own words; README "Safety")."""

CREW_FIELDS: tuple[str, ...] = (
    "Driver",
    "Start time",
    "Finish time",
    "Odometer start",
    "Odometer finish",
    "Notes",
    "Signature",
)
"""The fields the crew fills in by hand."""


@dataclass(frozen=True, slots=True)
class CardHeader:
    district: str
    route: str
    day: str
    """A date (``"2026-12-02"``) or a weekday, as the supervisor gives it."""
    depot: str
    vehicle: str
    activity: str
    drive: str
    """``"traffic keeps right"`` or ``"traffic keeps left"``."""
    start: str
    """Planned departure ``"HH:MM"`` or ``""``."""


@dataclass(frozen=True, slots=True)
class CardMap:
    """Geometry of the overview map in the network's plan coordinates."""

    service_lines: tuple[tuple[tuple[float, float], ...], ...]
    deadhead_lines: tuple[tuple[tuple[float, float], ...], ...]
    markers: tuple[tuple[int, float, float], ...]
    """``(instruction number, x, y)``."""
    depot: tuple[float, float] | None
    bounds: tuple[float, float, float, float] | None
    """``(min x, min y, max x, max y)`` of all lines and markers."""
    background_lines: tuple[tuple[tuple[float, float], ...], ...] = ()
    """Other streets drawn faintly beneath the circuit (fleet cards: the rest of the
    network); not part of ``bounds``."""


@dataclass(frozen=True, slots=True)
class CardRow:
    """One printed instruction row; every cell is text."""

    number: str
    clock: str
    text: str
    service: str
    """Service changes and notes, e.g. ``"brushes down"``, ``"dead end: …"``."""
    distance: str
    """Distance to the next row."""
    at: str
    """Distance driven before this row, in km."""
    caution: bool
    """A U-turn or a turn across traffic (the renderer may mark it)."""
    kind: str


@dataclass(frozen=True, slots=True)
class CardTotals:
    service: str
    deadhead: str
    total: str
    time: str
    """Estimated time, with the finish clock when a start time is given."""
    target: str
    material: str
    """``"1.40 t salt at 10 g/m²"`` or ``""`` when nothing is spread."""
    turns: str
    service_m: float
    deadhead_m: float
    total_m: float
    hours: float
    material_kg: float
    extra: tuple[tuple[str, str], ...] = ()
    """Further labelled lines (fleet cards: load per trip, reload stops)."""


@dataclass(frozen=True, slots=True)
class CardContent:
    header: CardHeader
    map: CardMap
    rows: tuple[CardRow, ...]
    totals: CardTotals
    cautions: tuple[str, ...]
    crew_fields: tuple[str, ...]
    distance_unit: str = "km"
    """Unit of the rows' "at" column: ``"km"``, or ``""`` for networks in length units."""


def _hours_text(hours: float) -> str:
    minutes = round(hours * 60)
    return f"{minutes // 60} h {minutes % 60:02d} min"


def _map(network: Network, directions: Directions) -> CardMap:
    svc: list[tuple[tuple[float, float], ...]] = []
    dead: list[tuple[tuple[float, float], ...]] = []
    for s in directions.steps:
        c = step_coords(network, s)
        if c is None:
            continue
        (svc if s.service else dead).append(tuple((float(x), float(y)) for x, y in c))
    markers = tuple(
        (i.number, i.position[0], i.position[1])
        for i in directions.instructions
        if i.position is not None and i.kind in (Kind.DEPART, Kind.TURN, Kind.STOP)
    )
    depot = None
    if directions.steps:
        n = network.nodes[directions.steps[0].start]
        if n.has_xy:
            depot = (float(n.x), float(n.y))  # type: ignore[arg-type]
    xs = [p[0] for line in svc + dead for p in line] + [m[1] for m in markers]
    ys = [p[1] for line in svc + dead for p in line] + [m[2] for m in markers]
    bounds = (min(xs), min(ys), max(xs), max(ys)) if xs else None
    return CardMap(tuple(svc), tuple(dead), markers, depot, bounds)


def _rows(directions: Directions, metric: bool) -> tuple[CardRow, ...]:
    rows = []
    for i in directions.instructions:
        extra = [t for t in (i.service_text, i.note if i.kind != Kind.STOP else "") if t]
        if i.kind == Kind.STOP and i.duration_s > 0:
            extra.append(f"about {round(i.duration_s / 60)} min")
        if i.across_traffic and i.turn is not Turn.UTURN:
            extra.append("across traffic")
        dist = format_distance(i.length_m) if i.length_m > 0 else ""
        at = f"{i.start_m / 1000:.2f}" if metric else f"{i.start_m:.0f}"
        rows.append(
            CardRow(
                number=str(i.number),
                clock=i.clock if metric else "",
                text=i.text,
                service="; ".join(extra),
                distance=dist if metric or not dist else f"{i.length_m:.0f}",
                at=at,
                caution=i.turn is Turn.UTURN or i.across_traffic,
                kind=i.kind,
            )
        )
    return tuple(rows)


def _totals(directions: Directions, metric: bool) -> CardTotals:
    a = directions.activity

    def d(m: float) -> str:
        return f"{m / 1000:.2f} km" if metric else f"{m:.0f} (length units)"

    hours = directions.total_s / 3600.0
    time = _hours_text(hours)
    if directions.start is not None:
        time += f" ({directions.clock_at(0)} to {directions.finish_clock})"
    if not metric:
        time = "not estimated: the lengths are not in metres"
    share = directions.deadhead_m / directions.total_m * 100 if directions.total_m > 0 else 0.0
    material = ""
    if a.spreads:
        kg = directions.material_kg
        amount = f"{kg / 1000:.2f} t" if kg >= 1000 else f"{kg:.0f} kg"
        material = f"{amount} {a.material or 'material'} at {a.spread_rate_g_m2:g} g/m²"
        if a.capacity_unit == "t" and a.capacity > 0:
            loads = math.ceil(kg / 1000.0 / a.capacity - 1e-9) if kg > 0 else 0
            material += f" ({loads} load{'s' if loads != 1 else ''} of {a.capacity:g} t)"
    # Counted as the plan reports them (core.plan.TurnCounts): bears are straight on.
    c = directions.turn_counts
    left = c.get("left", 0) + c.get("sharp left", 0)
    right = c.get("right", 0) + c.get("sharp right", 0)
    ahead = c.get("straight", 0) + c.get("bear left", 0) + c.get("bear right", 0)
    turns = f"{left} left, {right} right, {ahead} straight on, {c.get('U-turn', 0)} U-turns"
    return CardTotals(
        service=d(directions.service_m),
        deadhead=f"{d(directions.deadhead_m)} ({share:.1f} %)",
        total=d(directions.total_m),
        time=time,
        target=_hours_text(a.time_target_h),
        material=material,
        turns=turns,
        service_m=directions.service_m,
        deadhead_m=directions.deadhead_m,
        total_m=directions.total_m,
        hours=hours,
        material_kg=directions.material_kg,
    )


def build_card(
    network: Network,
    directions: Directions,
    *,
    route: str = "",
    day: str | dt.date | None = None,
    depot: str = "",
    vehicle: str = "",
) -> CardContent:
    """The route card's content for one circuit.

    Parameters
    ----------
    network
        The network the directions run on (for the map geometry).
    directions
        From :func:`core.directions.build_directions`.
    route, day, depot, vehicle
        Header fields; ``day`` may be a date or free text such as a weekday.
        Empty fields print as blanks for the crew to fill in.

    Notes
    -----
    Plain gathering and formatting, O(n + v) for n instructions and v map
    vertices.
    """
    metric = network.crs is not None
    day_text = day.isoformat() if isinstance(day, dt.date) else day or ""
    first = directions.steps[0].start if directions.steps else ""
    header = CardHeader(
        district=network.name or "",
        route=route,
        day=day_text,
        depot=depot or first,
        vehicle=vehicle,
        activity=directions.activity.label,
        drive=f"traffic keeps {directions.drive.value}",
        start=directions.clock_at(0) if directions.start is not None else "",
    )
    return CardContent(
        header=header,
        map=_map(network, directions),
        rows=_rows(directions, metric),
        totals=_totals(directions, metric),
        cautions=CAUTIONS,
        crew_fields=CREW_FIELDS,
        distance_unit="km" if metric else "",
    )


def card_from_plan(
    network: Network,
    plan: Plan,
    *,
    activity: Activity = SWEEPING,
    drive: DriveSide | str = DriveSide.RIGHT,
    start: str | dt.time | dt.datetime | None = None,
    route: str = "",
    day: str | dt.date | None = None,
    vehicle: str = "",
) -> CardContent:
    """Directions and card for a one-circuit plan in one call (for the window)."""
    directions = build_directions(
        network,
        plan.steps,
        activity=activity,
        drive=drive,
        start=start,
        depot_label=f"the depot ({plan.depot})",
    )
    return build_card(network, directions, route=route, day=day, depot=plan.depot, vehicle=vehicle)
