"""The Vehicles settings as plain data, their checks, their defaults and the figures shown.

No Qt here: the panel (:mod:`app.fleet.panel`) shows and edits these values, the
controller (:mod:`app.fleet.controller`) turns them into
:class:`core.fleet.settings.FleetSettings` through
:func:`core.fleet.settings.settings_from_choices`, the same function that builds
``roundsman plan``'s fleet settings from its options.

What the file states (CARPLIB capacity, the salt-spreading vehicles, their homes,
capacities and time limit) is read by :func:`core.fleet.settings.settings_from_network`;
:func:`fleet_defaults` only reads back what it made.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from core.activity import Activity
from core.errors import FleetError
from core.fleet.result import FleetPlan, Route
from core.fleet.settings import (
    WEEKDAYS,
    FleetSettings,
    VehicleType,
    settings_from_choices,
    settings_from_network,
)
from core.model import Network

__all__ = [
    "DAY_CHOICES",
    "FleetDefaults",
    "VehicleChoices",
    "fleet_defaults",
    "number_text",
    "parse_capacity",
    "parse_max_time",
    "parse_vehicles",
    "route_issues",
]

DAY_CHOICES: tuple[str | None, ...] = (None, *WEEKDAYS)
"""Service days the user may pick: any day (``None``), then ``"mon"`` … ``"sun"``."""

MAX_VEHICLES = 999
MAX_SEARCH_S = 3600.0
_NONE_WORDS = {"", "none", "no", "no limit", "-"}
_ANY_WORDS = {"", "any", "as many as needed", "no limit", "-"}


@dataclass(frozen=True, slots=True)
class VehicleChoices:
    """What the user chose in the Vehicles settings (``None``: none, or as many as needed)."""

    vehicles: int | None = None
    capacity: float | None = None
    max_time_min: float | None = None
    day: str | None = None
    search_time_s: float = 10.0
    seed: int = 0

    def __post_init__(self) -> None:
        # Each value is checked against its valid choices; the message names the setting.
        if self.vehicles is not None and not (1 <= self.vehicles <= MAX_VEHICLES):
            raise FleetError(
                f"Vehicles: {self.vehicles} is not a whole number from 1 to {MAX_VEHICLES} "
                "(leave it empty for as many as needed)"
            )
        if self.capacity is not None and not (math.isfinite(self.capacity) and self.capacity > 0):
            raise FleetError(
                f"Capacity: {self.capacity:g} must be a number above 0 "
                "(leave it empty for no capacity limit)"
            )
        if self.max_time_min is not None and not (
            math.isfinite(self.max_time_min) and self.max_time_min > 0
        ):
            raise FleetError(
                f"Time limit: {self.max_time_min:g} min must be above 0 "
                "(leave it empty for no time limit)"
            )
        if self.day not in DAY_CHOICES:
            raise FleetError(f"Service day: {self.day!r} is not one of any, {', '.join(WEEKDAYS)}")
        if not (math.isfinite(self.search_time_s) and 0 < self.search_time_s <= MAX_SEARCH_S):
            raise FleetError(
                f"Search time: {self.search_time_s:g} s must be above 0 and at most "
                f"{MAX_SEARCH_S:g} s"
            )
        if not (isinstance(self.seed, int) and self.seed >= 0):
            raise FleetError(f"Seed: {self.seed!r} must be a whole number of 0 or more")

    def settings(
        self,
        network: Network,
        activity: Activity | None,
        defaults: FleetDefaults | None = None,
        *,
        iterations: int | None = None,
    ) -> FleetSettings:
        """The fleet settings for ``network``: the file's figures, then these choices
        (:func:`core.fleet.settings.settings_from_choices`).

        A choice equal to what the file states is left to the file, so vehicles the file
        lists keep their own homes and capacities.  Capacity given here is used as it is;
        with no capacity chosen, a capacity the file states still applies (the file is
        the problem statement).  O(vehicles the file lists).
        """
        d = defaults or FleetDefaults()
        vehicles = None if d.from_file and self.vehicles == d.vehicles else self.vehicles
        capacity = None if d.from_file and self.capacity == d.capacity else self.capacity
        max_time = (
            None if d.from_file and self.max_time_min == d.max_time_min else self.max_time_min
        )
        return settings_from_choices(
            network,
            None,
            activity=activity,
            vehicles=vehicles,
            capacity=capacity,
            max_time_min=max_time,
            seed=self.seed,
            day=self.day,
            search_time=self.search_time_s,
            iterations=iterations,
        )


@dataclass(frozen=True, slots=True)
class FleetDefaults:
    """What the Vehicles settings start from: the file's figures, else the activity's."""

    vehicles: int | None = None
    capacity: float | None = None
    capacity_unit: str = ""
    max_time_min: float | None = None
    from_file: bool = False
    """True when the file states capacity or vehicles (CARPLIB, salt-spreading)."""
    source: str = ""
    """Where the figures come from, in words ("gdb1", "the sweeping preset")."""


def fleet_defaults(network: Network, activity: Activity | None) -> FleetDefaults:
    """The figures the file states (read by :func:`settings_from_network`), else the
    activity preset's capacity; no time limit unless the file states one.

    The number of vehicles is a default only where the file lists its vehicles
    (salt-spreading); CARPLIB's vehicle count is not a hard limit, so it stays "as many
    as needed".  O(vehicles the file lists).
    """
    plain = settings_from_network(network)
    v0 = plain.vehicles[0]
    listed = len(plain.vehicles) > 1 or v0.count is not None
    from_file = listed or v0.capacity is not None or v0.max_time_min is not None
    unit = "" if network.crs is None else (activity.capacity_unit if activity else "")
    if from_file:
        return FleetDefaults(
            vehicles=sum(v.count or 1 for v in plain.vehicles) if listed else None,
            capacity=v0.capacity,
            capacity_unit=unit,
            max_time_min=v0.max_time_min,
            from_file=True,
            source=network.name or "the file",
        )
    if activity is None:
        return FleetDefaults(capacity_unit=unit, source="no activity")
    base = VehicleType.from_activity(activity)
    return FleetDefaults(
        capacity=base.capacity,
        capacity_unit=unit,
        source=f"the {activity.label.lower()} preset",
    )


def _number(text: str, what: str, hint: str) -> float:
    t = text.strip().replace(",", ".")
    t = re.sub(r"\s*(min|m3|m³|t|kg|s)$", "", t, flags=re.IGNORECASE)
    try:
        value = float(t)
    except ValueError:
        raise FleetError(f"{what}: {text.strip()!r} is not a number; {hint}") from None
    if not math.isfinite(value):
        raise FleetError(f"{what}: {text.strip()!r} is not a number; {hint}")
    return value


def parse_vehicles(text: str) -> int | None:
    """Vehicles as typed: a whole number from 1, or empty / "as many as needed" (None)."""
    t = text.strip().lower()
    if t in _ANY_WORDS:
        return None
    hint = f"give a whole number from 1 to {MAX_VEHICLES}, or leave it empty for as many as needed"
    if not re.fullmatch(r"\d+", t):
        raise FleetError(f"Vehicles: {text.strip()!r} is not a whole number; {hint}")
    n = int(t)
    if not (1 <= n <= MAX_VEHICLES):
        raise FleetError(f"Vehicles: {n} is out of range; {hint}")
    return n


def parse_capacity(text: str, unit: str = "") -> float | None:
    """Capacity as typed (a number above 0 in ``unit``), or empty / "none" (None)."""
    if text.strip().lower() in _NONE_WORDS:
        return None
    where = f" in {unit}" if unit else ""
    hint = f"give what one vehicle carries{where}, or leave it empty for no capacity limit"
    value = _number(text, "Capacity", hint)
    if value <= 0:
        raise FleetError(f"Capacity: {text.strip()!r} must be above 0; {hint}")
    return value


def parse_max_time(text: str) -> float | None:
    """Time limit of one route in minutes as typed, or empty / "none" (None)."""
    if text.strip().lower() in _NONE_WORDS:
        return None
    hint = "give the minutes one route may take, or leave it empty for no time limit"
    value = _number(text, "Time limit", hint)
    if value <= 0:
        raise FleetError(f"Time limit: {text.strip()!r} must be above 0 minutes; {hint}")
    return value


def number_text(value: float | None) -> str:
    """A value for a text field: ``""`` for none, ``"5"`` or ``"7.7"``."""
    return "" if value is None else f"{value:g}"


def route_issues(plan: FleetPlan, route: Route) -> list[str]:
    """The checker's findings that name this route (``"route 2, trip 1 …"``,
    ``"route 2 takes …"``); findings about the whole plan (a street not covered) name
    no route.  O(issues)."""
    head = re.compile(rf"^route {re.escape(route.vehicle)}[,: ]")
    return [i for i in plan.issues if head.match(i)]
