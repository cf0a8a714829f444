"""Time the covering-circuit engine on synthetic networks; print a Markdown table.

Run from the repository root::

    python bench/bench_engine.py                 # 1k, 10k, 50k, 100k segments + 40x40 grid
    python bench/bench_engine.py --quick         # 1k and the grid only
    python bench/bench_engine.py --sizes 1000,20000 --skip-baseline

For each size there are two cases: all streets two-way, and a mixed case with
10 % one-way streets (``--oneway-share``).  Every street needs one service pass.
The engine is timed end to end through ``core.solve.plan_circuit`` (arrays,
solve and circuit; generating the network is not timed), after one warm-up
call on a tiny grid.

Beside it, for the two-way case, a plain networkx pipeline for the same
optimum (every street required, so it is the undirected postman problem): the
odd-degree nodes, one ``networkx.single_source_dijkstra_path_length`` per odd
node, the complete graph of shortest-path lengths among odd nodes,
``networkx.min_weight_matching`` on it, and cost = total street length +
matching weight.  The matching is cubic in the number of odd nodes, so it runs
only where its estimated time (calibrated on this kind of machine) is within
``--baseline-budget`` seconds; elsewhere the table shows "—".  Both costs must
agree to 1 mm ("equal", else "DIFFERENT").

Each measurement runs in a fresh subprocess.  Memory is the peak resident set
size during the engine call minus the resident size just before it (Linux
``/proc/self/status`` VmHWM after resetting it through
``/proc/self/clear_refs``), so it counts C and C++ allocations (HiGHS,
PyMatching) as well as Python and numpy ones.  Where the reset is not
possible it falls back to the ``tracemalloc`` peak, and the column says so.
"""

from __future__ import annotations

import argparse
import gc
import json
import math
import os
import platform
import re
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from bench.synthetic import grid_network, synthetic_network  # noqa: E402
from core.model import Network, OneWay, Service  # noqa: E402

DEFAULT_SIZES = (1_000, 10_000, 50_000, 100_000)
QUICK_SIZES = (1_000,)
GRID_SHAPE = (40, 40)

# Baseline time model, measured on the project's 2-core machine with
# networkx 3.6: min_weight_matching ~4.2e-7 s x (odd nodes)^3, Dijkstra
# ~3e-6 s x (odd nodes) x (segments).
_MATCHING_S_PER_CUBE = 4.5e-7
_DIJKSTRA_S_PER_PAIR = 3.5e-6

ENGINE_MISSING = (
    "bench_engine: the engine is not available: cannot import "
    "core.solve.plan_circuit ({err}).\n"
    "Run this benchmark once core/solve provides plan_circuit, or time the "
    "networkx pipeline alone with --baseline-only."
)


# -- the networks -----------------------------------------------------------


def make_network(spec: dict[str, Any]) -> Network:
    """Build the network a case names (deterministic for its seed)."""
    if spec["kind"] == "grid":
        return grid_network(spec["rows"], spec["cols"], seed=spec["seed"])
    return synthetic_network(spec["n"], seed=spec["seed"], oneway_share=spec["oneway_share"])


def odd_node_count(network: Network) -> int:
    """Nodes of odd degree in the (all two-way) street graph."""
    degree: dict[str, int] = {}
    for s in network:
        degree[s.start] = degree.get(s.start, 0) + 1
        degree[s.end] = degree.get(s.end, 0) + 1
    return sum(1 for d in degree.values() if d % 2)


def estimate_baseline_seconds(odd: int, segments: int) -> float:
    """Rough run time of :func:`networkx_postman` on this kind of machine."""
    return _MATCHING_S_PER_CUBE * odd**3 + _DIJKSTRA_S_PER_PAIR * odd * segments


# -- the networkx pipeline --------------------------------------------------


def networkx_postman(network: Network) -> tuple[float, int]:
    """Optimal closed walk over every street of a two-way network, with networkx.

    Method: the classical undirected postman construction.  Odd-degree nodes
    of the street multigraph; shortest-path lengths from each odd node
    (``networkx.single_source_dijkstra_path_length``); the complete graph on
    the odd nodes weighted by those lengths; ``networkx.min_weight_matching``
    (blossom, cubic in the number of odd nodes).  Cost = total street length
    + matching weight.

    Returns
    -------
    (cost_m, odd_nodes)
    """
    import networkx as nx

    for s in network:
        if s.oneway is not OneWay.NO or s.service is Service.NONE or s.passes != 1:
            raise ValueError("the networkx pipeline needs two-way streets that all need 1 pass")
    g = nx.MultiGraph()
    g.add_nodes_from(network.nodes)
    g.add_edges_from((s.start, s.end, {"weight": s.length}) for s in network)
    odd = [n for n, d in g.degree() if d % 2]
    k = nx.Graph()
    for i, a in enumerate(odd):
        dist = nx.single_source_dijkstra_path_length(g, a, weight="weight")
        k.add_weighted_edges_from((a, b, dist[b]) for b in odd[i + 1 :])
    matching = nx.min_weight_matching(k, weight="weight")
    cost = sum(s.length for s in network) + sum(k[a][b]["weight"] for a, b in matching)
    return cost, len(odd)


# -- measuring in a worker process -----------------------------------------


def _proc_status_kib(field: str) -> int | None:
    try:
        text = Path("/proc/self/status").read_text()
    except OSError:
        return None
    m = re.search(rf"^{field}:\s+(\d+) kB", text, re.MULTILINE)
    return int(m.group(1)) if m else None


def _reset_peak_rss() -> bool:
    """Reset VmHWM to the current RSS (Linux 4.0+); False where not possible."""
    try:
        Path("/proc/self/clear_refs").write_text("5")
    except OSError:
        return False
    return _proc_status_kib("VmHWM") is not None


def _run_engine(spec: dict[str, Any]) -> dict[str, Any]:
    from core.solve import plan_circuit

    time_limit = float(spec["time_limit"])
    plan_circuit(grid_network(4, 4, seed=1), time_limit=time_limit)  # warm-up: lazy imports
    network = make_network(spec)
    gc.collect()
    memory_kind = "rss"
    if _reset_peak_rss():
        rss_before = _proc_status_kib("VmRSS") or 0
        t0 = time.perf_counter()
        plan = plan_circuit(network, time_limit=time_limit)
        seconds = time.perf_counter() - t0
        peak_mib = ((_proc_status_kib("VmHWM") or 0) - rss_before) / 1024
    else:
        import tracemalloc

        t0 = time.perf_counter()
        plan = plan_circuit(network, time_limit=time_limit)
        seconds = time.perf_counter() - t0
        del plan
        gc.collect()
        tracemalloc.start()
        plan = plan_circuit(network, time_limit=time_limit)
        peak_mib = tracemalloc.get_traced_memory()[1] / 2**20
        tracemalloc.stop()
        memory_kind = "tracemalloc"
    summary = network.summary()
    return {
        "segments": summary["segments"],
        "nodes": summary["nodes"],
        "one_way": summary["one_way_segments"],
        "seconds": seconds,
        "peak_mib": peak_mib,
        "memory_kind": memory_kind,
        "total_m": float(plan.total_m),
        "deadhead_m": float(plan.deadhead_m),
        "lower_bound_m": float(plan.lower_bound_m),
        "gap": None if plan.gap is None else float(plan.gap),
        "method": str(plan.method),
        "exact": bool(plan.exact),
        "timings": {k: float(v) for k, v in dict(plan.timings).items()},
    }


def _run_baseline(spec: dict[str, Any]) -> dict[str, Any]:
    network = make_network(spec)
    gc.collect()
    t0 = time.perf_counter()
    cost, odd = networkx_postman(network)
    return {"seconds": time.perf_counter() - t0, "total_m": cost, "odd": odd}


def _worker(spec_json: str) -> None:
    spec = json.loads(spec_json)
    result = _run_engine(spec) if spec["task"] == "engine" else _run_baseline(spec)
    print(json.dumps(result))


def measure(spec: dict[str, Any], timeout: float) -> dict[str, Any]:
    """Run one measurement in a fresh Python process; ``{"error": ...}`` on failure."""
    try:
        proc = subprocess.run(
            [sys.executable, str(Path(__file__).resolve()), "--worker", json.dumps(spec)],
            capture_output=True,
            text=True,
            timeout=timeout,
            cwd=ROOT,
        )
    except subprocess.TimeoutExpired:
        return {"error": f"timed out after {timeout:.0f} s"}
    lines = proc.stdout.strip().splitlines()
    if proc.returncode != 0 or not lines:
        tail = (proc.stderr.strip().splitlines() or ["no output"])[-1]
        return {"error": tail}
    return json.loads(lines[-1])


# -- the table ---------------------------------------------------------------


def _fmt_s(seconds: float) -> str:
    if seconds >= 100:
        return f"{seconds:.0f}"
    if seconds >= 1:
        return f"{seconds:.2f}"
    return f"{seconds:.3f}"


def _fmt_duration(seconds: float) -> str:
    for unit, size in (("days", 86_400), ("h", 3_600), ("min", 60)):
        if seconds >= 2 * size:
            value = seconds / size
            text = f"{value:.1f}" if value < 10 else f"{value:,.0f}".replace(",", " ")
            return f"{text} {unit}"
    return f"{seconds:.0f} s"


def _fmt_gap(gap: float | None) -> str:
    if gap is None or not math.isfinite(gap):
        return "no bound"
    return f"{100 * gap:.2f} %"


def _fmt_count(n: int) -> str:
    return f"{n:,}".replace(",", " ")


def _row(label: str, ours: dict[str, Any] | None, base: dict[str, Any] | None) -> str:
    dash = "—"
    if ours is None:
        cells = [dash] * 9
    elif "error" in ours:
        cells = [dash, dash, dash, f"failed: {ours['error']}", dash, dash, dash, dash, dash]
    else:
        gap = ours["gap"]
        dead = 100.0 * ours["deadhead_m"] / ours["total_m"] if ours["total_m"] else 0.0
        cells = [
            _fmt_count(ours["segments"]),
            _fmt_count(ours["nodes"]),
            _fmt_count(ours["one_way"]),
            _fmt_s(ours["seconds"]),
            f"{ours['peak_mib']:.0f}" + ("" if ours["memory_kind"] == "rss" else " (tracemalloc)"),
            f"{ours['method']}" + (" (exact)" if ours["exact"] else ""),
            _fmt_gap(gap),
            f"{ours['total_m'] / 1000:.3f}",
            f"{dead:.1f}",
        ]
    if base is None:
        cells += [dash, dash, dash]
    elif "error" in base or "skipped" in base:
        cells += [base.get("error") or base["skipped"], dash, dash]
    else:
        cells.append(_fmt_s(base["seconds"]))
        if ours is not None and "error" not in ours:
            cells.append(f"{base['seconds'] / ours['seconds']:,.0f}×".replace(",", " "))
            same = abs(base["total_m"] - ours["total_m"]) <= 1e-3
            cells.append("equal" if same else f"DIFFERENT ({base['total_m'] / 1000:.3f} km)")
        else:
            cells += [dash, f"{base['total_m'] / 1000:.3f} km"]
    return "| " + " | ".join([label, *cells]) + " |"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--sizes", help="comma-separated segment counts (default 1000,10000,50000,100000)"
    )
    parser.add_argument("--quick", action="store_true", help="only 1k segments and the 40x40 grid")
    parser.add_argument("--skip-baseline", action="store_true", help="do not run networkx")
    parser.add_argument("--baseline-only", action="store_true", help="run networkx only")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--oneway-share", type=float, default=0.10)
    parser.add_argument("--time-limit", type=float, default=60.0, help="engine time limit (s)")
    parser.add_argument(
        "--baseline-budget",
        type=float,
        default=300.0,
        help="run networkx only where its estimated time is below this (s)",
    )
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.worker:
        _worker(args.worker)
        return 0
    if args.baseline_only and args.skip_baseline:
        parser.error("--baseline-only and --skip-baseline leave nothing to run")
    if not args.baseline_only:
        try:
            from core.solve import plan_circuit  # noqa: F401
        except (ImportError, AttributeError) as err:
            print(ENGINE_MISSING.format(err=err), file=sys.stderr)
            return 2
    if args.quick:
        sizes = list(QUICK_SIZES)
    elif args.sizes:
        sizes = [int(float(s)) for s in args.sizes.split(",") if s.strip()]
    else:
        sizes = list(DEFAULT_SIZES)

    cases: list[tuple[str, dict[str, Any], bool]] = []
    rows, cols = GRID_SHAPE
    grid_spec = {"kind": "grid", "rows": rows, "cols": cols, "seed": args.seed}
    cases.append((f"grid {rows}×{cols}, two-way", grid_spec, True))
    for n in sizes:
        base = {"kind": "synthetic", "n": n, "seed": args.seed}
        cases.append((f"{_fmt_count(n)}, two-way", {**base, "oneway_share": 0.0}, True))
        if args.oneway_share > 0:
            mixed = {**base, "oneway_share": args.oneway_share}
            label = f"{_fmt_count(n)}, {100 * args.oneway_share:.0f} % one-way"
            cases.append((label, mixed, False))

    lines = []
    for label, spec, baseline_applies in cases:
        print(f"[bench] {label} …", file=sys.stderr, flush=True)
        ours = None
        if not args.baseline_only:
            ours = measure(
                {**spec, "task": "engine", "time_limit": args.time_limit},
                timeout=10 * args.time_limit + 600,
            )
        base = None
        if baseline_applies and not args.skip_baseline:
            network = make_network(spec)
            estimate = estimate_baseline_seconds(odd_node_count(network), len(network))
            del network
            if estimate > args.baseline_budget:
                base = {"skipped": f"— (est. {_fmt_duration(estimate)})"}
            else:
                print(f"[bench]   networkx, est. {estimate:.0f} s", file=sys.stderr, flush=True)
                base = measure({**spec, "task": "baseline"}, timeout=3 * args.baseline_budget)
        lines.append(_row(label, ours, base))
        if ours is not None and "timings" in ours:
            stages = ", ".join(f"{k} {_fmt_s(v)}" for k, v in ours["timings"].items())
            lines.append(f"<!-- {label}: {stages} -->")

    memory_kind = "peak RSS Δ MiB"
    print(f"## Engine benchmark (Python {platform.python_version()}, {_cpu_note()})")
    print()
    header = [
        "network",
        "segments",
        "nodes",
        "one-way",
        "ours (s)",
        memory_kind,
        "method",
        "gap",
        "total km",
        "deadhead %",
        "networkx (s)",
        "speed-up",
        "cost",
    ]
    print("| " + " | ".join(header) + " |")
    print("|" + "|".join(["---"] + ["---:"] * 5 + ["---"] + ["---:"] * 5 + ["---"]) + "|")
    stage_notes = []
    for line in lines:
        if line.startswith("<!--"):
            stage_notes.append(line[5:-4])
        else:
            print(line)
    print()
    print(
        "ours: `core.solve.plan_circuit` end to end, network generation excluded; "
        "peak RSS Δ: resident-memory high-water mark during the call minus the "
        "resident size before it (a tracemalloc peak where marked); networkx: odd nodes, "
        "Dijkstra from each, complete graph, `min_weight_matching`; "
        "'—' = not applicable or skipped (estimated time shown)."
    )
    if stage_notes:
        print()
        print("Engine stages (s):")
        print()
        for note in stage_notes:
            print(f"- {note}")
    return 0


def _cpu_note() -> str:
    return f"{os.cpu_count()} CPUs, {platform.machine()}"


if __name__ == "__main__":
    sys.exit(main())
