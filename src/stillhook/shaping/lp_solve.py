"""Every linear program of the shaper design goes through :func:`solve_lp`: a bounded effort, a fallback.

HiGHS dual simplex (scipy's ``linprog``; the public ``highspy`` for the cutting-plane LPs of
:mod:`stillhook.shaping.lp_grid`) solves them in fewer iterations than rows + columns. On large, highly
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
solving from scratch through ``linprog``'s Python layer; same cap, retry and limit.

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
from scipy.optimize import OptimizeResult, linprog

__all__ = ["ITERATIONS_PER_SIZE", "MIN_ITERATIONS", "TIME_LIMIT_S", "CutLP", "CutSolution", "solve_lp"]

#: Simplex iteration cap per (rows + columns): of the ~1,500 cutting-plane LPs of the demo, the small gantry and
#: the hard envelope (benchmarks/projects) 99 % need at most 1.1 and all but one at most 2.0 (measured); the hard
#: envelope's stalled one ran past 18,000 iterations (28 per size) before interior point solved it in 0.2-0.6 s.
ITERATIONS_PER_SIZE = 3
#: Smallest iteration cap.
MIN_ITERATIONS = 2_000
#: Wall-clock limit of one attempt (s): a guard against a solver that neither converges nor stops.
TIME_LIMIT_S = 60.0


def solve_lp(c, *, A_ub=None, b_ub=None, A_eq=None, b_eq=None, bounds=None, method: str = "highs-ds",
             options: dict | None = None) -> OptimizeResult:
    """``scipy.optimize.linprog`` with an iteration cap and an interior-point retry.

    Parameters
    ----------
    c, A_ub, b_ub, A_eq, b_eq, bounds
        As for ``linprog``.
    method : str
        First method (a HiGHS method name).
    options : dict, optional
        Extra HiGHS options for the first attempt; the tolerances among them carry over to the retry.

    Returns
    -------
    OptimizeResult
        ``linprog``'s result; ``result.retried`` is True when interior point solved it after the cap.
    """
    rows = sum(0 if A is None else len(A) for A in (A_ub, A_eq))
    cap = max(MIN_ITERATIONS, ITERATIONS_PER_SIZE * (rows + len(c)))
    first = dict(options or {}, maxiter=cap, time_limit=TIME_LIMIT_S)
    res = linprog(c, A_ub=A_ub, b_ub=b_ub, A_eq=A_eq, b_eq=b_eq, bounds=bounds, method=method, options=first)
    res.retried = False
    if res.status == 1 and method != "highs-ipm":
        tolerances = {k: v for k, v in (options or {}).items() if k.endswith("_tolerance")}
        res = linprog(c, A_ub=A_ub, b_ub=b_ub, A_eq=A_eq, b_eq=b_eq, bounds=bounds, method="highs-ipm",
                      options=dict(tolerances, time_limit=TIME_LIMIT_S))
        res.retried = True
    return res


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
