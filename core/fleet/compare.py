"""Depot comparison: plan the same work from each candidate depot and tabulate the figures.

Each candidate (a depot, optionally with a number of vehicles) is planned by
:func:`core.fleet.plan_fleet` in its own process (``concurrent.futures``
``ProcessPoolExecutor``, one worker per core by default).  The caller gets
``progress(message, fraction)`` as candidates finish and may cancel with ``stop``
(callable or :class:`threading.Event`): pending candidates are dropped and running
ones are told to stop through a shared event.
"""

from __future__ import annotations

import csv
import io
import multiprocessing
import os
import threading
import time
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from dataclasses import dataclass, replace

from core.errors import Cancelled, FleetError, RoundsmanError
from core.fleet.settings import FleetSettings
from core.model import Network

ProgressFn = Callable[[str, float], None]
StopFlag = Callable[[], bool] | threading.Event


@dataclass(frozen=True, slots=True)
class Candidate:
    depot: str
    vehicles: int | None = None
    """Vehicles of each type (None: as the settings say)."""


@dataclass(slots=True)
class CompareRow:
    """The figures of one candidate.  ``error`` is set (and the figures are 0) when the
    candidate could not be planned, e.g. streets unreachable from that depot."""

    depot: str
    vehicles: int | None
    deadhead_m: float = 0.0
    total_m: float = 0.0
    hours: float = 0.0
    vehicles_needed: int = 0
    trips: int = 0
    feasible: bool = False
    issues: tuple[str, ...] = ()
    seconds: float = 0.0
    error: str = ""


def _settings_for(settings: FleetSettings, cand: Candidate) -> FleetSettings:
    types = tuple(
        replace(v, home=cand.depot, count=cand.vehicles if cand.vehicles else v.count)
        for v in settings.vehicles
    )
    return replace(settings, vehicles=types)


def plan_candidate(
    network: Network, settings: FleetSettings, cand: Candidate, stop: object = None
) -> CompareRow:
    """Plan one candidate; errors a person can cause become the row's ``error``."""
    from core.fleet.planner import plan_fleet

    t = time.perf_counter()
    row = CompareRow(cand.depot, cand.vehicles)
    try:
        if cand.depot not in network.nodes:
            raise FleetError(f"candidate depot {cand.depot!r} is not a node of the network")
        plan = plan_fleet(network, _settings_for(settings, cand), stop=stop)  # type: ignore[arg-type]
    except Cancelled:
        raise
    except RoundsmanError as exc:
        row.error = str(exc)
        row.seconds = time.perf_counter() - t
        return row
    row.deadhead_m = plan.deadhead_m
    row.total_m = plan.total_m
    row.hours = plan.hours
    row.vehicles_needed = len(plan.routes)
    row.trips = plan.n_trips
    row.feasible = plan.feasible
    row.issues = tuple(plan.issues)
    row.seconds = time.perf_counter() - t
    return row


def _worker(
    network: Network, settings: FleetSettings, cand: Candidate, event: object
) -> CompareRow:
    stop = event.is_set if event is not None else None  # type: ignore[attr-defined]
    try:
        return plan_candidate(network, settings, cand, stop)
    except Cancelled:
        return CompareRow(cand.depot, cand.vehicles, error="cancelled")


def compare_depots(
    network: Network,
    candidates: Sequence[Candidate],
    settings: FleetSettings,
    *,
    workers: int | None = None,
    progress: ProgressFn | None = None,
    stop: StopFlag | None = None,
) -> list[CompareRow]:
    """Plan every candidate, in parallel processes, and return rows in candidate order.

    ``workers`` defaults to the number of cores; 1 plans in this process (no pool).
    Raises :class:`~core.errors.Cancelled` when ``stop`` is raised.
    """
    if not candidates:
        raise FleetError("give at least one candidate depot")
    say = progress or (lambda m, f: None)
    stopped = (
        (stop.is_set if isinstance(stop, threading.Event) else stop)
        if stop is not None
        else (lambda: False)
    )
    n = len(candidates)
    workers = max(1, min(workers or os.cpu_count() or 1, n))
    rows: dict[int, CompareRow] = {}
    say(f"planning {n} candidates on {workers} processes", 0.0)
    if workers == 1:
        for k, cand in enumerate(candidates):
            if stopped():
                raise Cancelled("the depot comparison was cancelled")
            rows[k] = plan_candidate(network, settings, cand, stopped)
            say(f"depot {cand.depot} done", (k + 1) / n)
        return [rows[k] for k in range(n)]
    ctx = multiprocessing.get_context("spawn")
    with ctx.Manager() as manager:
        event = manager.Event()
        with ProcessPoolExecutor(max_workers=workers, mp_context=ctx) as pool:
            futures: dict[Future[CompareRow], int] = {
                pool.submit(_worker, network, settings, cand, event): k
                for k, cand in enumerate(candidates)
            }
            pending = set(futures)
            while pending:
                done, pending = wait(pending, timeout=0.2, return_when=FIRST_COMPLETED)
                for f in done:
                    k = futures[f]
                    rows[k] = f.result()
                    say(f"depot {candidates[k].depot} done", len(rows) / n)
                if stopped():
                    event.set()
                    for f in pending:
                        f.cancel()
                    pool.shutdown(wait=True, cancel_futures=True)
                    raise Cancelled("the depot comparison was cancelled")
    return [rows[k] for k in range(n)]


COLUMNS = (
    "depot",
    "vehicles",
    "deadhead",
    "total",
    "hours",
    "vehicles_needed",
    "trips",
    "feasible",
    "note",
)


def row_values(r: CompareRow, unit: float = 1000.0) -> list[str]:
    """The row as text cells in the order of :data:`COLUMNS` (``unit`` divides lengths)."""
    note = r.error or "; ".join(r.issues[:2])
    return [
        r.depot,
        "" if r.vehicles is None else str(r.vehicles),
        f"{r.deadhead_m / unit:.2f}",
        f"{r.total_m / unit:.2f}",
        f"{r.hours:.2f}",
        str(r.vehicles_needed),
        str(r.trips),
        "yes" if r.feasible and not r.error else "no",
        note,
    ]


def columns(unit: float = 1000.0) -> list[str]:
    """Column names; lengths carry ``_km`` when ``unit`` is 1000 (metres to km)."""
    suffix = "_km" if unit == 1000.0 else ""
    return [c + suffix if c in ("deadhead", "total") else c for c in COLUMNS]


def table_text(rows: Sequence[CompareRow], unit: float = 1000.0) -> str:
    """A plain text table with a bar of total distance per candidate."""
    header = [*columns(unit)[:-1], "total (bar)", "note"]
    cells = []
    best = max((r.total_m for r in rows if not r.error), default=0.0) or 1.0
    for r in rows:
        v = row_values(r, unit)
        bar = "#" * round(20 * r.total_m / best) if not r.error else ""
        cells.append([*v[:-1], bar, v[-1]])
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(header)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(header, widths, strict=True)).rstrip()]
    for c in cells:
        lines.append("  ".join(x.ljust(w) for x, w in zip(c, widths, strict=True)).rstrip())
    return "\n".join(lines)


def rows_csv(rows: Sequence[CompareRow], unit: float = 1000.0) -> str:
    """The rows as CSV text (RFC 4180) with a header line."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(columns(unit))
    for r in rows:
        w.writerow(row_values(r, unit))
    return buf.getvalue()
