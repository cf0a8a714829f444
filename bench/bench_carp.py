"""Fleet plans against published capacitated arc routing instances; prints a Markdown table.

Run from the repository root (one core; use ``nice`` beside other work)::

    python bench/bench_carp.py                       # gdb, val, egl and Kerteminde
    python bench/bench_carp.py --quick               # a few instances, short searches
    python bench/bench_carp.py --sets gdb,val --time-limit 5

Per instance of ``../shared/benchmarks/carp``: our cost (total length, service plus
deadhead, from :func:`core.fleet.plan_fleet`), the lower bound and the best-known upper
bound carried by the data package CARPData.jl (see the comment above ``GDB``), whether
the instance is proven optimal (lower == upper), the gap against the upper bound and the
wall time (reading, planning and the feasibility check).
Every plan is checked by :mod:`core.fleet.check` (capacity, coverage, continuity);
the "ok" column is its verdict.  Targets on one core: gdb within 0.5 % of the best
known on every instance, val mean gap <= 1 %, egl mean gap <= 2 %, each instance
<= 30 s.  Kerteminde (salt-spreading): a feasible plan and its length against the
lower bound 357,097 m of ``../shared/benchmarks/README.md``, target within 8 %.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path
from statistics import mean

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from core.files import read_network  # noqa: E402
from core.fleet import plan_fleet, settings_from_network  # noqa: E402

BENCH = ROOT.parent / "shared" / "benchmarks"

# Lower and upper bounds: the last two numbers of each instance file of the public Julia
# data package CARPData.jl by Rafael Martinelli (github.com/rafaelmartinelli/CARPData.jl,
# folder data/; each file ends "vehicles, capacity, lower bound, upper bound", and the
# package's test/runtests.jl checks gdb8 348/348, val9B 326/326 and egl-s2-A 9838/9875).
# The upper bound is the best known when the package was made; lower == upper means
# proven optimal.  Files read: data/gdb1.dat ... data/gdb23.dat; data/egl-e1-A.dat ...
# data/egl-s4-C.dat; val as data/val1A.dat ... (newer commits) or data/1C.dat ... (older
# commits, the same instance without the "val" prefix).  Each file was checked against
# ours: vertices, edges and capacity agree, and the full edge lists (ends, cost, demand)
# of every egl family and of val4D, val5D and val9D are identical.  Sets: gdb (Golden,
# DeArmon & Baker 1983), val (Benavent, Campos, Corberan & Mota 1992), egl (Li & Eglese
# 1996).
# No value below is from memory; an instance without a file would be marked so.
GDB = {
    "gdb1": (316, 316), "gdb2": (339, 339), "gdb3": (275, 275), "gdb4": (287, 287),
    "gdb5": (377, 377), "gdb6": (298, 298), "gdb7": (325, 325), "gdb8": (348, 348),
    "gdb9": (303, 303), "gdb10": (275, 275), "gdb11": (395, 395), "gdb12": (458, 458),
    "gdb13": (536, 536), "gdb14": (100, 100), "gdb15": (58, 58), "gdb16": (127, 127),
    "gdb17": (91, 91), "gdb18": (164, 164), "gdb19": (55, 55), "gdb20": (121, 121),
    "gdb21": (156, 156), "gdb22": (200, 200), "gdb23": (233, 233),
}  # fmt: skip
VAL = {
    "val1A": (173, 173), "val1B": (173, 173), "val1C": (245, 245), "val2A": (227, 227),
    "val2B": (259, 259), "val2C": (457, 457), "val3A": (81, 81), "val3B": (87, 87),
    "val3C": (138, 138), "val4A": (400, 400), "val4B": (412, 412), "val4C": (428, 428),
    "val4D": (530, 530), "val5A": (423, 423), "val5B": (446, 446), "val5C": (474, 474),
    "val5D": (577, 577), "val6A": (223, 223), "val6B": (233, 233), "val6C": (317, 317),
    "val7A": (279, 279), "val7B": (283, 283), "val7C": (334, 334), "val8A": (386, 386),
    "val8B": (395, 395), "val8C": (521, 521), "val9A": (323, 323), "val9B": (326, 326),
    "val9C": (332, 332), "val9D": (391, 391), "val10A": (428, 428), "val10B": (436, 436),
    "val10C": (446, 446), "val10D": (526, 526),
}  # fmt: skip
EGL = {
    "egl-e1-A": (3548, 3548), "egl-e1-B": (4498, 4498), "egl-e1-C": (5595, 5595),
    "egl-e2-A": (5018, 5018), "egl-e2-B": (6317, 6317), "egl-e2-C": (8335, 8335),
    "egl-e3-A": (5898, 5898), "egl-e3-B": (7744, 7775), "egl-e3-C": (10244, 10292),
    "egl-e4-A": (6408, 6444), "egl-e4-B": (8935, 8961), "egl-e4-C": (11512, 11529),
    "egl-s1-A": (5018, 5018), "egl-s1-B": (6388, 6388), "egl-s1-C": (8518, 8518),
    "egl-s2-A": (9838, 9875), "egl-s2-B": (13017, 13057), "egl-s2-C": (16425, 16425),
    "egl-s3-A": (10165, 10201), "egl-s3-B": (13648, 13682), "egl-s3-C": (17188, 17188),
    "egl-s4-A": (12159, 12216), "egl-s4-B": (16114, 16214), "egl-s4-C": (20430, 20461),
}  # fmt: skip
SETS = {"gdb": GDB, "val": VAL, "egl": EGL}
SEARCH_S = {"gdb": 28.0, "val": 20.0, "egl": 26.0, "salt": 90.0}
"""Seconds per instance by set, given to the planner as its time limit (which covers
preparing, the split and the search); reading and the check come on top (< 1 s).
gdb gets 28 s: on gdb13 the search reached the optimum 536 in each of six seeds tried at
28 s (after 15-24 s in the runs timed) and in none of six at 14 s (our measurements,
2026-12-02). The 30 s target is for the CARP sets; Kerteminde, a whole municipality with
time limits, refills and U-turn rules, gets 90 s: at 27 s it came 7.3-9.9 % above its
bound over four seeds, at 90 s 1.3 % and 2.5 % (seeds 0 and 1)."""
QUICK = {"gdb": ["gdb1", "gdb8"], "val": ["val1A", "val4A"], "egl": ["egl-e1-A"]}
KERTEMINDE_BOUND = 357_097  # m, ../shared/benchmarks/README.md (integer relaxation)
TARGETS = {"gdb": ("max", 0.5), "val": ("mean", 1.0), "egl": ("mean", 2.0)}


def run_one(path: Path, search_s: float, seed: int) -> tuple[float, bool, float, int, list[str]]:
    """(cost, feasible, seconds, vehicles, issues) for one instance."""
    t = time.perf_counter()
    network = read_network(path)
    settings = settings_from_network(network, time_limit=search_s, seed=seed)
    plan = plan_fleet(network, settings)
    return plan.total_m, plan.feasible, time.perf_counter() - t, len(plan.routes), plan.issues


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sets", default="gdb,val,egl,salt", help="comma list of gdb,val,egl,salt")
    ap.add_argument("--time-limit", type=float, help="planner seconds per instance (all sets)")
    ap.add_argument("--quick", action="store_true", help="a few instances, 2 s searches")
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args(argv)
    sets = [s.strip() for s in args.sets.split(",") if s.strip()]
    bad = [s for s in sets if s not in (*SETS, "salt")]
    if bad:
        ap.error(f"unknown set(s) {', '.join(bad)}; choose from gdb, val, egl, salt")
    if not BENCH.is_dir():
        print(f"benchmark folder {BENCH} is absent; nothing to run")
        return 0
    print(f"# Fleet planner on published CARP instances (cpu count {os.cpu_count()}, one core)\n")
    print(
        "Bounds: lower and best-known upper bound from CARPData.jl "
        "(github.com/rafaelmartinelli/CARPData.jl, data/<instance>.dat); gap against the "
        "upper bound; 'proven' when lower == upper.\n"
    )
    print(
        "| instance | ours | lower bound | best known | proven | gap % | time s | vehicles | ok |"
    )
    print("|---|---:|---:|---:|---|---:|---:|---:|---|")
    gaps: dict[str, list[float]] = {}
    below: list[str] = []
    worst_time = 0.0
    for name in sets:
        if name == "salt":
            continue
        table = SETS[name]
        names = QUICK[name] if args.quick else list(table)
        search = 2.0 if args.quick else (args.time_limit or SEARCH_S[name])
        for inst in names:
            path = BENCH / "carp" / f"{inst}.dat"
            cost, ok, secs, nveh, issues = run_one(path, search, args.seed)
            lb, ub = table[inst]
            gap = (cost - ub) / ub * 100
            gaps.setdefault(name, []).append(gap)
            worst_time = max(worst_time, secs)
            if cost < lb - 1e-6:  # cannot happen for the same instance and a valid bound
                below.append(inst)
            print(
                f"| {inst} | {cost:.0f} | {lb} | {ub} | {'yes' if lb == ub else 'no'} | "
                f"{gap:.2f} | {secs:.1f} | {nveh} | "
                f"{'yes' if ok else 'NO: ' + '; '.join(issues[:2])} |",
                flush=True,
            )
    if "salt" in sets:
        path = BENCH / "salt-spreading" / "kerteminde.json"
        search = 2.0 if args.quick else (args.time_limit or SEARCH_S["salt"])
        cost, ok, secs, nveh, issues = run_one(path, search, args.seed)
        gap = (cost - KERTEMINDE_BOUND) / KERTEMINDE_BOUND * 100
        print(
            f"| kerteminde | {cost:.0f} m | {KERTEMINDE_BOUND} m (benchmarks README) | - | no | "
            f"{gap:.2f} (vs lower bound) | {secs:.1f} | {nveh} | "
            f"{'yes' if ok else 'NO: ' + '; '.join(issues[:2])} |",
            flush=True,
        )
    print()
    if "salt" in sets:
        verdict = "met" if ok and gap <= 8.0 else "MISSED"
        state = "feasible" if ok else "INFEASIBLE"
        print(f"- kerteminde: {gap:.2f} % above its bound, {state} (target: <= 8 %: {verdict})")
    for name, g in gaps.items():
        kind, target = TARGETS[name]
        value = max(g) if kind == "max" else mean(g)
        verdict = "met" if value <= target else "MISSED"
        names = QUICK[name] if args.quick else list(SETS[name])
        worst = names[g.index(max(g))]
        print(
            f"- {name}: mean gap {mean(g):.2f} %, worst {max(g):.2f} % ({worst}) "
            f"(target: {kind} <= {target} %: {verdict})"
        )
    if below:
        print(f"- below the published lower bound (file or bound differs): {', '.join(below)}")
    if worst_time:
        print(f"- slowest CARP instance {worst_time:.1f} s (target <= 30 s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
