"""Every linear program of the shaper design goes through :func:`solve_lp`: a bounded effort, a fallback.

HiGHS dual simplex (scipy's ``linprog``) solves the cutting-plane LPs of :mod:`stillhook.shaping.lp_grid`
in fewer iterations than rows + columns. On large, highly degenerate LPs (optimum near 0, many
nearly parallel cuts) it can stall for many minutes; HiGHS interior point solves the same LP in
seconds. So each LP first runs its own method with an iteration cap proportional to its size
(:data:`ITERATIONS_PER_SIZE` x (rows + columns), deterministic: the same LP takes the same path on
every machine), and an LP that reaches the cap is solved again by interior point. Both attempts also
carry a wall-clock limit (:data:`TIME_LIMIT_S`) as a last guard; an LP that runs out of it counts as
not solved (status != 0), which the callers treat as "no shaper on this grid" - conservative: a
longer shaper, never an unchecked one.

Notes
-----
HiGHS: Huangfu & Hall, "Parallelizing the dual revised simplex method", Math. Prog. Comp. 10:119-142,
2018; the interior point solver: Schork & Gondzio, Math. Prog. Comp. 12:435-473, 2020 (from memory).
"""

from __future__ import annotations

from scipy.optimize import OptimizeResult, linprog

__all__ = ["ITERATIONS_PER_SIZE", "MIN_ITERATIONS", "TIME_LIMIT_S", "solve_lp"]

#: Simplex iteration cap per (rows + columns): the demo's LPs need at most ~1 (measured), the hard envelope's
#: stalled one ran past 18,000 iterations (28 per size) before interior point solved it in 0.6 s.
ITERATIONS_PER_SIZE = 5
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
