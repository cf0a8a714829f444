"""What the user sets for a fleet plan: vehicle types, depots, refill sites, limits.

A :class:`VehicleType` is one kind of vehicle with its capacity, how much of
it a street uses (the demand model), its speeds, the time limit of one route
and how many are available.  :class:`FleetSettings` gathers the vehicle types,
the refill sites, the U-turn rule and the service day.

Demand of one service pass, in the capacity's unit (first rule that applies):

1. the street's own ``demand`` (research formats), shared out over its passes;
2. ``spread_rate_g_m2`` × treated width × length (gritting; tonnes when the
   capacity unit is ``"t"``, kilograms otherwise);
3. ``demand_per_km`` × length in km (sweeping: debris per kerb-km).

Times come from a street's ``time_min`` attribute when the source gives one
(the salt-spreading instances), else from its length and the speed
(``speed_kmh`` street attribute, else the vehicle's service or deadhead speed).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

from core.errors import FleetError
from core.model import Network, Segment

UTURN_RULES = ("auto", "forbid", "allow")
"""``forbid``: U-turns only at turning places, dead ends and at depots or refill
sites between trips; ``allow``: anywhere; ``auto``: ``forbid`` when the network marks
any turning place, else ``allow``."""

END_AT = ("home", "refill")
"""Where a route ends: back at its home depot, or at whichever refill site is nearest
(the salt-spreading rule; the drive home is not counted)."""

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")


@dataclass(frozen=True, slots=True)
class VehicleType:
    """One kind of vehicle and how many of them are available.

    ``capacity`` is ``None`` for no capacity limit; ``max_time_min`` is ``None``
    for no time limit.  ``count`` is ``None`` for as many as needed.
    """

    name: str = "vehicle"
    home: str | None = None
    """Depot node where routes start (and end, with ``end_at="home"``); ``None`` is the
    network's depot."""
    count: int | None = None
    capacity: float | None = None
    capacity_unit: str = ""
    demand_per_km: float = 0.0
    spread_rate_g_m2: float = 0.0
    treated_width_m: float = 0.0
    service_speed_kmh: float = 20.0
    """Default 20 km/h: the gritting preset's spreading speed (US Army CRREL SR02-1)."""
    deadhead_speed_kmh: float = 40.0
    """Default 40 km/h: travel at town speed, from memory."""
    max_time_min: float | None = None
    end_at: str = "home"

    def __post_init__(self) -> None:
        if self.end_at not in END_AT:
            raise FleetError(
                f"vehicle {self.name!r}: end_at {self.end_at!r} is not one of "
                f"{', '.join(map(repr, END_AT))}"
            )
        for key in ("service_speed_kmh", "deadhead_speed_kmh"):
            v = getattr(self, key)
            if not (math.isfinite(v) and v > 0):
                raise FleetError(f"vehicle {self.name!r}: {key} must be above 0, not {v!r}")
        if self.capacity is not None and not (math.isfinite(self.capacity) and self.capacity > 0):
            raise FleetError(
                f"vehicle {self.name!r}: capacity must be a number above 0 (or none), "
                f"not {self.capacity!r}"
            )
        if self.max_time_min is not None and not (
            math.isfinite(self.max_time_min) and self.max_time_min > 0
        ):
            raise FleetError(
                f"vehicle {self.name!r}: the time limit must be above 0 minutes (or none), "
                f"not {self.max_time_min!r}"
            )
        if self.count is not None and (not isinstance(self.count, int) or self.count < 1):
            raise FleetError(
                f"vehicle {self.name!r}: the number available must be a whole number of "
                f"at least 1 (or none for as many as needed), not {self.count!r}"
            )

    @classmethod
    def from_activity(cls, activity: Any, **changes: Any) -> VehicleType:
        """A vehicle type from a :class:`core.activity.Activity` preset (speeds, capacity,
        spread rate, width, demand per km, time target), with ``changes`` applied."""
        base = cls(
            name=activity.name,
            capacity=activity.capacity or None,
            capacity_unit=activity.capacity_unit,
            demand_per_km=activity.demand_per_km,
            spread_rate_g_m2=activity.spread_rate_g_m2,
            treated_width_m=activity.treated_width_m,
            service_speed_kmh=activity.service_speed_kmh,
            deadhead_speed_kmh=activity.deadhead_speed_kmh,
            max_time_min=activity.time_target_h * 60.0 if activity.time_target_h else None,
        )
        return replace(base, **changes)

    # -- the demand and time model (shared by the planner and the checker) --------------------
    def pass_demand(self, seg: Segment, n_passes: int) -> float:
        """Demand of one of the ``n_passes`` service passes of ``seg``.  O(1)."""
        if seg.demand > 0:
            return seg.demand / n_passes
        if self.spread_rate_g_m2 > 0:
            width = _width(seg, self.treated_width_m)
            grams = self.spread_rate_g_m2 * width * seg.length
            return grams / 1e6 if self.capacity_unit == "t" else grams / 1e3
        return self.demand_per_km * seg.length / 1000.0

    def pass_minutes(self, seg: Segment, service: bool) -> float:
        """Minutes to drive ``seg`` once, servicing or not.  O(1)."""
        t = seg.attrs.get("time_min") if seg.attrs else None
        if isinstance(t, int | float) and math.isfinite(t) and t >= 0:
            return float(t)
        speed = _speed(seg)
        if speed is None:
            speed = self.service_speed_kmh if service else self.deadhead_speed_kmh
        return seg.length / 1000.0 / speed * 60.0


def _width(seg: Segment, default: float) -> float:
    try:
        w = float(seg.attrs.get("width_m"))
        if math.isfinite(w) and w > 0:
            return w
    except (TypeError, ValueError):
        pass
    return default


def _speed(seg: Segment) -> float | None:
    try:
        v = float(seg.attrs.get("speed_kmh"))
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) and v > 0 else None


@dataclass(frozen=True, slots=True)
class FleetSettings:
    """Everything a fleet plan needs besides the network."""

    vehicles: tuple[VehicleType, ...] = (VehicleType(),)
    refill_sites: tuple[str, ...] = ()
    """Nodes where a vehicle may reload mid-route (salt stores, tipping points)."""
    reload_min: float = 0.0
    """Minutes each reload stop between two trips takes (loading salt, tipping the
    hopper); counted in the route's time, against its limit, and on its card."""
    uturns: str = "auto"
    day: str | None = None
    """Plan only the streets serviced on this weekday (``"mon"`` … ``"sun"``)."""
    seed: int = 0
    time_limit: float = 10.0
    """Seconds the whole plan may take (the route search gets what preparing leaves, at
    least a fifth)."""
    iterations: int | None = None
    """Stop the search after this many iterations instead of on time (runs that repeat
    exactly for a seed, whatever the machine); the time limit still caps it."""
    extra: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.uturns not in UTURN_RULES:
            raise FleetError(
                f"U-turn rule {self.uturns!r} is not one of {', '.join(map(repr, UTURN_RULES))}"
            )
        if self.day is not None and self.day not in WEEKDAYS:
            raise FleetError(f"day {self.day!r} is not one of {', '.join(map(repr, WEEKDAYS))}")
        if not self.vehicles:
            raise FleetError("a fleet plan needs at least one vehicle type")
        if not (math.isfinite(self.time_limit) and self.time_limit > 0):
            raise FleetError(f"the time limit must be above 0 seconds, not {self.time_limit!r}")
        if not (math.isfinite(self.reload_min) and self.reload_min >= 0):
            raise FleetError(
                f"the minutes of a reload stop must be 0 or more, not {self.reload_min!r}"
            )

    def check_nodes(self, network: Network) -> None:
        """Raise :class:`FleetError` naming a depot or refill site that is not a node."""
        for v in self.vehicles:
            if v.home is not None and v.home not in network.nodes:
                raise FleetError(f"vehicle {v.name!r}: home depot {v.home!r} is not a node")
        for r in self.refill_sites:
            if r not in network.nodes:
                raise FleetError(f"refill site {r!r} is not a node of the network")

    def uturns_forbidden(self, network: Network) -> bool:
        if self.uturns == "auto":
            return any(n.turning_place for n in network.nodes.values())
        return self.uturns == "forbid"


def serviced_today(seg: Segment, day: str | None) -> bool:
    """Whether ``seg`` is serviced on ``day`` (``attrs["days"]``; absent = every day)."""
    if day is None or not seg.attrs:
        return True
    days = seg.attrs.get("days")
    if days is None:
        return True
    return day in {str(d).strip().lower()[:3] for d in days}


def priority_of(seg: Segment) -> int:
    """The street's priority class (``attrs["priority"]``, default 1)."""
    try:
        p = int(seg.attrs.get("priority", 1)) if seg.attrs else 1
    except (TypeError, ValueError):
        raise FleetError(
            f"street {seg.label}: priority {seg.attrs.get('priority')!r} is not a whole number"
        ) from None
    if p < 1:
        raise FleetError(f"street {seg.label}: priority must be 1 or more, not {p}")
    return p


def settings_from_network(
    network: Network,
    *,
    vehicles: int | None = None,
    capacity: float | None = None,
    max_time_min: float | None = None,
    base: VehicleType | None = None,
    **kwargs: Any,
) -> FleetSettings:
    """Fleet settings from what the file states (``network.meta``), overridden by options.

    CARPLIB: one vehicle type at the depot, the file's capacity, as many vehicles as
    needed (the ``VEHICULOS`` figure is not a hard limit).  When ``vehicles`` limits the
    fleet and no refill site is named, the depot is one, so trips can follow each other.
    Salt-spreading: one vehicle per listed vehicle with its home and capacity, the refill
    depots, the time limit, routes ending at a refill depot.
    """
    meta = network.meta or {}
    base = base or VehicleType()
    listed = meta.get("vehicles")
    types: list[VehicleType] = []
    refills: tuple[str, ...] = ()
    if isinstance(listed, Sequence) and listed and isinstance(listed[0], Mapping):
        refills = tuple(str(d.get("label")) for d in meta.get("depots") or [])
        mt = meta.get("max_time_min")
        for v in listed:
            cap = v.get("capacity")
            types.append(
                replace(
                    base,
                    name=str(v.get("id", len(types) + 1)),
                    home=str(v.get("home")),
                    count=1,
                    capacity=float(cap) if cap else base.capacity,
                    max_time_min=float(mt) if mt else base.max_time_min,
                    end_at="refill" if refills else "home",
                )
            )
    else:
        cap = meta.get("capacity")
        types.append(replace(base, capacity=float(cap) if cap else base.capacity))
    if capacity is not None:
        types = [replace(t, capacity=capacity) for t in types]
    if max_time_min is not None:
        types = [replace(t, max_time_min=max_time_min) for t in types]
    if vehicles is not None:
        types = [replace(types[0], count=vehicles)] if len(types) == 1 else types[:vehicles]
        depot = types[0].home or network.depot
        if not refills and depot is not None and len(types) == 1:
            # A limited fleet with no refill site named reloads where it starts: the depot
            # (common practice: the salt store or tipping point is at the depot).
            refills = (depot,)
    return FleetSettings(vehicles=tuple(types), refill_sites=refills, **kwargs)


def settings_from_choices(
    network: Network,
    depot: str | None = None,
    *,
    activity: Any = None,
    vehicles: int | None = None,
    capacity: float | None = None,
    max_time_min: float | None = None,
    seed: int = 0,
    day: str | None = None,
    search_time: float = 10.0,
    iterations: int | None = None,
    reload_min: float | None = None,
) -> FleetSettings:
    """Fleet settings from the file and a person's choices: what ``roundsman plan`` builds
    from its options and the window from its Vehicles settings, in one place.

    ``activity`` (a :class:`core.activity.Activity`, or ``None`` for plain distances)
    gives the speeds and the demand model of streets without their own demand; its
    capacity and time target are not applied here (pass them as ``capacity`` and
    ``max_time_min`` to use them).  ``depot`` becomes the vehicles' home unless the file
    lists depots of its own.  Then :func:`settings_from_network`: the file's figures,
    overridden by the choices that are not ``None``.  Reload stops take ``reload_min``
    minutes; ``None`` means the activity's usual stop on a map
    (:data:`core.fleet.cards.STOP_MINUTES`, from memory there) and none on research files
    without coordinates (their published instances count no reload time).
    O(vehicles the file lists).
    """
    base = VehicleType()
    if activity is not None:
        base = VehicleType.from_activity(activity, capacity=None, max_time_min=None)
    if depot is not None and not (network.meta or {}).get("depots"):
        base = replace(base, home=depot)
    settings = settings_from_network(
        network,
        vehicles=vehicles,
        capacity=capacity,
        max_time_min=max_time_min,
        base=base,
        seed=seed,
        day=day,
        time_limit=search_time,
        iterations=iterations,
    )
    if reload_min is None and activity is not None and network.crs is not None:
        from core.fleet.cards import DEFAULT_STOP_MINUTES, STOP_MINUTES

        reload_min = STOP_MINUTES.get(activity.name, DEFAULT_STOP_MINUTES)
    return replace(settings, reload_min=float(reload_min or 0.0))
