"""Every linear program of the shaper design goes through :func:`solve_lp`: a bounded effort, a fallback.

HiGHS dual simplex (through its public ``highspy`` interface; :func:`solve_lp` keeps the conventions of
``scipy.optimize.linprog``, whose ~0.2 s of import the design does without) solves them in fewer iterations
than rows + columns. On large, highly
degenerate LPs (optimum near 0, many nearly parallel cuts) it can stall for many minutes; HiGHS interior
point solves the same LP in seconds. So each LP first runs its own method with an iteration cap
proportional to its size (:data:`ITERATIONS_PER_SIZE` x (rows + columns), deterministic: the same LP takes
the same path on every machine), and an LP that reaches the cap is solved again by interior point (in
:class:`CutLP` without crossover to a vertex: the clean-up simplex after crossover stalls on the same LP; the
interior optimum is as good an answer, with more non-zero amplitudes). Both
attempts also carry a wall-clock limit (:data:`TIME_LIMIT_S`) as a last guard; an LP that runs out of it
counts as not solved (status != 0), which the callers treat as "no shaper on this grid" - conservative: a
longer shaper, never an unchecked one.

:class:`CutLP` holds one cutting-plane LP in a HiGHS instance (``highspy``) so that each round adds
its cuts as rows and dual simplex restarts from the last optimal basis (a warm start) instead of
solving from scratch; same cap, retry and limit.

Notes
-----
HiGHS: Huangfu & Hall, "Parallelizing the dual revised simplex method", Math. Prog. Comp. 10:119-142,
2018; the interior point solver: Schork & Gondzio, Math. Prog. Comp. 12:435-473, 2020 (from memory).
"""

from __future__ import annotations

import math
import os
import sys
from dataclasses import dataclass

import highspy
import numpy as np

__all__ = ["ITERATIONS_PER_SIZE", "MIN_ITERATIONS", "TIME_LIMIT_S", "CutLP", "CutSolution", "LPResult", "solve_lp"]

#: Simplex iteration cap per (rows + columns): of the ~1,500 cutting-plane LPs of the demo, the small gantry and
#: the hard envelope (benchmarks/projects) 99 % need at most 1.1 and all but one at most 2.0 (measured); the hard
#: envelope's stalled one ran past 18,000 iterations (28 per size) before interior point solved it in 0.2-0.6 s.
ITERATIONS_PER_SIZE = 3
#: Smallest iteration cap.
MIN_ITERATIONS = 2_000
#: Wall-clock limit of one attempt (s): a guard against a solver that neither converges nor stops.
TIME_LIMIT_S = 60.0


@dataclass(frozen=True)
class LPResult:
    """One :func:`solve_lp`: ``status`` 0 solved, 1 iteration cap, 2 infeasible, 3 unbounded, 4 other (as
    ``scipy.optimize.linprog``); ``x`` the solution, ``fun`` the objective, ``retried`` True when interior point
    solved it after the cap."""

    status: int
    x: np.ndarray
    fun: float
    retried: bool


#: HiGHS method names (as ``linprog``'s) -> HiGHS options.
_METHODS = {"highs": {"solver": "choose"}, "highs-ds": {"solver": "simplex", "simplex_strategy": 1},
            "highs-ipm": {"solver": "ipm"}}
_STATUS = {highspy.HighsModelStatus.kOptimal: 0, highspy.HighsModelStatus.kIterationLimit: 1,
           highspy.HighsModelStatus.kInfeasible: 2, highspy.HighsModelStatus.kUnbounded: 3}


def _add_rows(h: highspy.Highs, A, lower, upper) -> None:
    A = np.atleast_2d(np.asarray(A, dtype=float))
    rows, cols = np.nonzero(A)
    starts = np.searchsorted(rows, np.arange(A.shape[0])).astype(np.int32)
    h.addRows(A.shape[0], np.asarray(lower, dtype=float), np.asarray(upper, dtype=float), rows.size, starts,
              cols.astype(np.int32), A[rows, cols])


def _run_lp(c, A_ub, b_ub, A_eq, b_eq, bounds, options: dict) -> tuple[int, np.ndarray, float]:
    """One HiGHS run of min c x s.t. A_ub x <= b_ub, A_eq x = b_eq, bounds (linprog's conventions)."""
    h = _silent_highs()
    for name, value in dict(options, output_flag=False, threads=1).items():
        h.setOptionValue(name, value)
    n, inf = len(c), highspy.kHighsInf
    bounds = [(0.0, None)] * n if bounds is None else bounds
    lo = np.array([-inf if b[0] is None else b[0] for b in bounds], dtype=float)
    hi = np.array([inf if b[1] is None else b[1] for b in bounds], dtype=float)
    h.addVars(n, lo, hi)
    h.changeColsCost(n, np.arange(n, dtype=np.int32), np.asarray(c, dtype=float))
    if A_ub is not None and len(A_ub):
        _add_rows(h, A_ub, np.full(len(A_ub), -inf), b_ub)
    if A_eq is not None and len(A_eq):
        _add_rows(h, A_eq, b_eq, b_eq)
    h.run()
    status = _STATUS.get(h.getModelStatus(), 4)
    x = np.asarray(h.getSolution().col_value, dtype=float)
    return status, x, float(np.dot(c, x)) if x.size == n else math.nan


def solve_lp(c, *, A_ub=None, b_ub=None, A_eq=None, b_eq=None, bounds=None, method: str = "highs-ds",
             options: dict | None = None) -> LPResult:
    """min c x  s.t.  A_ub x <= b_ub, A_eq x = b_eq, bounds, by HiGHS with an iteration cap and an interior-point
    retry (the conventions of ``scipy.optimize.linprog``: bounds a list of (lo, hi), None for no bound,
    default (0, None)).

    Parameters
    ----------
    c, A_ub, b_ub, A_eq, b_eq, bounds
        As for ``linprog`` (dense arrays).
    method : {"highs", "highs-ds", "highs-ipm"}
        First method.
    options : dict, optional
        HiGHS options for the first attempt (``presolve`` True/False, tolerances by HiGHS name); the tolerances
        carry over to the retry.

    Returns
    -------
    LPResult
    """
    rows = sum(0 if A is None else len(A) for A in (A_ub, A_eq))
    cap = max(MIN_ITERATIONS, ITERATIONS_PER_SIZE * (rows + len(c)))
    opts = {k: ("on" if v else "off") if k == "presolve" else v for k, v in (options or {}).items()}
    limits = {"simplex_iteration_limit": cap, "ipm_iteration_limit": cap, "time_limit": TIME_LIMIT_S}
    status, x, fun = _run_lp(c, A_ub, b_ub, A_eq, b_eq, bounds, dict(_METHODS[method], **opts, **limits))
    if status == 1 and method != "highs-ipm":
        tolerances = {k: v for k, v in opts.items() if k.endswith("_tolerance")}
        status, x, fun = _run_lp(c, A_ub, b_ub, A_eq, b_eq, bounds,
                                 dict(_METHODS["highs-ipm"], **tolerances, time_limit=TIME_LIMIT_S))
        return LPResult(status, x, fun, True)
    return LPResult(status, x, fun, False)


#: HiGHS prints a banner on the C stdout when the first instance of a process is built; it would
#: land in ``--json`` output, so that instance is built with file descriptor 1 on the null device.
_BANNER = {"shown": False}


def _silent_highs() -> highspy.Highs:
    if not _BANNER["shown"]:
        sys.stdout.flush()
        saved, null = os.dup(1), os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(null, 1)
            h = highspy.Highs()
        finally:
            os.dup2(saved, 1)
            os.close(saved)
            os.close(null)
        _BANNER["shown"] = True
    else:
        h = highspy.Highs()
    for name, value in (("output_flag", False), ("presolve", "off"), ("solver", "simplex"),
                        ("simplex_strategy", 1), ("threads", 1)):
        h.setOptionValue(name, value)
    return h


@dataclass(frozen=True)
class CutSolution:
    """One solve of a :class:`CutLP`: ``status`` 0 solved (else not), amplitudes ``x``, bound ``s``."""

    status: int
    x: np.ndarray
    s: float
    retried: bool


class CutLP:
    """min s  s.t.  sum_j x_j = 1,  x >= 0,  s >= 0,  G x - c s <= 0 for every cut row of G (scale c > 0, default 1).

    Some columns may be switched off (x_j = 0, :meth:`restrict`) and the scales c changed
    (:meth:`rescale`): one instance then serves several neighbouring LPs of a search (time grids that
    share candidate impulse times), each solve warm-started from the last basis.

    Parameters
    ----------
    n : int > 0
        Number of amplitudes x_j (columns besides s).
    """

    def __init__(self, n: int):
        self.n, self.rows = int(n), 0
        inf = highspy.kHighsInf
        self.h = h = _silent_highs()
        h.addVars(self.n + 1, np.zeros(self.n + 1), np.full(self.n + 1, inf))
        cost = np.zeros(self.n + 1)
        cost[-1] = 1.0
        h.changeColsCost(self.n + 1, np.arange(self.n + 1, dtype=np.int32), cost)
        h.addRow(1.0, 1.0, self.n, np.arange(self.n, dtype=np.int32), np.ones(self.n))
        self.active = np.ones(self.n, dtype=bool)
        self.scales = np.zeros(0)

    def add_cuts(self, G: np.ndarray, scales: np.ndarray | None = None) -> None:
        """Add the rows G x - c s <= 0 (G: (k, n); c: ``scales`` (k,) > 0, default ones)."""
        k = G.shape[0]
        if k == 0:
            return
        c = np.ones(k) if scales is None else np.asarray(scales, dtype=float)
        values = np.hstack([G, -c[:, None]]).ravel()
        starts = np.arange(k, dtype=np.int32) * (self.n + 1)
        index = np.tile(np.arange(self.n + 1, dtype=np.int32), k)
        self.h.addRows(k, np.full(k, -highspy.kHighsInf), np.zeros(k), values.size, starts, index, values)
        self.rows += k
        self.scales = np.concatenate([self.scales, c])

    def restrict(self, active: np.ndarray) -> None:
        """Allow only the columns where ``active`` (bool (n,)) is True; the others are held at x_j = 0."""
        active = np.asarray(active, dtype=bool)
        changed = np.nonzero(active != self.active)[0].astype(np.int32)
        if changed.size:
            upper = np.where(active[changed], highspy.kHighsInf, 0.0)
            self.h.changeColsBounds(changed.size, changed, np.zeros(changed.size), upper)
            self.active = active.copy()

    def rescale(self, scales: np.ndarray) -> None:
        """Set every cut row's scale c (array (rows,) > 0); the basis is kept for the next solve."""
        scales = np.asarray(scales, dtype=float)
        for r in np.nonzero(scales != self.scales)[0]:
            self.h.changeCoeff(int(r) + 1, self.n, -float(scales[r]))  # row 0 is sum x = 1
        self.scales = scales.copy()

    def _run(self, solver: str, cap: int) -> highspy.HighsModelStatus:
        h = self.h
        h.setOptionValue("solver", solver)
        # no crossover to a vertex after interior point: its clean-up simplex stalls on the same degenerate LP
        h.setOptionValue("run_crossover", "off" if solver == "ipm" else "on")
        h.setOptionValue("simplex_iteration_limit", cap)
        h.setOptionValue("time_limit", h.getRunTime() + TIME_LIMIT_S)  # the run clock may accumulate
        h.run()
        return h.getModelStatus()

    def solve(self) -> CutSolution:
        """Dual simplex from the last basis, capped as :func:`solve_lp`; interior point at the cap."""
        cap = max(MIN_ITERATIONS, ITERATIONS_PER_SIZE * (self.rows + 1 + self.n + 1))
        status, retried = self._run("simplex", cap), False
        if status == highspy.HighsModelStatus.kIterationLimit:
            status, retried = self._run("ipm", cap), True
        if status != highspy.HighsModelStatus.kOptimal:
            return CutSolution(2, np.zeros(self.n), math.inf, retried)
        col = np.asarray(self.h.getSolution().col_value)
        return CutSolution(0, col[:self.n], float(col[-1]), retried)
