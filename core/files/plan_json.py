"""The plan file, ``roundsman-plan/1``: what other tools read from Roundsman.

Shape (stable; new keys may be added, none renamed or removed)::

    {"format": "roundsman-plan/1",
     "network": "district name",
     "totals": {"total_m", "service_m", "deadhead_m", "lower_bound_m", "gap"},
     "method": "...", "exact": true, "timings_s": {...},
     "turns": {"straight", "bear_left", "bear_right", "left", "right", "sharp_left",
               "sharp_right", "uturns", "across_traffic", "uturn_nodes": [NODE],
               "detours", "extra_m", "drive", "geometry"},   (optional)
     "routes": [{"vehicle": "1",
                 "trips": [{"start": NODE, "end": NODE,
                            "steps": [{"from": NODE, "to": NODE, "link": SEGMENT,
                                       "service": true, "length_m": 0.0}]}]}]}

Node and segment ids are strings as in the input.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import asdict, fields
from typing import TYPE_CHECKING, Any

from core.errors import InputError
from core.files.atomic import atomic_write_text
from core.plan import Plan, Step, TurnCounts

if TYPE_CHECKING:
    from core.fleet.result import FleetPlan

PLAN_FORMAT = "roundsman-plan/1"


def _num(x: float) -> float | None:
    return round(x, 3) if math.isfinite(x) else None


def plan_to_dict(plan: Plan) -> dict[str, Any]:
    """The plan as a JSON-ready dictionary (one route, one trip)."""
    steps = [
        {
            "from": s.start,
            "to": s.end,
            "link": s.segment,
            "service": s.service,
            "length_m": _num(s.length),
            **({} if s.forward else {"reverse": True}),
        }
        for s in plan.steps
    ]
    return {
        "format": PLAN_FORMAT,
        "network": plan.network_name,
        "totals": {
            "total_m": _num(plan.total_m),
            "service_m": _num(plan.service_m),
            "deadhead_m": _num(plan.deadhead_m),
            "lower_bound_m": _num(plan.lower_bound_m),
            "gap": _num(plan.gap),
        },
        "method": plan.method,
        "exact": plan.exact,
        "timings_s": {k: round(v, 4) for k, v in plan.timings.items()},
        "notes": list(plan.notes),
        **({} if plan.turns is None else {"turns": _turns_to_dict(plan.turns)}),
        "routes": [
            {
                "vehicle": "1",
                "trips": [{"start": plan.depot, "end": plan.depot, "steps": steps}],
            }
        ],
    }


def _turns_to_dict(t: TurnCounts) -> dict[str, Any]:
    d = asdict(t)
    d["extra_m"] = _num(t.extra_m)
    return d


def _turns_from_dict(d: Any) -> TurnCounts | None:
    """Turn counts from a plan file; ``None`` for files written before they were kept.
    Unknown keys are ignored (newer files)."""
    if not isinstance(d, dict):
        return None
    known = {f.name for f in fields(TurnCounts)}
    return TurnCounts(**{k: v for k, v in d.items() if k in known})


def write_plan(plan: Plan | FleetPlan, path: str | os.PathLike[str]) -> None:
    """Write the plan file (one circuit or a fleet plan) atomically."""
    doc = plan_to_dict(plan) if isinstance(plan, Plan) else fleet_plan_to_dict(plan)
    atomic_write_text(path, json.dumps(doc, indent=1, ensure_ascii=False) + "\n")


def plan_from_dict(doc: dict[str, Any], *, source: str = "plan") -> Plan:
    """Read back a single-circuit plan written by :func:`write_plan`."""
    if doc.get("format") != PLAN_FORMAT:
        raise InputError(
            f"not a {PLAN_FORMAT} file (format is {doc.get('format')!r})", source=source
        )
    if is_fleet_doc(doc):
        raise InputError(
            "this plan file holds a fleet plan (several routes or trips), not one circuit; "
            "read it with fleet_plan_from_dict",
            source=source,
        )
    try:
        trip = doc["routes"][0]["trips"][0]
        steps = [_step_from_dict(s) for s in trip["steps"]]
        totals = doc["totals"]
        return Plan(
            depot=str(trip["start"]),
            steps=steps,
            lower_bound_m=float(totals.get("lower_bound_m") or 0.0),
            method=str(doc.get("method", "")),
            exact=bool(doc.get("exact", False)),
            timings=dict(doc.get("timings_s", {})),
            notes=list(doc.get("notes", [])),
            network_name=str(doc.get("network", "")),
            turns=_turns_from_dict(doc.get("turns")),
        )
    except (KeyError, IndexError, TypeError, ValueError) as exc:
        raise InputError(
            f"the plan file is incomplete or damaged ({exc!r})", source=source
        ) from exc


# -- fleet plans: one route per vehicle, one trip per load -------------------------------------
def _step_to_dict(s: Step) -> dict[str, Any]:
    return {
        "from": s.start,
        "to": s.end,
        "link": s.segment,
        "service": s.service,
        "length_m": _num(s.length),
        **({} if s.forward else {"reverse": True}),
    }


def _step_from_dict(s: dict[str, Any]) -> Step:
    return Step(
        str(s["link"]),
        str(s["from"]),
        str(s["to"]),
        bool(s["service"]),
        float(s["length_m"]),
        not s.get("reverse", False),
    )


def fleet_plan_to_dict(plan: FleetPlan) -> dict[str, Any]:
    """A fleet plan as a JSON-ready dictionary: the same shape as a single circuit, with
    ``"fleet": true``, per-trip ``load_units`` and ``minutes``, per-route
    ``vehicle_type`` and ``class_done_min``, and ``feasible``/``issues`` from the check."""
    return {
        "format": PLAN_FORMAT,
        "network": plan.network_name,
        "fleet": True,
        "totals": {
            "total_m": _num(plan.total_m),
            "service_m": _num(plan.service_m),
            "deadhead_m": _num(plan.deadhead_m),
            "lower_bound_m": _num(plan.lower_bound_m),
            "hours": _num(plan.hours),
        },
        "method": plan.method,
        "exact": False,
        "seed": plan.seed,
        "day": plan.day,
        "reload_min": _num(plan.reload_min),
        "feasible": plan.feasible,
        "issues": list(plan.issues),
        "class_done_min": {str(k): _num(v) for k, v in plan.class_done_min.items()},
        "timings_s": {k: round(v, 4) for k, v in plan.timings.items()},
        "notes": list(plan.notes),
        "routes": [
            {
                "vehicle": r.vehicle,
                "vehicle_type": r.vehicle_type,
                "class_done_min": {str(k): _num(v) for k, v in r.class_done_min.items()},
                "trips": [
                    {
                        "start": t.start,
                        "end": t.end,
                        "load_units": _num(t.load),
                        "minutes": _num(t.minutes),
                        "steps": [_step_to_dict(s) for s in t.steps],
                    }
                    for t in r.trips
                ],
            }
            for r in plan.routes
        ],
    }


def is_fleet_doc(doc: Any) -> bool:
    """True for a plan file holding a fleet plan (several routes or trips)."""
    return isinstance(doc, dict) and bool(doc.get("fleet"))


def fleet_plan_from_dict(doc: dict[str, Any], *, source: str = "plan") -> FleetPlan:
    """Read back a fleet plan written by :func:`write_plan`."""
    from core.fleet.result import FleetPlan, Route, Trip

    if doc.get("format") != PLAN_FORMAT:
        raise InputError(
            f"not a {PLAN_FORMAT} file (format is {doc.get('format')!r})", source=source
        )
    try:
        routes = [
            Route(
                str(r["vehicle"]),
                str(r.get("vehicle_type", r["vehicle"])),
                [
                    Trip(
                        str(t["start"]),
                        str(t["end"]),
                        [_step_from_dict(s) for s in t["steps"]],
                        float(t.get("load_units") or 0.0),
                        float(t.get("minutes") or 0.0),
                    )
                    for t in r["trips"]
                ],
                {int(k): float(v) for k, v in (r.get("class_done_min") or {}).items()},
            )
            for r in doc["routes"]
        ]
        return FleetPlan(
            routes,
            str(doc.get("method", "")),
            int(doc.get("seed") or 0),
            str(doc.get("network", "")),
            bool(doc.get("feasible", True)),
            [str(x) for x in doc.get("issues") or []],
            float((doc.get("totals") or {}).get("lower_bound_m") or 0.0),
            {int(k): float(v) for k, v in (doc.get("class_done_min") or {}).items()},
            dict(doc.get("timings_s", {})),
            list(doc.get("notes", [])),
            doc.get("day"),
            float(doc.get("reload_min") or 0.0),
        )
    except (KeyError, IndexError, TypeError, ValueError) as exc:
        raise InputError(
            f"the plan file is incomplete or damaged ({exc!r})", source=source
        ) from exc
