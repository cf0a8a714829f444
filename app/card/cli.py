"""``roundsman card``: the route card as a PDF, without the window.

``roundsman card INPUT [--depot NODE] --pdf CARD.pdf [--page A4|Letter]
[--activity NAME] [--start HH:MM] [--drive right|left] [--plan PLAN.json]
[--route NAME] [--day TEXT] [--vehicle TEXT]``

Plans the circuit as ``roundsman plan`` does (or reads a saved plan file with
``--plan``), turns it into directions and draws the card.  When the file or the
options make a fleet plan (``--vehicles``, ``--capacity``, ``--max-time``, service
days; as ``roundsman plan``), or ``--plan`` holds one, it writes one card per
vehicle route into the one PDF, each route on its own pages with its own header and
page numbers (:mod:`core.fleet.cards`); ``--one-circuit`` keeps the single card.  This lives in
``app`` because drawing needs Qt, which ``core`` never imports;
:mod:`app.launcher` hands ``card`` command lines here.  Qt runs offscreen when
there is no display.  Errors are one line with exit status 2, as in
:mod:`core.cli`.
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence

from core.cli import (
    add_engine_options,
    add_route_options,
    add_snap_option,
    directions_for,
    load_network,
    plan_with_options,
    resolve_depot,
    run_reporting,
)
from core.errors import RoundsmanError
from core.fleet.cli import add_fleet_options
from core.model import Network

_APP: object = None


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="roundsman card",
        description="Plan the circuit and write the crew's route card as a PDF.",
    )
    p.add_argument("input", help="network file (any format roundsman plan reads)")
    p.add_argument("--pdf", required=True, metavar="CARD.pdf", help="the PDF file to write")
    p.add_argument("--page", default="A4", help="paper size: A4 or Letter, portrait (default A4)")
    p.add_argument(
        "--depot",
        help="depot: a node id, X,Y or lonlat:LON,LAT (snapped); default: the file's depot",
    )
    p.add_argument(
        "--plan",
        metavar="PLAN.json",
        help="use a plan written by 'roundsman plan' instead of planning again",
    )
    add_route_options(p)
    p.add_argument("--route", default="", help="route name printed on the card")
    p.add_argument(
        "--day",
        default="",
        help="date or weekday printed on the card; for a fleet plan on a file whose streets "
        "have service days, a weekday or date also picks that day's streets",
    )
    p.add_argument("--vehicle", default="", help="vehicle printed on the card")
    p.add_argument(
        "--one-circuit",
        action="store_true",
        help="one card for one circuit, whatever capacity or vehicles the file states",
    )
    add_fleet_options(p, day=False)
    add_snap_option(p)
    add_engine_options(p)
    return p


def ensure_gui_app() -> object:
    """A QGuiApplication for drawing; offscreen when the machine has no display."""
    if not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtGui import QGuiApplication

    global _APP
    app = QGuiApplication.instance()
    if app is None:
        # Kept for the life of the process: Qt's application object must outlive
        # every paint device, and Python must not collect it early.
        _APP = app = QGuiApplication(["roundsman"])
    return app


def _run(args: argparse.Namespace) -> int:
    from app.card.render import check_page_size, write_card_pdf
    from core.activity import activity_preset
    from core.card import build_card
    from core.turns import parse_drive_side

    page = check_page_size(args.page)
    activity_preset(args.activity)
    parse_drive_side(args.drive)
    network = load_network(args)
    doc = None
    if args.plan:
        from core.files._jsonio import load_json, read_text, source_label
        from core.files.plan_json import is_fleet_doc

        source = source_label(args.plan)
        doc = load_json(read_text(args.plan), source=source)
        if is_fleet_doc(doc):
            if args.one_circuit:
                raise RoundsmanError(
                    f"{args.plan} holds a fleet plan (one route per vehicle); leave out "
                    "--one-circuit, or give a plan written with 'roundsman plan --one-circuit'"
                )
            return _run_fleet(args, network, page, doc)
    elif _fleet_wanted(network, args):
        return _run_fleet(args, network, page, None)
    if network.meta.get("capacity") or network.meta.get("vehicles"):
        print(
            "Note: this file states vehicles or capacity; the card shows one circuit "
            "from the depot over every street that needs service.",
            file=sys.stderr,
        )
    if args.plan:
        from core.files.plan_json import plan_from_dict

        plan = plan_from_dict(doc, source=source)
        if args.depot is not None and resolve_depot(network, args.depot) != plan.depot:
            raise RoundsmanError(
                f"--depot {args.depot} differs from the plan file's depot {plan.depot}"
            )
    else:
        depot = resolve_depot(network, args.depot)
        plan = plan_with_options(network, depot, args)
    directions = directions_for(network, plan, args)
    content = build_card(network, directions, route=args.route, day=args.day, vehicle=args.vehicle)
    ensure_gui_app()
    pages = write_card_pdf(content, args.pdf, page)
    print(
        f"Route card written to {args.pdf}: {pages} pages, "
        f"{len(content.rows)} instructions, {content.totals.total}"
    )
    return 0


def _fleet_args(args: argparse.Namespace) -> argparse.Namespace:
    """The options as core.fleet.cli reads them: the printed --day becomes the fleet
    day when it names a weekday or a date."""
    from core.fleet.cards import weekday_code

    return argparse.Namespace(**{**vars(args), "day": weekday_code(args.day)})


def _fleet_wanted(network: Network, args: argparse.Namespace) -> bool:
    """A fleet plan, as for ``roundsman plan``, unless --one-circuit; a day alone asks
    for one only when the streets carry service days (else it is just printed)."""
    from core.fleet.cli import wants_fleet

    if args.one_circuit:
        return False
    ns = _fleet_args(args)
    with_days = any(s.attrs and "days" in s.attrs for s in network.segments.values())
    if not with_days:
        ns.day = None
    return wants_fleet(network, ns)


def _run_fleet(
    args: argparse.Namespace, network: Network, page: str, doc: dict[str, object] | None
) -> int:
    """One card per vehicle route, all in one PDF (each route its own pages)."""
    from app.card.render import write_cards_pdf
    from core.fleet.cli import cards_from_args, fleet_summary, settings_from_args

    ns = _fleet_args(args)
    if doc is not None:
        from core.files.plan_json import fleet_plan_from_dict

        plan = fleet_plan_from_dict(doc, source=args.plan)  # type: ignore[arg-type]
        if args.depot is not None and resolve_depot(network, args.depot) != plan.depot:
            raise RoundsmanError(
                f"--depot {args.depot} differs from the plan file's depot {plan.depot}"
            )
        settings = settings_from_args(network, None, ns)
    else:
        from core.fleet.planner import plan_fleet

        depot = resolve_depot(network, args.depot)
        settings = settings_from_args(network, depot, ns)
        plan = plan_fleet(network, settings)
        print(fleet_summary(network, plan))
    if not plan.feasible:
        print("Warning: the fleet plan breaks a rule; the cards show it as it is.", file=sys.stderr)
    cards = cards_from_args(
        network, plan, settings, args, day=args.day or None, vehicle_prefix=args.vehicle
    )
    ensure_gui_app()
    pages = write_cards_pdf([c.content for c in cards], args.pdf, page)
    print(
        f"Route cards written to {args.pdf}: {len(cards)} routes, "
        f"{sum(pages)} pages ({' + '.join(map(str, pages))}), each route on its own pages"
    )
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(list(sys.argv[2:] if argv is None else argv))
    return run_reporting("roundsman card", lambda: _run(args))
