"""Route cards and directions for fleet plans: one card per vehicle route.

A fleet plan (:class:`core.fleet.result.FleetPlan`) has one route per vehicle and
one trip per load.  For the crew each route is one drive from the depot and back,
so a route prints with the same layout as a one-circuit card
(:func:`core.card.build_card`); what differs:

* the header names the route ("Route 2 of 3 · vehicle 4"), the vehicle and the
  day (the plan's service day as a weekday, or what the supervisor gives);
* every reload between two trips is its own instruction row, worded for the
  activity ("Stop: empty the hopper at the tipping point (n12)" for sweeping,
  "Stop: reload salt at the salt store (n3)" for gritting), with the minutes
  it takes counted in the clock times (:data:`STOP_MINUTES`);
* the totals add the load of each trip and the number of reloads;
* the overview map is zoomed to the route and draws the rest of the network
  faintly beneath it.

Everything here is plain data (no Qt); ``app/card`` draws it.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from core.activity import SWEEPING, Activity
from core.card import CardContent, build_card
from core.directions import Directions, StopEvent, build_directions
from core.errors import FleetError
from core.fleet.result import FleetPlan, Route
from core.fleet.settings import WEEKDAYS
from core.model import Network
from core.turns import DriveSide

if TYPE_CHECKING:
    from core.files.fleet_exports import RouteExport

__all__ = [
    "DEFAULT_STOP_MINUTES",
    "STOP_MINUTES",
    "RouteCard",
    "fleet_cards",
    "route_directions",
    "route_exports",
    "route_label",
    "route_stops",
    "stop_note",
    "trip_of_steps",
    "weekday_code",
    "weekday_name",
]

STOP_MINUTES: dict[str, float] = {
    # Reloading a gritter from a salt store with a loading shovel, weighbridge aside:
    # about 15 minutes (from memory; local depots differ widely).
    "gritting": 15.0,
    # Driving onto a tipping point, tipping the hopper and washing down the tail gate:
    # about 20 minutes (from memory; queues at the tip come on top).
    "sweeping": 20.0,
}
"""Minutes one reload stop takes, by activity name (both from memory; override with
``--stop-minutes``)."""
DEFAULT_STOP_MINUTES = 15.0
"""Minutes of a reload stop for activities not in :data:`STOP_MINUTES` (from memory)."""

_DAY_NAMES = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")

# Our own wording, per activity: what the crew does at the stop and what the place is.
_STOP_VERB = {"sweeping": "empty the hopper at", "gritting": "reload salt at"}
_PLACE = {"sweeping": "the tipping point", "gritting": "the salt store"}


@dataclass(frozen=True, slots=True)
class RouteCard:
    """One vehicle's card: the route, its directions and the card content."""

    number: int
    """1-based position of the route in the plan."""
    of: int
    """Number of routes in the plan."""
    route: Route
    directions: Directions
    content: CardContent
    stops: tuple[tuple[int, str], ...]
    """The reloads: (steps driven before the stop, node), as in ``Route.refill_stops``."""
    loads: tuple[float, ...]
    """Load of each trip, in the capacity's unit."""


def weekday_code(text: str | dt.date | None) -> str | None:
    """The weekday (``"mon"`` … ``"sun"``) a day text names, or ``None``.

    Accepts ``mon``/``Monday`` in any case and ISO dates (``2026-12-02`` →
    ``"wed"``); other text (free notes) gives ``None``.  O(1).
    """
    if text is None:
        return None
    if isinstance(text, dt.date):
        return WEEKDAYS[text.weekday()]
    t = str(text).strip().lower()
    if not t:
        return None
    if t[:3] in WEEKDAYS and _DAY_NAMES[WEEKDAYS.index(t[:3])].lower().startswith(t):
        return t[:3]
    try:
        return WEEKDAYS[dt.date.fromisoformat(t).weekday()]
    except ValueError:
        return None


def weekday_name(code: str | None) -> str:
    """``"wed"`` → ``"Wednesday"``; ``None`` → ``""``."""
    if code is None:
        return ""
    if code not in WEEKDAYS:
        raise FleetError(f"day {code!r} is not one of {', '.join(map(repr, WEEKDAYS))}")
    return _DAY_NAMES[WEEKDAYS.index(code)]


def route_label(number: int, of: int, route: Route) -> str:
    """``"Route 2 of 3 · vehicle 4"``: the name printed on the card and in the exports."""
    return f"Route {number} of {of} · vehicle {route.vehicle}"


def stop_note(activity: Activity, node: str, home: str) -> str:
    """The words of a reload stop for ``activity`` at ``node`` (our own wording)."""
    verb = _STOP_VERB.get(activity.name, "reload at")
    place = "the depot" if node == home else _PLACE.get(activity.name, "the refill site")
    return f"{verb} {place} ({node})"


def route_stops(
    route: Route, activity: Activity, minutes: float | None = None
) -> dict[int, StopEvent]:
    """The reload stops of ``route`` as :class:`~core.directions.StopEvent` by step index
    (the stop comes before that step), ``minutes`` each (default from
    :data:`STOP_MINUTES`).  O(trips)."""
    if minutes is None:
        minutes = STOP_MINUTES.get(activity.name, DEFAULT_STOP_MINUTES)
    if not (math.isfinite(minutes) and minutes >= 0):
        raise FleetError(f"the minutes of a reload stop must be 0 or more, not {minutes!r}")
    home = route.trips[0].start if route.trips else ""
    return {
        k: StopEvent(stop_note(activity, node, home), minutes) for k, node in route.refill_stops
    }


def trip_of_steps(route: Route) -> list[int]:
    """The 1-based trip number of each step of the route, in driving order.  O(steps)."""
    return [k for k, t in enumerate(route.trips, 1) for _ in t.steps]


def route_directions(
    network: Network,
    route: Route,
    *,
    activity: Activity = SWEEPING,
    drive: DriveSide | str = DriveSide.RIGHT,
    start: str | dt.time | dt.datetime | None = None,
    stop_minutes: float | None = None,
) -> Directions:
    """The driver's directions of one route, reloads as stop rows.  O(steps)."""
    if not route.steps:
        raise FleetError(f"route of vehicle {route.vehicle} has no passes to print")
    home = route.trips[0].start
    return build_directions(
        network,
        route.steps,
        activity=activity,
        drive=drive,
        start=start,
        stops=route_stops(route, activity, stop_minutes),
        depot_label=f"the depot ({home})",
    )


def _load_text(value: float, unit: str) -> str:
    return f"{value:.3g} {unit}".strip()


def _background(network: Network) -> tuple[tuple[tuple[float, float], ...], ...]:
    out = []
    for seg in network.segments.values():
        if seg.geometry is not None and len(seg.geometry) >= 2:
            out.append(tuple((float(x), float(y)) for x, y in seg.geometry))
        else:
            a, b = network.nodes[seg.start], network.nodes[seg.end]
            if a.has_xy and b.has_xy:
                out.append(((float(a.x), float(a.y)), (float(b.x), float(b.y))))  # type: ignore[arg-type]
    return tuple(out)


def fleet_cards(
    network: Network,
    plan: FleetPlan,
    *,
    activity: Activity = SWEEPING,
    drive: DriveSide | str = DriveSide.RIGHT,
    start: str | dt.time | dt.datetime | None = None,
    day: str | dt.date | None = None,
    vehicle_prefix: str = "",
    load_unit: str = "",
    stop_minutes: float | None = None,
    capacity: float | None = None,
) -> list[RouteCard]:
    """One card per vehicle route of a fleet plan.

    Parameters
    ----------
    network
        The network the plan runs on; not modified.
    plan
        A fleet plan (checked by :func:`core.fleet.check.check_plan` when it was made).
    activity, drive, start
        As for :func:`core.directions.build_directions`.
    day
        Printed on every card; default the plan's service day as a weekday name.
    vehicle_prefix
        Printed before the vehicle's id (e.g. a fleet number series).
    load_unit
        Unit of the trip loads (``"m3"``, ``"t"``, or ``""`` for research units).
    stop_minutes
        Minutes of each reload stop; default the plan's own (``plan.reload_min``), so
        that the card's clock agrees with the route times the plan was checked with.
    capacity
        The vehicles' capacity in ``load_unit``; replaces the activity's own where the
        units agree, so that the card's material line counts the fleet's loads.

    Notes
    -----
    The card layout is :func:`core.card.build_card`'s; the reload rows are
    :class:`~core.directions.StopEvent` rows.  O(R · (s + m)) for R routes, s steps
    per route and m streets (the faint background is the whole network per card).
    """
    routes = [r for r in plan.routes if r.steps]
    if not routes:
        raise FleetError("the fleet plan has no route with passes to print")
    day_text = day if day else weekday_name(plan.day)
    if stop_minutes is None:
        stop_minutes = plan.reload_min
    if network.crs is None:
        load_unit = ""  # research formats: demands in the file's own units
    if capacity and load_unit and load_unit == activity.capacity_unit:
        activity = activity.with_changes(capacity=capacity)
    background = _background(network) if network.has_coordinates else ()
    cards = []
    for k, route in enumerate(routes, 1):
        directions = route_directions(
            network, route, activity=activity, drive=drive, start=start, stop_minutes=stop_minutes
        )
        home = route.trips[0].start
        vehicle = f"{vehicle_prefix} {route.vehicle}".strip()
        if route.vehicle_type and not route.vehicle.startswith(route.vehicle_type):
            vehicle += f" ({route.vehicle_type})"
        content = build_card(
            network,
            directions,
            route=route_label(k, len(routes), route),
            day=day_text,
            depot=home,
            vehicle=vehicle,
        )
        loads = tuple(t.load for t in route.trips)
        stops = tuple(route.refill_stops)
        each = ", ".join(_load_text(x, load_unit) for x in loads)
        refills = f"{len(stops)} reload stop{'s' if len(stops) != 1 else ''}"
        if stops:
            mins = directions.stop_s / 60.0 / len(stops)
            refills += f", about {mins:.0f} min each"
        extra = (
            (f"Load per trip ({len(loads)})", each),
            ("Reloads", refills),
        )
        content = replace(
            content,
            map=replace(content.map, background_lines=background),
            totals=replace(content.totals, extra=extra),
        )
        cards.append(RouteCard(k, len(routes), route, directions, content, stops, loads))
    return cards


def route_exports(cards: list[RouteCard]) -> list[RouteExport]:
    """The cards' routes as :class:`core.files.fleet_exports.RouteExport` (same names,
    same instruction numbers as the printed rows).  O(steps)."""
    from core.files.fleet_exports import RouteExport

    return [
        RouteExport(
            c.number,
            route_label(c.number, c.of, c.route),
            c.route.vehicle,
            c.directions,
            tuple(trip_of_steps(c.route)),
        )
        for c in cards
    ]
