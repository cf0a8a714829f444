"""The ``roundsman`` command's headless part.

``roundsman`` alone opens the window (see :mod:`app.launcher`, which hands
every other command line to :func:`main` here); the subcommands:

``roundsman plan INPUT [--depot NODE] [--one-circuit] [--out PLAN.json]``
    Plan the shortest circuit over every street that needs service, print a
    summary and write the plan file.
    With ``--gpx``, ``--instructions-csv`` or ``--circuit-geojson`` it also
    writes the driver's directions and the circuit for maps (``--activity``,
    ``--start HH:MM`` and ``--drive right|left`` shape them).
    When the file or the options state capacity, vehicles, a time limit or a
    day (``--vehicles``, ``--capacity``, ``--max-time``, ``--day``, ``--seed``),
    a fleet plan of routes and trips instead (see :mod:`core.fleet`).
``roundsman compare INPUT --depots A,B,C [--vehicles N,M] [--csv FILE]``
    Plan from each candidate depot in parallel and print a comparison table.
``roundsman info INPUT``
    Summarise a network file.
``roundsman convert INPUT OUTPUT [--to project|geojson]``
    Write a network in another format.

Every error the user can cause is printed as one line naming the file, line,
feature or street at fault, with exit status 2; never a traceback.
"""

from __future__ import annotations

import argparse
import re
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from core import __version__
from core.errors import DepotError, InputError, RoundsmanError
from core.model import Network
from core.plan import Plan

if TYPE_CHECKING:
    from core.directions import Directions

EXIT_ERROR = 2

_XY = re.compile(
    r"^\s*(lonlat:)?\s*(-?[\d.]+(?:[eE][-+]?\d+)?)\s*,\s*(-?[\d.]+(?:[eE][-+]?\d+)?)\s*$"
)


def resolve_depot(network: Network, value: str | None) -> str:
    """The depot node for ``--depot``: a node id, ``x,y`` in the network's
    coordinates, or ``lonlat:LON,LAT``; both coordinate forms snap to the
    nearest node.  Without a value, the file's depot."""
    if value is None:
        if network.depot is None:
            raise DepotError(
                "the file names no depot: give one with --depot NODE, --depot X,Y or "
                "--depot lonlat:LON,LAT"
            )
        return network.depot
    if value in network.nodes:
        return value
    m = _XY.match(value)
    if m is None:
        raise DepotError(
            f"--depot {value!r} is neither a node of this network nor coordinates "
            "(use NODE, X,Y or lonlat:LON,LAT)"
        )
    a, b = float(m.group(2)), float(m.group(3))
    if m.group(1):
        if network.crs is None:
            raise DepotError("this network has no map projection, so lon/lat cannot be placed")
        from core.geo import from_lonlat

        a, b = from_lonlat(network.crs).transform(a, b)
    if not network.has_coordinates:
        raise DepotError(
            f"--depot {value!r}: this network has no coordinates; give a node id instead"
        )
    return network.nearest_node(a, b)


def _km(x: float, metric: bool) -> str:
    return f"{x / 1000:10.2f} km" if metric else f"{x:12.1f}"


def summary_text(network: Network, plan: Plan) -> str:
    """The short human summary printed after planning."""
    metric = network.crs is not None
    req = sum(1 for _ in network.required())
    total = plan.total_m
    share = plan.deadhead_share * 100
    exact = "proven shortest" if plan.exact else f"gap to lower bound {plan.gap * 100:.2f} %"
    lines = [
        f"{network.name or 'Network'}: {len(network.segments)} streets, {req} need service; "
        f"depot {plan.depot}",
        f"Method      {plan.method} ({exact})",
        f"Service     {_km(plan.service_m, metric)}",
        f"Deadhead    {_km(plan.deadhead_m, metric)}  ({share:.1f} % of the circuit)",
        f"Total       {_km(total, metric)}",
        f"Lower bound {_km(plan.lower_bound_m, metric)}",
        f"Passes      {len(plan.steps):>10}     solved in {plan.timings.get('total_s', 0):.2f} s",
    ]
    lines += turns_lines(plan, metric)
    lines += [f"Note: {n}" for n in plan.notes]
    return "\n".join(lines)


def turns_lines(plan: Plan, metric: bool) -> list[str]:
    """The turn counts of the summary (bears count as straight on)."""
    t = plan.turns
    if t is None:
        return []
    where = ""
    if t.uturn_nodes:
        shown = sorted(set(t.uturn_nodes))
        where = f"; {len(t.uturn_nodes)} where none is allowed, at {', '.join(shown[:8])}"
        where += ", ..." if len(shown) > 8 else ""
    allowed = t.uturns - len(t.uturn_nodes)
    u = f"{t.uturns} U-turns ({allowed} at dead ends or turning places{where})"
    if not t.geometry:
        lines = [f"Turns       {u} (no street geometry: other turns unknown)"]
    else:
        lines = [
            f"Turns       {t.lefts} left, {t.rights} right, {t.straight_on} straight on "
            f"(with {t.bear_left + t.bear_right} bears), {u}",
            f"            {t.across_traffic} across oncoming traffic (traffic keeps {t.drive})",
        ]
    if t.detours:
        lines.append(
            f"Turn rules  {t.detours} way(s) round instead of a U-turn, "
            f"extra distance {_km(t.extra_m, metric).strip()}"
        )
    return lines


def add_route_options(p: argparse.ArgumentParser) -> None:
    """``--activity``, ``--start`` and ``--drive``: what shapes directions and cards."""
    from core.activity import PRESETS

    p.add_argument(
        "--activity",
        default="sweeping",
        help=f"the work done, for speeds and wording: {', '.join(PRESETS)} (default sweeping)",
    )
    p.add_argument(
        "--start", metavar="HH:MM", help="departure time for the clock times of the directions"
    )
    p.add_argument(
        "--drive",
        default="right",
        help="the side of the road traffic keeps to: right or left (default right)",
    )
    p.add_argument(
        "--stop-minutes",
        type=float,
        metavar="MIN",
        help="fleet plans: minutes of each reload stop, counted in the route times and "
        "their limit and shown in the directions (default on a map: 20 sweeping, "
        "15 gritting, see core/fleet/cards.py; none for research files)",
    )


def add_engine_options(p: argparse.ArgumentParser) -> None:
    """``--time-limit`` and ``--strategy``: how hard the circuit engine may try."""
    p.add_argument(
        "--time-limit",
        type=float,
        default=30.0,
        metavar="S",
        help="seconds the integer programs may use (mixed and rural cases; default 30)",
    )
    p.add_argument(
        "--strategy",
        choices=("auto", "heuristic"),
        default="auto",
        help="auto: exact where the time allows (default); heuristic: skip the integer programs",
    )


def add_snap_option(p: argparse.ArgumentParser) -> None:
    """``--snap``: how near GeoJSON line ends must be to join."""
    p.add_argument(
        "--snap",
        type=float,
        default=0.5,
        metavar="M",
        help="GeoJSON: join line ends closer than this many metres (default 0.5)",
    )


def run_reporting(prog: str, run: Callable[[], int]) -> int:
    """Call ``run()``; an error the user can cause becomes one line on stderr naming
    ``prog``, with exit status :data:`EXIT_ERROR` (130 when stopped by Ctrl+C)."""
    try:
        return int(run())
    except RoundsmanError as exc:
        print(f"{prog}: error: {exc}", file=sys.stderr)
        return EXIT_ERROR
    except OSError as exc:
        name = getattr(exc, "filename", None)
        print(f"{prog}: error: {name + ': ' if name else ''}{exc.strerror or exc}", file=sys.stderr)
        return EXIT_ERROR
    except KeyboardInterrupt:
        print(f"{prog}: stopped", file=sys.stderr)
        return 130


def plan_with_options(network: Network, depot: str, args: argparse.Namespace) -> Plan:
    """Plan the circuit, handing on ``--drive`` when the engine takes it."""
    import inspect

    from core.solve import plan_circuit
    from core.turns import parse_drive_side

    kwargs: dict[str, object] = {}
    drive = getattr(args, "drive", None)
    if drive is not None:
        side = parse_drive_side(drive)
        if "drive" in inspect.signature(plan_circuit).parameters:
            kwargs["drive"] = side
    detours = getattr(args, "uturn_detours", "auto")
    if detours != "auto":
        kwargs["uturn_detours"] = detours == "on"
    return plan_circuit(
        network,
        depot,
        time_limit=getattr(args, "time_limit", 30.0),
        strategy=getattr(args, "strategy", "auto"),
        **kwargs,  # type: ignore[arg-type]
    )


def directions_for(network: Network, plan: Plan, args: argparse.Namespace) -> Directions:
    """The driver's directions for ``plan`` from ``--activity/--start/--drive``."""
    from core.activity import activity_preset
    from core.directions import build_directions

    return build_directions(
        network,
        plan.steps,
        activity=activity_preset(args.activity),
        drive=args.drive,
        start=args.start,
        depot_label=f"the depot ({plan.depot})",
    )


def _write_exports(network: Network, plan: Plan, args: argparse.Namespace) -> None:
    wanted = (args.gpx, args.instructions_csv, args.circuit_geojson)
    if not any(wanted):
        return
    directions = directions_for(network, plan, args)
    if args.instructions_csv:
        from core.files.instructions_csv import write_instructions_csv

        write_instructions_csv(directions, args.instructions_csv)
        print(f"Instructions written to {args.instructions_csv}")
    if args.gpx:
        from core.files.gpx import write_gpx

        write_gpx(network, directions, args.gpx)
        print(f"GPX written to {args.gpx}")
    if args.circuit_geojson:
        from core.files.circuit_geojson import write_circuit_geojson

        write_circuit_geojson(network, directions, args.circuit_geojson)
        print(f"Circuit GeoJSON written to {args.circuit_geojson}")


def _cmd_plan(args: argparse.Namespace) -> int:
    from core.activity import activity_preset
    from core.files.plan_json import write_plan
    from core.turns import parse_drive_side

    network = load_network(args)
    depot = resolve_depot(network, args.depot)
    activity_preset(args.activity)  # refuse a bad name before the long part
    parse_drive_side(args.drive)
    from core.fleet.cli import run_fleet_plan, wants_fleet

    if wants_fleet(network, args):
        return run_fleet_plan(network, depot, args)
    plan = plan_with_options(network, depot, args)
    print(summary_text(network, plan))
    out = args.out or Path(args.input).with_suffix(".plan.json").name
    write_plan(plan, out)
    print(f"Plan written to {out}")
    _write_exports(network, plan, args)
    return 0


def load_network(args: argparse.Namespace) -> Network:
    """Read ``args.input`` with the import options, then cut it along
    ``--boundary`` and keep the largest piece (``--keep-largest``)."""
    from core.files import read_network

    network = read_network(
        args.input,
        snap_tolerance=args.snap,
        layer=getattr(args, "layer", None),
        highways=getattr(args, "highways", None),
        on_error=getattr(args, "on_error", "reject"),
    )
    if getattr(args, "boundary", None):
        from core.boundary import clip_to_boundary, read_boundary

        if network.crs is None:
            raise InputError("--boundary needs a network placed on the map (with a CRS)")
        area = read_boundary(args.boundary, network.crs)
        network = clip_to_boundary(network, area).network
    if getattr(args, "keep_largest", None):
        from core.report import keep_largest_piece

        network = keep_largest_piece(network, connection=args.keep_largest)
    return network


def _cmd_info(args: argparse.Namespace) -> int:
    from core.report import import_report

    network = load_network(args)
    s = network.summary()
    print(f"{network.name or args.input}")
    print(f"  CRS               {network.crs or '(none: abstract lengths)'}")
    print(f"  nodes             {s['nodes']}")
    print(f"  streets           {s['segments']}")
    print(f"  needing service   {s['required_segments']}")
    print(f"  one-way           {s['one_way_segments']}")
    print(f"  total length      {s['length_m']:.1f}")
    print(f"  depot             {network.depot or '(not set)'}")
    print(import_report(network).text())
    return 0


def _cmd_convert(args: argparse.Namespace) -> int:
    from core.files import write_network

    network = load_network(args)
    fmt = args.to or ("geojson" if str(args.output).lower().endswith(".geojson") else "project")
    write_network(network, args.output, fmt=fmt)
    print(f"Wrote {args.output} ({fmt})")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="roundsman",
        description="Shortest circuits for street sweeping, gritting and inspection. "
        "Run without a command to open the window.",
        epilog="The crew's route card as a PDF: roundsman card INPUT --pdf CARD.pdf "
        "(see roundsman card --help).",
    )
    parser.add_argument("--version", action="version", version=f"roundsman {__version__}")
    sub = parser.add_subparsers(dest="command")

    def common(p: argparse.ArgumentParser) -> None:
        p.add_argument(
            "input",
            help="network file: GeoJSON, GeoPackage, OpenStreetMap (.osm, .osm.pbf), "
            "Roundsman project, CARPLIB .dat or salt-spreading JSON (recognised by content)",
        )
        add_snap_option(p)
        p.add_argument("--layer", help="GeoPackage: the line layer to read")
        p.add_argument(
            "--highways",
            metavar="A,B,...",
            help="OpenStreetMap: highway classes to keep (default motorway ... living_street)",
        )
        p.add_argument(
            "--on-error",
            choices=("reject", "skip"),
            default="reject",
            help="GeoJSON, GeoPackage, OpenStreetMap: refuse the file at a broken feature "
            "(default) or skip such features and list them",
        )
        p.add_argument(
            "--boundary",
            metavar="FILE",
            help="cut the network along the district polygon in FILE (GeoJSON or GeoPackage); "
            "outside parts that connect the district are kept as deadhead",
        )
        p.add_argument(
            "--keep-largest",
            nargs="?",
            const="weak",
            choices=("weak", "strong"),
            help="keep only the largest connected piece (strong: obeying one-way streets)",
        )

    p = sub.add_parser("plan", help="plan the shortest circuit over every street needing service")
    common(p)
    p.add_argument(
        "--depot",
        help="depot: a node id, X,Y in the network's coordinates, or "
        "lonlat:LON,LAT (snapped to the nearest node); default: the file's depot",
    )
    p.add_argument(
        "--one-circuit",
        action="store_true",
        help="one circuit from the depot, whatever capacity or vehicles the file states",
    )
    p.add_argument(
        "--out",
        metavar="PLAN.json",
        help="where to write the plan (default: INPUT name with .plan.json, in the current folder)",
    )
    add_engine_options(p)
    p.add_argument(
        "--uturn-detours",
        choices=("auto", "on", "off"),
        default="auto",
        help="drive round the block instead of a U-turn where none is allowed (adds deadhead); "
        "auto: on for maps with coordinates, off for abstract networks (default auto)",
    )
    add_route_options(p)
    from core.fleet.cli import add_compare_parser, add_fleet_options

    add_fleet_options(p)
    p.add_argument("--gpx", metavar="F.gpx", help="also write the circuit as GPX 1.1")
    p.add_argument(
        "--instructions-csv", metavar="F.csv", help="also write the driver's instructions as CSV"
    )
    p.add_argument(
        "--circuit-geojson",
        metavar="F.geojson",
        help="also write the circuit as GeoJSON (one line per pass, step numbers, service flags)",
    )
    p.set_defaults(func=_cmd_plan)

    add_compare_parser(sub, common)

    p = sub.add_parser("info", help="summarise a network file")
    common(p)
    p.set_defaults(func=_cmd_info)

    p = sub.add_parser("convert", help="write a network in another format")
    common(p)
    p.add_argument("output", help="the file to write")
    p.add_argument(
        "--to",
        choices=("project", "geojson"),
        help="output format (default: from the output name; .geojson or project)",
    )
    p.set_defaults(func=_cmd_convert)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    return run_reporting("roundsman", lambda: args.func(args))


if __name__ == "__main__":
    sys.exit(main())
