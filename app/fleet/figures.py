"""The figures of a fleet plan as words and table cells (no Qt).

Distances are shown in km when the network has a map projection, else in the file's
own length units (research instances such as CARPLIB); loads in the capacity's unit.
Times are the route minutes the planner and the independent checker agree on
(:mod:`core.fleet.check`), shown with :func:`app.plan.summary.format_hours`.
"""

from __future__ import annotations

from dataclasses import dataclass

from app.fleet.choices import route_issues
from app.plan.summary import format_hours
from core.fleet.cards import weekday_name
from core.fleet.result import FleetPlan, Route
from core.model import Network

__all__ = [
    "ROUTE_COLUMNS",
    "TRIP_COLUMNS",
    "Units",
    "route_cells",
    "totals_lines",
    "trip_cells",
    "unit_name",
    "units_for",
    "verdict_lines",
]

ROUTE_COLUMNS = ("Vehicle", "Trips", "Service", "Deadhead", "Total", "Load", "Time", "Feasible")
TRIP_COLUMNS = ("Trip", "From", "To", "Service", "Deadhead", "Total", "Load", "Time")
MAX_ISSUES_SHOWN = 10
UNIT_NAMES = {"m3": "m³"}
"""How a unit is written for people."""


def unit_name(unit: str) -> str:
    """``"m3"`` → ``"m³"``; other units as they are."""
    return UNIT_NAMES.get(unit, unit)


@dataclass(frozen=True, slots=True)
class Units:
    """How distances and loads are written."""

    per_m: float
    """Metres per shown unit (1000 for km, 1 for the file's own units)."""
    distance: str
    """``"km"`` or ``""`` (the file's units)."""
    load: str
    """The capacity's unit (``"m3"``, ``"t"``) or ``""``."""

    def length(self, metres: float) -> str:
        if self.per_m == 1000.0:
            return f"{metres / 1000.0:.2f}"
        return f"{metres:.6g}"

    def length_with_unit(self, metres: float) -> str:
        return f"{self.length(metres)} {self.distance}".strip()

    def amount(self, value: float) -> str:
        return f"{round(value, 3):g}"

    def amount_with_unit(self, value: float) -> str:
        return f"{self.amount(value)} {unit_name(self.load)}".strip()

    def column_title(self, title: str) -> str:
        """``"Service (km)"`` for distance columns when the unit is km."""
        if title in ("Service", "Deadhead", "Total") and self.distance:
            return f"{title} ({self.distance})"
        if title == "Load" and self.load:
            return f"Load ({unit_name(self.load)})"
        return title


def units_for(network: Network, load_unit: str = "") -> Units:
    """km and the load unit on a projected map; the file's own units otherwise."""
    if network.crs is not None:
        return Units(1000.0, "km", load_unit)
    return Units(1.0, "", "")


def route_cells(plan: FleetPlan, units: Units) -> list[list[str]]:
    """One row per route, in :data:`ROUTE_COLUMNS` order.  O(routes + issues)."""
    rows = []
    for r in plan.routes:
        rows.append(
            [
                r.vehicle,
                str(len(r.trips)),
                units.length(r.service_m),
                units.length(r.deadhead_m),
                units.length(r.total_m),
                units.amount(r.load),
                format_hours(r.minutes / 60.0),
                "no" if route_issues(plan, r) else "yes",
            ]
        )
    return rows


def trip_cells(route: Route, units: Units) -> list[list[str]]:
    """One row per trip (load) of a route, in :data:`TRIP_COLUMNS` order.  O(trips)."""
    return [
        [
            str(k),
            t.start,
            t.end,
            units.length(t.service_m),
            units.length(t.deadhead_m),
            units.length(t.total_m),
            units.amount(t.load),
            format_hours(t.minutes / 60.0),
        ]
        for k, t in enumerate(route.trips, 1)
    ]


def totals_lines(plan: FleetPlan, units: Units) -> list[tuple[str, str]]:
    """``(label, value)`` rows for the whole fleet."""
    rows = [
        (
            "Routes",
            f"{len(plan.routes)} vehicles, {plan.n_trips} trips"
            + (f", {weekday_name(plan.day)}" if plan.day else ""),
        ),
        ("Service", units.length_with_unit(plan.service_m)),
        ("Deadhead", units.length_with_unit(plan.deadhead_m)),
        ("Total", units.length_with_unit(plan.total_m)),
        ("Load", units.amount_with_unit(sum(r.load for r in plan.routes))),
        ("Vehicle time", format_hours(plan.hours)),
        ("Longest route", format_hours(plan.longest_route_min / 60.0)),
        ("Method", plan.method),
    ]
    if len(plan.class_done_min) > 1:
        for p, m in sorted(plan.class_done_min.items()):
            rows.append((f"Class {p} done", f"after {format_hours(m / 60.0)}"))
    return rows


def verdict_lines(plan: FleetPlan) -> list[str]:
    """The independent checker's verdict and its findings (the first few), in words."""
    if plan.feasible:
        lines = ["Checked: every street is covered and every rule holds."]
    else:
        n = len(plan.issues)
        lines = [f"Checked: the plan breaks {n} rule{'s' if n != 1 else ''}:"]
        lines += [f"• {i}" for i in plan.issues[:MAX_ISSUES_SHOWN]]
        if n > MAX_ISSUES_SHOWN:
            lines.append(f"… and {n - MAX_ISSUES_SHOWN} more")
    lines += list(plan.notes)
    return lines
