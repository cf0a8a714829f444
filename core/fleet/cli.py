"""The command line's fleet part: options of ``roundsman plan`` and ``roundsman compare``.

Kept here so that :mod:`core.cli` only hooks these in.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from core.errors import FleetError
from core.fleet.result import FleetPlan
from core.fleet.settings import WEEKDAYS, FleetSettings, settings_from_choices
from core.model import Network

if TYPE_CHECKING:
    from core.fleet.cards import RouteCard


def add_fleet_options(
    p: argparse.ArgumentParser, *, compare: bool = False, day: bool = True
) -> None:
    """``--vehicles``, ``--capacity``, ``--max-time``, ``--seed``, ``--day`` and the search
    time; for ``compare`` ``--vehicles`` takes a comma list; ``day=False`` leaves out
    ``--day`` (``roundsman card`` has its own, printed on the card)."""
    p.add_argument(
        "--vehicles",
        metavar="N[,N...]" if compare else "N",
        help="vehicles available (default: what the file states, else as many as needed)"
        + ("; a comma list compares each count" if compare else ""),
    )
    p.add_argument(
        "--capacity",
        type=float,
        metavar="C",
        help="what one vehicle carries, in the unit of the street demands (default: the file's)",
    )
    p.add_argument(
        "--max-time",
        type=float,
        metavar="MIN",
        help="minutes one route may take (default: the file's limit, else none)",
    )
    p.add_argument("--seed", type=int, default=0, help="seed of the route search (default 0)")
    if day:
        p.add_argument(
            "--day",
            choices=WEEKDAYS,
            help="plan only the streets serviced on this weekday (street attribute 'days')",
        )
    p.add_argument(
        "--search-time",
        type=float,
        default=10.0,
        metavar="S",
        help="seconds the fleet route search may use per plan (default 10)",
    )
    p.add_argument(
        "--iterations",
        type=int,
        metavar="N",
        help="stop the route search after N iterations instead of on time, so that a run "
        "repeats exactly for its seed on any machine (the search time still caps it)",
    )


def _counts(value: str | None) -> list[int | None]:
    if value is None:
        return [None]
    out: list[int | None] = []
    for part in str(value).split(","):
        try:
            n = int(part)
        except ValueError:
            raise FleetError(f"--vehicles {value!r}: {part!r} is not a whole number") from None
        if n < 1:
            raise FleetError(f"--vehicles {value!r}: counts must be at least 1")
        out.append(n)
    return out


def wants_fleet(network: Network, args: argparse.Namespace) -> bool:
    """A fleet plan unless ``--one-circuit``: when the file states capacity or vehicles,
    or the options give vehicles, capacity, a time limit or a day."""
    if getattr(args, "one_circuit", False):
        return False
    meta = network.meta or {}
    given = any(
        getattr(args, k, None) is not None for k in ("vehicles", "capacity", "max_time", "day")
    )
    return bool(meta.get("capacity") or meta.get("vehicles") or given)


def settings_from_args(
    network: Network, depot: str | None, args: argparse.Namespace, vehicles: int | None = None
) -> FleetSettings:
    """Fleet settings from the file and the options; the activity gives speeds and the
    demand model of streets without their own demand; reload stops take
    ``--stop-minutes`` (default: see :func:`settings_from_choices`)."""
    from core.activity import activity_preset

    activity = getattr(args, "activity", None)
    if vehicles is None and getattr(args, "vehicles", None) is not None:
        vehicles = _counts(args.vehicles)[0]
    return settings_from_choices(
        network,
        depot,
        activity=activity_preset(activity) if activity else None,
        vehicles=vehicles,
        capacity=getattr(args, "capacity", None),
        max_time_min=getattr(args, "max_time", None),
        seed=getattr(args, "seed", 0),
        day=getattr(args, "day", None),
        search_time=getattr(args, "search_time", 10.0),
        iterations=getattr(args, "iterations", None),
        reload_min=getattr(args, "stop_minutes", None),
    )


def fleet_summary(network: Network, plan: FleetPlan, units: dict[str, str] | None = None) -> str:
    """The human summary of a fleet plan: one line per route and trip, then totals.

    ``units`` maps a vehicle type's name to the unit of its load (``"t"``, ``"m3"``)."""
    unit, name = (1000.0, "km") if network.crs is not None else (1.0, "")
    lines = [
        f"{network.name or 'Network'}: fleet plan, {len(plan.routes)} vehicles, "
        f"{plan.n_trips} trips" + (f", {plan.day}" if plan.day else ""),
        f"Method      {plan.method}",
    ]
    for r in plan.routes:
        load_unit = (units or {}).get(r.vehicle_type, "")
        load_unit = f" {load_unit}" if load_unit else ""
        lines.append(
            f"Vehicle {r.vehicle}: {len(r.trips)} trips, service {r.service_m / unit:.2f} {name}, "
            f"deadhead {r.deadhead_m / unit:.2f} {name}, {r.minutes:.0f} min"
        )
        for k, t in enumerate(r.trips, 1):
            lines.append(
                f"  trip {k}: {t.start} -> {t.end}, load {t.load:.3g}{load_unit}, "
                f"service {t.service_m / unit:.2f}, deadhead {t.deadhead_m / unit:.2f}, "
                f"{t.minutes:.0f} min"
            )
    lines += [
        f"Service     {plan.service_m / unit:12.2f} {name}",
        f"Deadhead    {plan.deadhead_m / unit:12.2f} {name}",
        f"Total       {plan.total_m / unit:12.2f} {name}",
        f"Hours       {plan.hours:12.2f}",
    ]
    if plan.gap is not None:
        lines.append(
            f"Bound       {plan.lower_bound_m / unit:12.2f} {name}  (one circuit without "
            f"limits; total {100 * plan.gap:.1f} % above)"
        )
    if len(plan.class_done_min) > 1:
        for p, m in plan.class_done_min.items():
            lines.append(f"Class {p} complete after {m:.0f} min")
    lines.append("Check       " + ("feasible" if plan.feasible else "NOT FEASIBLE"))
    lines += [f"Problem: {i}" for i in plan.issues[:10]]
    lines += [f"Note: {n}" for n in plan.notes]
    return "\n".join(lines)


def run_fleet_plan(network: Network, depot: str | None, args: argparse.Namespace) -> int:
    """``roundsman plan`` for a fleet: plan, print, write the plan file."""
    from core.files.plan_json import write_plan
    from core.fleet.planner import plan_fleet

    settings = settings_from_args(network, depot, args)
    plan = plan_fleet(network, settings)
    print(fleet_summary(network, plan, {v.name: v.capacity_unit for v in settings.vehicles}))
    out = args.out or Path(args.input).with_suffix(".plan.json").name
    write_plan(plan, out)
    print(f"Plan written to {out}")
    _write_fleet_exports(network, plan, settings, args)
    if not plan.feasible:
        print("roundsman: the plan breaks a rule (see Problem lines)", file=sys.stderr)
    return 0


def _write_fleet_exports(
    network: Network, plan: FleetPlan, settings: FleetSettings, args: argparse.Namespace
) -> None:
    """``--gpx``, ``--instructions-csv``, ``--circuit-geojson`` for a fleet plan: every
    route in one file each (see :mod:`core.files.fleet_exports`)."""
    paths = [getattr(args, k, None) for k in ("gpx", "instructions_csv", "circuit_geojson")]
    if not any(paths):
        return
    from core.files.fleet_exports import write_fleet_exports
    from core.fleet.cards import route_exports

    cards = cards_from_args(network, plan, settings, args)
    done = write_fleet_exports(
        network,
        route_exports(cards),
        gpx=paths[0],
        csv_path=paths[1],
        geojson=paths[2],
        name=network.name,
    )
    for line in done:
        print(line)


def cards_from_args(
    network: Network,
    plan: FleetPlan,
    settings: FleetSettings,
    args: argparse.Namespace,
    *,
    day: str | None = None,
    vehicle_prefix: str = "",
) -> list[RouteCard]:
    """:func:`core.fleet.cards.fleet_cards` from ``--activity/--start/--drive/--stop-minutes``,
    loads in the first vehicle type's unit and capacity.  O(total route length)."""
    from core.activity import activity_preset
    from core.fleet.cards import fleet_cards

    return fleet_cards(
        network,
        plan,
        activity=activity_preset(args.activity),
        drive=args.drive,
        start=args.start,
        day=day,
        vehicle_prefix=vehicle_prefix,
        load_unit=settings.vehicles[0].capacity_unit,
        capacity=settings.vehicles[0].capacity,
        stop_minutes=getattr(args, "stop_minutes", None),
    )


def add_compare_parser(sub: argparse._SubParsersAction, common: object) -> None:
    """``roundsman compare INPUT --depots A,B,C [--vehicles N,M] [--csv FILE]``."""
    p = sub.add_parser("compare", help="plan from each candidate depot and compare the figures")
    common(p)  # type: ignore[operator]
    p.add_argument("--depots", required=True, help="candidate depots: node ids, comma separated")
    add_fleet_options(p, compare=True)
    p.add_argument("--activity", default=None, help="activity preset for speeds and demands")
    p.add_argument("--csv", metavar="FILE", help="also write the table as CSV")
    p.add_argument(
        "--workers", type=int, metavar="N", help="parallel processes (default: all cores)"
    )
    p.set_defaults(func=cmd_compare)


def cmd_compare(args: argparse.Namespace) -> int:
    from core.cli import load_network
    from core.files.atomic import atomic_write_text
    from core.fleet.compare import Candidate, compare_depots, rows_csv, table_text

    network = load_network(args)
    depots = [d.strip() for d in str(args.depots).split(",") if d.strip()]
    for d in depots:
        if d not in network.nodes:
            raise FleetError(f"--depots: {d!r} is not a node of the network")
    counts = _counts(args.vehicles)
    settings = settings_from_args(network, None, args, vehicles=None)
    cands = [Candidate(d, n) for d in depots for n in counts]

    def progress(msg: str, frac: float) -> None:
        print(f"[{frac * 100:3.0f} %] {msg}", file=sys.stderr)

    rows = compare_depots(network, cands, settings, workers=args.workers, progress=progress)
    unit = 1000.0 if network.crs is not None else 1.0
    print(table_text(rows, unit))
    if args.csv:
        atomic_write_text(args.csv, rows_csv(rows, unit))
        print(f"Table written to {args.csv}")
    return 0
