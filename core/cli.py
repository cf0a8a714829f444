"""The ``roundsman`` command's headless part.

``roundsman`` alone opens the window (see :mod:`app.launcher`, which hands
every other command line to :func:`main` here); the subcommands:

``roundsman plan INPUT [--depot NODE] [--one-circuit] [--out PLAN.json]``
    Plan the shortest circuit over every street that needs service, print a
    summary and write the plan file.
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
from collections.abc import Sequence
from pathlib import Path

from core import __version__
from core.errors import DepotError, RoundsmanError
from core.model import Network
from core.plan import Plan

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
    lines += [f"Note: {n}" for n in plan.notes]
    return "\n".join(lines)


def _cmd_plan(args: argparse.Namespace) -> int:
    from core.files import read_network
    from core.files.plan_json import write_plan
    from core.solve import plan_circuit

    network = read_network(args.input, snap_tolerance=args.snap)
    depot = resolve_depot(network, args.depot)
    if not args.one_circuit and (network.meta.get("capacity") or network.meta.get("vehicles")):
        print(
            "Note: this file states vehicles or capacity; fleet plans are not available yet, "
            "so one circuit from the depot is planned (as with --one-circuit).",
            file=sys.stderr,
        )
    plan = plan_circuit(network, depot, time_limit=args.time_limit, strategy=args.strategy)
    print(summary_text(network, plan))
    out = args.out or Path(args.input).with_suffix(".plan.json").name
    write_plan(plan, out)
    print(f"Plan written to {out}")
    return 0


def _cmd_info(args: argparse.Namespace) -> int:
    from core.files import read_network

    network = read_network(args.input, snap_tolerance=args.snap)
    s = network.summary()
    print(f"{network.name or args.input}")
    print(f"  CRS               {network.crs or '(none: abstract lengths)'}")
    print(f"  nodes             {s['nodes']}")
    print(f"  streets           {s['segments']}")
    print(f"  needing service   {s['required_segments']}")
    print(f"  one-way           {s['one_way_segments']}")
    print(f"  total length      {s['length_m']:.1f}")
    print(f"  depot             {network.depot or '(not set)'}")
    return 0


def _cmd_convert(args: argparse.Namespace) -> int:
    from core.files import read_network, write_network

    network = read_network(args.input, snap_tolerance=args.snap)
    fmt = args.to or ("geojson" if str(args.output).lower().endswith(".geojson") else "project")
    write_network(network, args.output, fmt=fmt)
    print(f"Wrote {args.output} ({fmt})")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="roundsman",
        description="Shortest circuits for street sweeping, gritting and inspection. "
        "Run without a command to open the window.",
    )
    parser.add_argument("--version", action="version", version=f"roundsman {__version__}")
    sub = parser.add_subparsers(dest="command")

    def common(p: argparse.ArgumentParser) -> None:
        p.add_argument(
            "input",
            help="network file: GeoJSON, Roundsman project, CARPLIB .dat "
            "or salt-spreading JSON (recognised by content)",
        )
        p.add_argument(
            "--snap",
            type=float,
            default=0.5,
            metavar="M",
            help="GeoJSON: join line ends closer than this many metres (default 0.5)",
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
    p.set_defaults(func=_cmd_plan)

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
    try:
        return int(args.func(args))
    except RoundsmanError as exc:
        print(f"roundsman: error: {exc}", file=sys.stderr)
        return EXIT_ERROR
    except OSError as exc:
        name = getattr(exc, "filename", None)
        print(
            f"roundsman: error: {name + ': ' if name else ''}{exc.strerror or exc}", file=sys.stderr
        )
        return EXIT_ERROR
    except KeyboardInterrupt:
        print("roundsman: stopped", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
