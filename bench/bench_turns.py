"""What the turn rules cost in time and distance on synthetic towns; prints a Markdown table.

Run from the repository root::

    python bench/bench_turns.py                  # 10k and 50k segments, two-way and 10 % one-way
    python bench/bench_turns.py --sizes 1000,100000

For each network the engine solves once (``core.solve.plan_circuit``, heuristic
strategy, no turn rules); from the same passes the circuit is then built three ways:
Hierholzer's walk, turn rules without detours (same length), and turn rules with detours
round the block.  The table shows the seconds of each (turn geometry, circuit, counts),
the U-turns where none is allowed, a lower bound on them, the turns across oncoming
traffic and the extra distance of the detours.
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402

from bench.synthetic import synthetic_network  # noqa: E402
from core.model import Network  # noqa: E402
from core.plan import Plan  # noqa: E402
from core.solve import plan_circuit  # noqa: E402
from core.solve.arcs import ArcProblem, compile_network  # noqa: E402
from core.solve.circuit import circuit_arcs  # noqa: E402
from core.solve.turn_rules import count_turns, turn_circuit, turn_geometry  # noqa: E402

MODES = (
    ("off", {"turn_rules": False}),
    ("rules", {"turn_rules": True, "uturn_detours": False}),
    ("detours", {"turn_rules": True, "uturn_detours": True}),
)


def forced_uturns(net: Network, plan: Plan) -> int:
    """A lower bound on the U-turns not allowed in any circuit of the plan's passes: at a
    node, the passes arriving on a street pair with passes leaving by others (Hall's
    condition), so ``in + out - d`` of them at least turn back along that street."""
    degree: Counter[str] = Counter()
    for s in net:
        degree[s.start] += 1
        degree[s.end] += 1
    d: Counter[str] = Counter({plan.depot: 1})  # parking at the depot
    per: Counter[tuple[str, str]] = Counter()
    for st in plan.steps:
        d[st.end] += 1
        if st.start != st.end:
            per[(st.start, st.segment)] += 1
            per[(st.end, st.segment)] += 1
    worst: dict[str, int] = {}
    for (v, _s), k in per.items():
        if degree[v] > 1 and not net.nodes[v].turning_place:
            worst[v] = max(worst.get(v, 0), k - d[v])
    return sum(worst.values())


def passes_of(p: ArcProblem, plan: Plan) -> np.ndarray:
    """Passes per arc of a plan's circuit."""
    fwd, bwd = p.segment_arcs()
    index = {sid: k for k, sid in enumerate(p.seg_ids)}
    x = np.zeros(len(p.arc_seg), dtype=np.int64)
    for st in plan.steps:
        k = index[st.segment]
        x[fwd[k] if st.forward else bwd[k]] += 1
    return x


def measure(n: int, oneway_share: float, seed: int) -> dict[str, dict[str, float]]:
    """Solve one synthetic town once, then build its circuit in the three modes from the
    same passes; figures per mode."""
    net = synthetic_network(n, seed=seed, oneway_share=oneway_share)
    plan = plan_circuit(net, strategy="heuristic", turn_rules=False)
    p = compile_network(net, plan.depot)
    x = passes_of(p, plan)
    out: dict[str, dict[str, float]] = {"net": {"segments": len(net)}}
    for name, detours in (("off", None), ("rules", False), ("detours", True)):
        t0 = time.perf_counter()
        geo = turn_geometry(p, net)
        if detours is None:
            arcs, extra, n_det = circuit_arcs(p, x), 0.0, 0
        else:
            tc = turn_circuit(p, x, net, detours=detours, geometry=geo)
            arcs, extra, n_det = tc.arcs, sum(d.length for d in tc.detours), len(tc.detours)
        t = count_turns(p, geo, arcs, "right", p.node_ids)
        seconds = time.perf_counter() - t0
        out[name] = {
            "circuit_s": seconds,
            "bad_u": len(t.uturn_nodes),
            "u": t.uturns,
            "across": t.across_traffic,
            "total_m": plan.total_m + extra,
            "extra_m": extra,
            "detours": n_det,
            "forced": forced_uturns(net, plan) if name == "off" else 0,
        }
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="10000,50000", help="segment counts, comma-separated")
    ap.add_argument("--oneway-share", type=float, default=0.1)
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args(argv)
    sizes = [int(s) for s in args.sizes.split(",") if s.strip()]
    print(f"## Turn rules (Python {platform.python_version()}, {os.cpu_count()} CPUs)")
    print()
    print(
        "| network | segments | seconds: off / rules / detours | U-turns not allowed: "
        "off / rules / detours | forced at least | across traffic: off / rules | detours "
        "| extra distance |"
    )
    print("|---|---:|---:|---:|---:|---:|---:|---:|")
    for n in sizes:
        for share in (0.0, args.oneway_share):
            print(f"[bench] {n} segments, {share:.0%} one-way …", file=sys.stderr, flush=True)
            r = measure(n, share, args.seed)
            off, rules, det = r["off"], r["rules"], r["detours"]
            pct = 100 * det["extra_m"] / off["total_m"] if off["total_m"] else 0.0
            label = f"{n // 1000}k, " + ("two-way" if share == 0 else f"{share:.0%} one-way")
            print(
                f"| {label} | {r['net']['segments']:,.0f} | "
                f"{off['circuit_s']:.2f} / {rules['circuit_s']:.2f} / {det['circuit_s']:.2f} | "
                f"{off['bad_u']:,.0f} / {rules['bad_u']:,.0f} / {det['bad_u']:,.0f} | "
                f"{off['forced']:,.0f} | "
                f"{off['across']:,.0f} / {rules['across']:,.0f} | {det['detours']:,.0f} | "
                f"{det['extra_m'] / 1000:,.1f} km ({pct:.2f} %) |"
            )
    print()
    print(
        "seconds: building the circuit from the same passes and counting its turns "
        "(Hierholzer's walk / turn rules / turn rules and detours); the solve before it is "
        "done once.  U-turns not allowed: not at a dead end or "
        "turning place (none are marked in these towns).  Forced at least: a lower bound "
        "for any circuit of the same passes (Hall's condition at each node).  Extra "
        "distance: the detours' deadhead against the circuit without turn rules.  The "
        "one-way cases' passes can vary from run to run (their LP guide has a time limit)."
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
