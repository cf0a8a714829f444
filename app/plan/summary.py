"""The figures of a plan, as rows of words for the summary panel.

Times follow the rule of the driver's directions (``core/directions.py``):
service passes run at the activity's service speed and deadhead at its
deadhead speed; a street's ``speed_kmh`` attribute (DEVELOPERS.md, street
attributes) replaces the deadhead speed on that street and caps the service
speed there.  The default speeds are the activity presets of
``core/activity.py``, whose comments name their sources; the user may change
them in the panel.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from core.activity import Activity
from core.directions import format_distance
from core.model import Network
from core.plan import Plan

__all__ = ["Estimate", "estimate_time", "format_hours", "summary_rows"]


@dataclass(frozen=True, slots=True)
class Estimate:
    """Driving time of a circuit, hours."""

    service_h: float
    deadhead_h: float

    @property
    def total_h(self) -> float:
        return self.service_h + self.deadhead_h


def _street_speed(network: Network, segment: str) -> float:
    seg = network.segments.get(segment)
    raw = seg.attrs.get("speed_kmh") if seg is not None and seg.attrs else None
    try:
        v = float(raw) if raw is not None else math.nan
    except (TypeError, ValueError):
        v = math.nan
    return v if math.isfinite(v) and v > 0 else math.nan


def estimate_time(network: Network, plan: Plan, activity: Activity) -> Estimate:
    """Hours of service and of deadhead driving for ``plan``.  O(n) for n steps."""
    service_h = deadhead_h = 0.0
    for step in plan.steps:
        street = _street_speed(network, step.segment)
        if step.service:
            v = activity.service_speed_kmh
            if not math.isnan(street):
                v = min(v, street)
            service_h += step.length / 1000.0 / v
        else:
            v = activity.deadhead_speed_kmh if math.isnan(street) else street
            deadhead_h += step.length / 1000.0 / v
    return Estimate(service_h, deadhead_h)


def format_hours(hours: float) -> str:
    """``"2 h 05 min"`` or ``"35 min"``."""
    minutes = round(hours * 60)
    h, m = divmod(minutes, 60)
    return f"{h} h {m:02d} min" if h else f"{m} min"


def _turn_rows(plan: Plan) -> list[tuple[str, str]]:
    turns = getattr(plan, "turns", None)
    if turns is None:
        return []
    rows = [
        (
            "Turns",
            f"{turns.lefts} left, {turns.rights} right, {turns.straight_on} straight on",
        ),
        (f"Across traffic (drive {turns.drive})", str(turns.across_traffic)),
        ("U-turns", str(turns.uturns)),
    ]
    if turns.uturn_nodes:
        rows.append(("U-turns not allowed", str(len(turns.uturn_nodes))))
    if turns.detours:
        rows.append(
            ("Ways round the block", f"{turns.detours} (+{format_distance(turns.extra_m)})")
        )
    return rows


def summary_rows(network: Network, plan: Plan, activity: Activity) -> list[tuple[str, str]]:
    """``(label, value)`` rows: distances, bound and gap, method, time and turns."""
    total = plan.total_m
    est = estimate_time(network, plan, activity)
    if plan.exact:
        gap = "0 % (proven shortest)"
    elif math.isinf(plan.gap):
        gap = "unknown"
    else:
        gap = f"at most {plan.gap * 100:.1f} % above the shortest"
    rows = [
        ("Total distance", format_distance(total)),
        ("Service", format_distance(plan.service_m)),
        ("Deadhead", f"{format_distance(plan.deadhead_m)} ({plan.deadhead_share * 100:.1f} %)"),
        ("Lower bound", format_distance(plan.lower_bound_m)),
        ("Gap", gap),
        ("Method", plan.method),
        ("Exact", "yes" if plan.exact else "no"),
        ("Steps", str(len(plan.steps))),
        (
            f"Time ({activity.label.lower()})",
            f"{format_hours(est.total_h)}: service {format_hours(est.service_h)}, "
            f"deadhead {format_hours(est.deadhead_h)}",
        ),
        (
            "Speeds",
            f"service {activity.service_speed_kmh:g} km/h, "
            f"deadhead {activity.deadhead_speed_kmh:g} km/h",
        ),
    ]
    target = activity.time_target_h
    if target > 0:
        over = est.total_h - target
        rows.append(
            (
                "Time target",
                f"{format_hours(target)}: "
                + (f"over by {format_hours(over)}" if over > 0 else "within it"),
            )
        )
    rows.extend(_turn_rows(plan))
    return rows
