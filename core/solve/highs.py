"""A thin call into HiGHS (through its official ``highspy`` bindings) for our programs.

We run HiGHS in a child process (see :func:`solve`) and call ``highspy``
directly rather than through :func:`scipy.optimize.milp`
because the HiGHS bundled with SciPy 1.17 (HiGHS 1.12) returned a value above
the true optimum, marked optimal, on small instances of our arc model with
presolve on (found by ``tests/test_engine_reference.py``); HiGHS 1.16 solves
them right with presolve, which keeps district-sized programs fast.

Reference: Q. Huangfu and J. A. J. Hall, "Parallelizing the dual revised
simplex method", Mathematical Programming Computation 10 (2018) 119–142.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import sys
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import highspy
import numpy as np
import scipy.sparse as sp

from core.errors import Cancelled, SolverError


@dataclass(frozen=True)
class HighsResult:
    x: np.ndarray | None
    """Column values, or None when no feasible point was found."""
    objective: float
    bound: float
    """Dual bound (for an LP or a MIP solved to optimality, the optimum)."""
    status: str
    """``"optimal"``, ``"time limit"``, ``"infeasible"`` or HiGHS's own wording."""

    @property
    def optimal(self) -> bool:
        return self.status == "optimal"


def _new_highs() -> highspy.Highs:
    """A silent HiGHS instance.

    HiGHS prints a banner from its C++ constructor, before any option can be
    set, straight to file descriptor 1; a CLI whose output is a summary (and
    maybe piped) must not carry it, so fd 1 points at the null device while
    the instance is made.
    """
    sys.stdout.flush()
    saved = os.dup(1)
    try:
        with open(os.devnull, "wb") as null:
            os.dup2(null.fileno(), 1)
            h = highspy.Highs()
    finally:
        os.dup2(saved, 1)
        os.close(saved)
    h.setOptionValue("output_flag", False)
    return h


def _finite_or_inf(a: np.ndarray) -> np.ndarray:
    a = np.asarray(a, dtype=np.float64)
    inf = highspy.kHighsInf
    return np.where(np.isposinf(a), inf, np.where(np.isneginf(a), -inf, a))


def _solve_here(
    cost: np.ndarray,
    a: sp.spmatrix,
    row_lower: np.ndarray,
    row_upper: np.ndarray,
    col_lower: np.ndarray,
    col_upper: np.ndarray,
    integer: np.ndarray,
    *,
    time_limit: float,
    mip_rel_gap: float = 1e-9,
) -> HighsResult:
    """Solve in this process (see :func:`solve`)."""
    csc = sp.csc_matrix(a)
    n_col = len(cost)
    lp = highspy.HighsLp()
    lp.num_col_ = n_col
    lp.num_row_ = csc.shape[0]
    lp.col_cost_ = np.asarray(cost, dtype=np.float64)
    lp.col_lower_ = _finite_or_inf(col_lower)
    lp.col_upper_ = _finite_or_inf(col_upper)
    lp.row_lower_ = _finite_or_inf(row_lower)
    lp.row_upper_ = _finite_or_inf(row_upper)
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.num_col_ = n_col
    lp.a_matrix_.num_row_ = csc.shape[0]
    lp.a_matrix_.start_ = csc.indptr.astype(np.int32)
    lp.a_matrix_.index_ = csc.indices.astype(np.int32)
    lp.a_matrix_.value_ = csc.data.astype(np.float64)
    is_mip = bool(np.any(integer))
    if is_mip:
        kinds = np.where(
            np.asarray(integer, dtype=bool),
            highspy.HighsVarType.kInteger,
            highspy.HighsVarType.kContinuous,
        )
        lp.integrality_ = list(kinds)
    h = _new_highs()
    h.setOptionValue("threads", 1)
    h.setOptionValue("time_limit", float(max(time_limit, 0.1)))
    h.setOptionValue("mip_rel_gap", float(mip_rel_gap))
    h.passModel(lp)
    h.run()
    status = h.getModelStatus()
    info = h.getInfo()
    words = {
        highspy.HighsModelStatus.kOptimal: "optimal",
        highspy.HighsModelStatus.kTimeLimit: "time limit",
        highspy.HighsModelStatus.kInfeasible: "infeasible",
    }.get(status, h.modelStatusToString(status))
    has_point = info.primal_solution_status == 2  # kSolutionStatusFeasible
    x = np.asarray(h.getSolution().col_value, dtype=np.float64) if has_point else None
    objective = float(info.objective_function_value) if has_point else np.inf
    # an LP's optimum bounds the program it relaxes; a MIP reports its own dual bound
    lp_bound = objective if words == "optimal" else -np.inf
    bound = float(info.mip_dual_bound) if is_mip else lp_bound
    if not np.isfinite(bound):
        bound = 0.0
    return HighsResult(x, objective, bound, words)


_IN_PROCESS_COLUMNS = 4_000
"""Programs this small (a district: the sample has about 1,000 columns) solve in well
under a second and run in this process, sparing the child process's start-up."""

_GRACE_S = 3.0
"""Seconds past the time limit before a HiGHS run that has not stopped is ended."""


def _child(conn: Any, args: tuple[Any, ...], kwargs: dict[str, Any]) -> None:
    try:
        conn.send(_solve_here(*args, **kwargs))
    except BaseException as exc:  # report any failure to the parent rather than dying mute
        conn.send(exc)
    finally:
        conn.close()


def solve(
    cost: np.ndarray,
    a: sp.spmatrix,
    row_lower: np.ndarray,
    row_upper: np.ndarray,
    col_lower: np.ndarray,
    col_upper: np.ndarray,
    integer: np.ndarray,
    *,
    time_limit: float,
    mip_rel_gap: float = 1e-9,
    stop: Callable[[], bool] | None = None,
) -> HighsResult:
    """Minimise ``cost @ x`` subject to ``row_lower <= a @ x <= row_upper`` and column
    bounds; columns where ``integer`` is true must be whole numbers.

    Beyond a few thousand columns HiGHS runs in a child process.  HiGHS 1.16
    does not always honour its own time limit (measured: a 10,000-street
    mixed program still in its root node after five minutes with a 30 s
    limit), and a call into C++ cannot be interrupted from Python, so the
    child is ended at the time limit plus a grace period, or at once when
    ``stop()`` returns true.  The child is forked where no other thread runs
    (fast) and spawned otherwise (safe).

    Raises
    ------
    Cancelled
        When ``stop()`` returned true.
    """
    args = (cost, sp.csc_matrix(a), row_lower, row_upper, col_lower, col_upper, integer)
    kwargs = {"time_limit": time_limit, "mip_rel_gap": mip_rel_gap}
    if len(cost) <= _IN_PROCESS_COLUMNS:
        return _solve_here(*args, **kwargs)
    methods = mp.get_all_start_methods()
    method = "fork" if "fork" in methods and threading.active_count() == 1 else "spawn"
    ctx = mp.get_context(method)
    receiver, sender = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(sender, args, kwargs), daemon=True)
    proc.start()
    sender.close()
    deadline = time.monotonic() + time_limit + _GRACE_S + 0.1 * time_limit
    try:
        while True:
            if stop is not None and stop():
                raise Cancelled("planning was cancelled")
            if receiver.poll(0.05):
                try:
                    out = receiver.recv()
                except EOFError:
                    out = None
                if isinstance(out, BaseException):
                    raise SolverError(f"HiGHS failed: {out!r}") from out
                if isinstance(out, HighsResult):
                    return out
                return HighsResult(None, np.inf, 0.0, "solver stopped")
            if time.monotonic() > deadline:
                return HighsResult(None, np.inf, 0.0, "time limit (HiGHS ended)")
            if not proc.is_alive() and not receiver.poll(0.05):
                return HighsResult(None, np.inf, 0.0, "solver stopped")
    finally:
        if proc.is_alive():
            proc.terminate()
        proc.join(timeout=5)
        receiver.close()
