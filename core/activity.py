"""What the crew does on a street: the activities and their editable defaults.

An :class:`Activity` holds the figures that turn a circuit into times, loads
and material: how fast the vehicle works and travels, how wide it treats,
how much it spreads, how much it carries and the time a route should take.
Two presets come out of the box, sweeping and gritting; every value is a
default the user may change (``dataclasses.replace`` or
:meth:`Activity.with_changes`), and the local winter service plan or
cleansing schedule always comes first.

Each default names its source in a comment, as found in the project's notes
on the trade (``/work/shared/domain-notes.md``), or says "common practice" or
"from memory" where the notes do.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields, replace
from enum import StrEnum
from typing import Any

from core.errors import ActivityError

__all__ = [
    "GRITTING",
    "PRESETS",
    "SWEEPING",
    "Activity",
    "ActivityError",
    "Coverage",
    "activity_preset",
]


class Coverage(StrEnum):
    """What one service pass covers."""

    KERB = "kerb"
    """One kerb side per pass (sweeping: debris lies along the kerb)."""
    CARRIAGEWAY = "carriageway"
    """A treated width of the carriageway per pass (gritting: lanes or spread width)."""


@dataclass(frozen=True, slots=True)
class Activity:
    """One kind of street service with its working figures.

    All speeds are km/h, widths metres, times hours.  ``spread_rate_g_m2`` is
    zero for activities that spread nothing; ``capacity`` is measured in
    ``capacity_unit`` and ``demand_per_km`` is what one km of service uses
    in that unit.
    """

    name: str
    """Our own key for the preset (``"sweeping"``, ``"gritting"``)."""
    label: str
    """A short title for people (header of the route card)."""
    coverage: Coverage
    service_speed_kmh: float
    """Speed while servicing a street."""
    deadhead_speed_kmh: float
    """Speed while travelling without service."""
    treated_width_m: float
    """Width treated in one pass (a street's ``width_m`` attribute overrides it)."""
    lane_width_m: float
    """Width of one lane, for streets that give ``lanes`` but no ``width_m``."""
    spread_rate_g_m2: float
    """Material spread per square metre treated; 0 for no spreading."""
    capacity: float
    """What the vehicle carries: hopper volume, salt load..."""
    capacity_unit: str
    """Unit of ``capacity`` and ``demand_per_km`` (``"m3"``, ``"t"``)."""
    demand_per_km: float
    """Capacity used per km of service."""
    time_target_h: float
    """The time one route should take, start to finish."""
    both_kerbs: bool
    """Whether the preset expects each side of a two-way street as its own pass."""
    service_on: str
    """Our wording for the moment service starts (brushes down, spreader on...)."""
    service_off: str
    """Our wording for the moment service stops."""
    material: str = ""
    """What is spread (``"salt"``), or empty."""

    def __post_init__(self) -> None:
        for f in fields(self):
            v = getattr(self, f.name)
            is_number = isinstance(v, float | int) and not isinstance(v, bool)
            if is_number and (not math.isfinite(v) or v < 0):
                raise ActivityError(
                    f"activity {self.name!r}: {f.name} must be a finite number "
                    f"of at least 0, not {v!r}"
                )
        for key in ("service_speed_kmh", "deadhead_speed_kmh"):
            if getattr(self, key) <= 0:
                raise ActivityError(f"activity {self.name!r}: {key} must be above 0")

    @property
    def spreads(self) -> bool:
        """True when this activity spreads material (a spread rate is set)."""
        return self.spread_rate_g_m2 > 0

    def width_for(self, attrs: Any) -> float:
        """Treated width on a street: its ``width_m``, else ``lanes`` × lane width,
        else the activity's default (street attributes of DEVELOPERS.md)."""
        try:
            w = float(attrs.get("width_m"))
            if math.isfinite(w) and w > 0:
                return w
        except (TypeError, ValueError, AttributeError):
            pass
        try:
            n = int(attrs.get("lanes"))
            if n > 0:
                return n * self.lane_width_m
        except (TypeError, ValueError, AttributeError):
            pass
        return self.treated_width_m

    def material_kg(self, length_m: float, width_m: float | None = None) -> float:
        """Material spread over ``length_m`` of service: rate × width × length.

        The arithmetic of the trade notes (10 g/m² × 7.3 m = 73 kg/km).  O(1).
        """
        w = self.treated_width_m if width_m is None else width_m
        return self.spread_rate_g_m2 * w * length_m / 1000.0

    def service_hours(self, length_m: float) -> float:
        return length_m / 1000.0 / self.service_speed_kmh

    def deadhead_hours(self, length_m: float) -> float:
        return length_m / 1000.0 / self.deadhead_speed_kmh

    def with_changes(self, **changes: Any) -> Activity:
        """A copy with some defaults changed; unknown keys are refused with the list."""
        known = {f.name for f in fields(self)}
        bad = sorted(set(changes) - known)
        if bad:
            raise ActivityError(
                f"activity {self.name!r} has no setting {', '.join(bad)}; "
                f"the settings are {', '.join(sorted(known))}"
            )
        if (
            self.spreads
            and self.capacity_unit == "t"
            and "demand_per_km" not in changes
            and {"spread_rate_g_m2", "treated_width_m"} & set(changes)
        ):
            # Keep the load per km in step with rate x width (g/m2 x m = kg/km).
            rate = changes.get("spread_rate_g_m2", self.spread_rate_g_m2)
            width = changes.get("treated_width_m", self.treated_width_m)
            changes["demand_per_km"] = rate * width / 1000.0
        return replace(self, **changes)


SALT_DENSITY_T_M3 = 1.28
"""Rock salt bulk density, t/m³ (Salt Storage Handbook 2013, as quoted in the trade notes)."""

SWEEPING = Activity(
    name="sweeping",
    label="Street sweeping",
    coverage=Coverage.KERB,
    # Working speed 5-10 km/h: common practice (the trade notes find only weak sources).
    service_speed_kmh=8.0,
    # Travel between beats at town speed: from memory.
    deadhead_speed_kmh=25.0,
    # Debris lies within about 1 m of the kerb: common practice (trade notes).
    treated_width_m=1.0,
    lane_width_m=3.0,  # a typical urban lane: from memory
    spread_rate_g_m2=0.0,
    # Hopper 2.7-5.7 m3 (Minnesota Stormwater Manual, after Kuehl et al. 2008).
    capacity=4.0,
    capacity_unit="m3",
    # Debris per kerb-km varies with season and street; 0.15 m3/kerb-km: from memory.
    demand_per_km=0.15,
    # One shift covers about 20-40 kerb-km (from memory); a 6-hour working target.
    time_target_h=6.0,
    # Each side of the street is its own pass in the direction of traffic: common practice.
    both_kerbs=True,
    service_on="brushes down",
    service_off="brushes up",
)

GRITTING = Activity(
    name="gritting",
    label="Gritting (salt spreading)",
    coverage=Coverage.CARRIAGEWAY,
    # Spreading at 10-15 mph recommended, at most 20 mph (US Army CRREL SR02-1).
    service_speed_kmh=20.0,
    # Travel between treated streets: from memory (urban roads; rural routes run faster).
    deadhead_speed_kmh=40.0,
    # 10 g/m2 x 7.3 m = 73 kg/km in the trade notes; spread width 1.2-9.8 m (CRREL SR02-1).
    treated_width_m=7.3,
    # Two lanes of 3.65 m make the 7.3 m carriageway above: from memory.
    lane_width_m=3.65,
    # UK council precautionary practice 10-15 g/m2 (a county council's winter service
    # page, as found); 8 g/m2 at road temperature >= -2 C (Transport Scotland matrix).
    spread_rate_g_m2=10.0,
    # 6 m3 body on an 18 t chassis (Transport Engineer, 2021) x 1.28 t/m3 = 7.7 t.
    capacity=round(6.0 * SALT_DENSITY_T_M3, 1),
    capacity_unit="t",
    # 73 kg/km at 10 g/m2 over 7.3 m (arithmetic in the trade notes).
    demand_per_km=0.073,
    # 2-3 h per precautionary route (published council winter plans, as found).
    time_target_h=3.0,
    both_kerbs=False,
    service_on="spreader on",
    service_off="spreader off",
    material="salt",
)

PRESETS: dict[str, Activity] = {a.name: a for a in (SWEEPING, GRITTING)}
"""The activities that come out of the box, by name."""


def activity_preset(name: str) -> Activity:
    """The preset called ``name`` (case-insensitive); the error lists the names."""
    key = str(name).strip().lower()
    try:
        return PRESETS[key]
    except KeyError:
        raise ActivityError(
            f"activity {name!r} is not one of {', '.join(repr(k) for k in PRESETS)}"
        ) from None
