"""Small numerical solvers in numpy and ``math`` only: a bracketed root, a bounded minimum, a square system.

The shaper design needs three textbook solvers: the edges of an insensitive band (a root of V - Vtol on a
bracket), the worst V inside a band (a bounded scalar minimum of -V) and the damped EI / UM-ZV impulse
sequences (a square nonlinear system solved by continuation). Importing ``scipy.optimize`` for them costs
~0.3-0.6 s per process (it loads linprog, scipy.linalg, scipy.sparse, scipy.spatial, ...), more than the
designs themselves; these implementations cost nothing to import.

* :func:`brent_root` - Brent's method (inverse quadratic interpolation / secant / bisection, always
  bracketed), with the stopping rule and the operations in the order of ``scipy.optimize.brentq`` so that
  it returns the same root to the last bit.
* :func:`bounded_minimum` - Brent's minimizer on [a, b] (golden section + successive parabolic
  interpolation), the operations of ``scipy.optimize.minimize_scalar(method="bounded")``.
* :func:`solve_square_system` - Newton's method with a forward-difference Jacobian and backtracking on
  the residual norm.

Each is tested against its scipy counterpart in ``tests/base/test_solvers.py``.

Notes
-----
R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973: ch. 4 (zero),
ch. 5 (minimum). G. E. Forsythe, M. A. Malcolm & C. B. Moler, *Computer Methods for Mathematical
Computations*, Prentice-Hall, 1977 (``zeroin``, ``fmin``). J. E. Dennis & R. B. Schnabel, *Numerical
Methods for Unconstrained Optimization and Nonlinear Equations*, Prentice-Hall, 1983: alg. A5.6.3
(finite-difference Jacobian), A6.3.1 (backtracking line search). All from memory.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from stillhook.errors import DesignError

__all__ = ["bounded_minimum", "brent_root", "solve_square_system"]

_EPS = float(np.finfo(float).eps)
#: sqrt(eps) as ``minimize_scalar(method="bounded")`` takes it (from 2.2e-16), so the steps are the same.
_SQRT_EPS_FMIN = math.sqrt(2.2e-16)
#: (3 - sqrt 5) / 2: the golden-section fraction.
_GOLDEN = 0.5 * (3.0 - math.sqrt(5.0))


def _check_settings(**settings) -> None:
    """Tolerances positive and finite, iteration caps whole numbers >= 1 (one line naming the setting)."""
    for name, value in settings.items():
        whole = name == "max_iter"
        if whole and (isinstance(value, bool) or not isinstance(value, int) or value < 1):
            raise DesignError(f"{name} = {value!r} is out of range; allowed: a whole number >= 1")
        if not whole and not (isinstance(value, (int, float)) and 0.0 < value < math.inf):
            raise DesignError(f"{name} = {value!r} is out of range; allowed: a finite number > 0")


def brent_root(f: Callable[[float], float], a: float, b: float, *, xtol: float, rtol: float = 4 * _EPS,
               max_iter: int = 100) -> float:
    """A root of ``f`` in [a, b] where f(a) and f(b) differ in sign, to within xtol + rtol |x|.

    Parameters
    ----------
    f : callable float -> float
        Continuous on [a, b].
    a, b : float
        The bracket (either order).
    xtol : float > 0
        Absolute tolerance on the root (same unit as x).
    rtol : float >= 4 eps
        Relative tolerance on the root.
    max_iter : int >= 1
        Iteration cap (one evaluation of ``f`` per iteration).

    Raises
    ------
    DesignError
        When f(a) and f(b) have the same sign (no bracket), the cap is reached, or a setting is out of range.

    Notes
    -----
    Each step keeps the bracket [x_cur, x_blk] with |f(x_cur)| <= |f(x_blk)| and tries, in order, inverse
    quadratic interpolation through (x_pre, x_cur, x_blk), the secant through (x_pre, x_cur), and bisection
    s = (x_blk - x_cur) / 2; an interpolated step s is taken only if 2|s| < min(|s_prev|, 3|s_bis| - d)
    (it must shrink fast enough), and no step is shorter than d = (xtol + rtol |x_cur|) / 2. Converges to
    within 2d; never slower than about the square of bisection's step count.
    Brent 1973, ch. 4; the formulation and stopping rule of ``scipy.optimize.brentq``.
    """
    _check_settings(xtol=xtol, max_iter=max_iter)
    if not rtol >= 4 * _EPS:
        raise DesignError(f"rtol = {rtol!r} is out of range; allowed: rtol >= 4 eps = {4 * _EPS:.3g}")
    x_pre, x_cur = float(a), float(b)
    f_pre, f_cur = float(f(x_pre)), float(f(x_cur))
    if not (math.isfinite(f_pre) and math.isfinite(f_cur)):
        raise DesignError(f"f({x_pre:g}) = {f_pre:g}, f({x_cur:g}) = {f_cur:g}: not finite; allowed: a function "
                          "finite on the bracket")
    if f_pre == 0.0:
        return x_pre
    if f_cur == 0.0:
        return x_cur
    if math.copysign(1.0, f_pre) == math.copysign(1.0, f_cur):
        raise DesignError(f"f({x_pre:g}) = {f_pre:g} and f({x_cur:g}) = {f_cur:g} have the same sign, so they "
                          "bracket no root; allowed: ends where f has opposite signs")
    x_blk = f_blk = s_pre = s_cur = 0.0
    for _ in range(max_iter):
        if f_pre != 0.0 and f_cur != 0.0 and math.copysign(1.0, f_pre) != math.copysign(1.0, f_cur):
            x_blk, f_blk = x_pre, f_pre
            s_pre = s_cur = x_cur - x_pre
        if abs(f_blk) < abs(f_cur):  # keep the better end as x_cur
            x_pre, x_cur, x_blk = x_cur, x_blk, x_cur
            f_pre, f_cur, f_blk = f_cur, f_blk, f_cur
        delta = (xtol + rtol * abs(x_cur)) / 2.0
        s_bis = (x_blk - x_cur) / 2.0
        if f_cur == 0.0 or abs(s_bis) < delta:
            return x_cur
        interpolated = False
        if abs(s_pre) > delta and abs(f_cur) < abs(f_pre):
            if x_pre == x_blk:  # secant
                s_try = -f_cur * (x_cur - x_pre) / (f_cur - f_pre)
            else:  # inverse quadratic interpolation
                d_pre = (f_pre - f_cur) / (x_pre - x_cur)
                d_blk = (f_blk - f_cur) / (x_blk - x_cur)
                s_try = -f_cur * (f_blk * d_blk - f_pre * d_pre) / (d_blk * d_pre * (f_blk - f_pre))
            if 2.0 * abs(s_try) < min(abs(s_pre), 3.0 * abs(s_bis) - delta):  # short enough: take it
                s_pre, s_cur, interpolated = s_cur, s_try, True
        if not interpolated:  # bisect
            s_pre = s_cur = s_bis
        x_pre, f_pre = x_cur, f_cur
        x_cur += s_cur if abs(s_cur) > delta else (delta if s_bis > 0.0 else -delta)
        f_cur = float(f(x_cur))
    raise DesignError(f"root finding on [{min(a, b):g}, {max(a, b):g}] did not converge in {max_iter} iterations "
                      f"(last estimate {x_cur:g}); allowed: a larger xtol or max_iter")


def bounded_minimum(f: Callable[[float], float], a: float, b: float, *, xatol: float,
                    max_iter: int = 500) -> tuple[float, float]:
    """A local minimum of ``f`` on [a, b]: returns (x, f(x)), x within about xatol + sqrt(eps) |x|.

    Parameters
    ----------
    f : callable float -> float
        Evaluated inside (a, b) only; a unimodal f gives its minimum, any f a local one.
    a, b : float, a <= b
        The interval.
    xatol : float > 0
        Absolute tolerance on x (same unit as x).
    max_iter : int >= 1
        Cap on the evaluations of ``f``; on reaching it the best point so far is returned (like
        ``fmin``, it is still a point of [a, b] with its true value).

    Raises
    ------
    DesignError
        When a > b, an end is not finite, f returns NaN, or a setting is out of range.

    Notes
    -----
    Keeps the best point x, the second best w and the previous w, v. Each step fits the parabola through
    (v, w, x) and takes its vertex x + p/q when it lies inside (a, b) and moves less than half the step
    before last (|p| < |q e / 2|); otherwise a golden-section step into the larger part of [a, b]. No
    step is shorter than tol1 = sqrt(eps) |x| + xatol / 3; stop when |x - (a + b)/2| <= 2 tol1 - (b - a)/2.
    Brent 1973, ch. 5; Forsythe, Malcolm & Moler 1977, ``fmin``; the operations of
    ``scipy.optimize.minimize_scalar(method="bounded")``.
    """
    _check_settings(xatol=xatol, max_iter=max_iter)
    a, b = float(a), float(b)
    if not (math.isfinite(a) and math.isfinite(b)) or a > b:
        raise DesignError(f"interval [{a:g}, {b:g}] is not a finite interval with lo <= hi; allowed: finite lo <= hi")
    x = w = v = a + _GOLDEN * (b - a)
    fx = float(f(x))
    fw = fv = fu = fx
    count, d, e = 1, 0.0, 0.0
    xm = 0.5 * (a + b)
    tol1 = _SQRT_EPS_FMIN * abs(x) + xatol / 3.0
    tol2 = 2.0 * tol1
    while abs(x - xm) > tol2 - 0.5 * (b - a):
        golden = True
        if abs(e) > tol1:  # try the parabola through (v, fv), (w, fw), (x, fx)
            golden = False
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            p = (x - v) * q - (x - w) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = abs(q)
            r, e = e, d
            if abs(p) < abs(0.5 * q * r) and q * (a - x) < p < q * (b - x):
                d = p / q
                if (x + d) - a < tol2 or b - (x + d) < tol2:  # too close to an end: step tol1 toward the middle
                    d = tol1 * (-1.0 if xm - x < 0.0 else 1.0)
            else:
                golden = True
        if golden:  # golden section into the larger part
            e = (a - x) if x >= xm else (b - x)
            d = _GOLDEN * e
        u = x + (-1.0 if d < 0.0 else 1.0) * max(abs(d), tol1)
        fu = float(f(u))
        count += 1
        if fu <= fx:
            if u >= x:
                a = x
            else:
                b = x
            v, fv, w, fw, x, fx = w, fw, x, fx, u, fu
        else:
            if u < x:
                a = u
            else:
                b = u
            if fu <= fw or w == x:
                v, fv, w, fw = w, fw, u, fu
            elif fu <= fv or v == x or v == w:
                v, fv = u, fu
        xm = 0.5 * (a + b)
        tol1 = _SQRT_EPS_FMIN * abs(x) + xatol / 3.0
        tol2 = 2.0 * tol1
        if count >= max_iter:
            break
    if math.isnan(x) or math.isnan(fx) or math.isnan(fu):
        raise DesignError(f"the function to minimize returned NaN near x = {x:g}; allowed: a function finite on "
                          "the interval")
    return x, fx


def _forward_jacobian(fun: Callable[[np.ndarray], np.ndarray], x: np.ndarray, F: np.ndarray) -> np.ndarray:
    """J[:, j] = (F(x + h_j e_j) - F(x)) / h_j, h_j = sqrt(eps) max(|x_j|, 1) (Dennis & Schnabel A5.6.3)."""
    J = np.empty((F.size, x.size))
    for j in range(x.size):
        xh = x.copy()
        xh[j] += math.sqrt(_EPS) * max(abs(x[j]), 1.0) * (-1.0 if x[j] < 0.0 else 1.0)
        h = xh[j] - x[j]  # the step actually represented
        J[:, j] = (np.asarray(fun(xh), dtype=float) - F) / h
    return J


def _backtrack(fun, x: np.ndarray, F: np.ndarray, s: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """x + lam s with g(lam) = |F(x + lam s)|^2 / 2 <= g(0) + 1e-4 lam g'(0), or None (Dennis & Schnabel A6.3.1).

    g'(0) = -|F|^2 for the Newton step (J s = -F); a rejected lam is replaced by the minimizer of the
    quadratic through g(0), g'(0), g(lam), kept within [lam / 10, lam / 2].
    """
    g0 = 0.5 * float(F @ F)
    slope = -2.0 * g0
    lam = 1.0
    smallest = _EPS * max(float(np.max(np.abs(x))), 1.0) / max(float(np.max(np.abs(s))), 1e-300)
    while lam >= smallest:
        x_new = x + lam * s
        F_new = np.asarray(fun(x_new), dtype=float)
        g = 0.5 * float(F_new @ F_new) if np.all(np.isfinite(F_new)) else math.inf
        if g <= g0 + 1e-4 * lam * slope:
            return x_new, F_new
        lam_q = -slope * lam * lam / (2.0 * (g - g0 - slope * lam)) if math.isfinite(g) else 0.0
        lam = min(max(lam_q, 0.1 * lam), 0.5 * lam)
    return None


def solve_square_system(fun: Callable[[np.ndarray], np.ndarray], x0, *, xtol: float,
                        max_iter: int = 50) -> np.ndarray:
    """x with F(x) = 0 for n equations in n unknowns, by damped Newton steps from ``x0``.

    Parameters
    ----------
    fun : callable (n,) -> (n,)
        The residual F; smooth near the solution.
    x0 : array_like (n,)
        Start, close to a solution (continuation supplies one).
    xtol : float > 0
        Stop when a step moves x by at most xtol |x| (Euclidean norms), as ``fsolve``'s xtol.
    max_iter : int >= 1
        Cap on the Newton steps.

    Returns
    -------
    x : ndarray (n,)
        The last iterate: also when the cap is reached or no step lowers |F|. The caller checks |F(x)|.

    Raises
    ------
    DesignError
        When F(x0) does not have the shape of x0, or a setting is out of range.

    Notes
    -----
    Newton step s = -J(x)^-1 F(x) with J by forward differences (least squares where J is singular),
    then backtracking x + lam s until |F|^2 decreases sufficiently (Armijo, alpha = 1e-4).
    Dennis & Schnabel 1983: alg. A5.6.3 (Jacobian), A6.3.1 (line search), ch. 6 (global convergence).
    """
    _check_settings(xtol=xtol, max_iter=max_iter)
    x = np.array(x0, dtype=float).ravel()
    F = np.asarray(fun(x), dtype=float)
    if F.shape != x.shape:
        raise DesignError(f"the system has {F.size} equations for {x.size} unknowns; allowed: a square system")
    for _ in range(max_iter):
        if not np.any(F):
            break
        J = _forward_jacobian(fun, x, F)
        try:
            s = np.linalg.solve(J, -F)
        except np.linalg.LinAlgError:
            s = np.linalg.lstsq(J, -F, rcond=None)[0]
        if not np.all(np.isfinite(s)):
            break
        moved = _backtrack(fun, x, F, s)
        if moved is None:
            break
        x_new, F = moved
        converged = np.linalg.norm(x_new - x) <= xtol * np.linalg.norm(x_new)
        x = x_new
        if converged:
            break
    return x
