"""The plan file, ``roundsman-plan/1``: what other tools read from Roundsman.

Shape (stable; new keys may be added, none renamed or removed)::

    {"format": "roundsman-plan/1",
     "network": "district name",
     "totals": {"total_m", "service_m", "deadhead_m", "lower_bound_m", "gap"},
     "method": "...", "exact": true, "timings_s": {...},
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
from typing import Any

from core.errors import InputError
from core.files.atomic import atomic_write_text
from core.plan import Plan, Step

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
        "routes": [
            {
                "vehicle": "1",
                "trips": [{"start": plan.depot, "end": plan.depot, "steps": steps}],
            }
        ],
    }


def write_plan(plan: Plan, path: str | os.PathLike[str]) -> None:
    """Write the plan file atomically."""
    atomic_write_text(path, json.dumps(plan_to_dict(plan), indent=1, ensure_ascii=False) + "\n")


def plan_from_dict(doc: dict[str, Any], *, source: str = "plan") -> Plan:
    """Read back a single-circuit plan written by :func:`write_plan`."""
    if doc.get("format") != PLAN_FORMAT:
        raise InputError(
            f"not a {PLAN_FORMAT} file (format is {doc.get('format')!r})", source=source
        )
    try:
        trip = doc["routes"][0]["trips"][0]
        steps = [
            Step(
                str(s["link"]),
                str(s["from"]),
                str(s["to"]),
                bool(s["service"]),
                float(s["length_m"]),
                not s.get("reverse", False),
            )
            for s in trip["steps"]
        ]
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
        )
    except (KeyError, IndexError, TypeError, ValueError) as exc:
        raise InputError(
            f"the plan file is incomplete or damaged ({exc!r})", source=source
        ) from exc
