"""Damped forms of the EI family and of UM-ZV, solved from their defining conditions.

The papers give closed forms for the undamped case and curve fits in the damping ratio for the
damped case. Here the damped shapers are solved directly from the same conditions, by
continuation in zeta from the undamped closed form (steps of at most 0.02, halved where a step
fails), so they are exact to solver precision rather than to a fit.

Work in normalized time (design frequency w0 = 1 rad/s); the caller divides times by w0.
With z(w) = sum_i A_i exp(-zeta w (t_n - t_i)) exp(-j w_d t_i), V(w) = |z(w)|, and:

* EI family with h humps and n = h + 2 impulses (amplitudes positive, sum 1):
  V = 0 at the n - 1 zeros w_z; V = Vtol and d(V^2)/dw = 2 Re(conj(z) dz/dw) = 0 at the h humps.
  One frequency is pinned to w0 = 1: the middle hump for odd h (EI, three-hump EI), the middle
  zero for even h (two-hump EI). Unknowns and equations both number 4h + 3.
* UM-ZV: amplitudes fixed at [1, -1, 1], times t_1, t_2 solve z(1) = 0.

Notes
-----
Conditions from Singhose, Seering & Singer, J. Mech. Design 116(2):654-659, 1994 (EI);
Singhose, Porter, Tuttle & Singer, ASME JDSMC 119(2):320-326, 1997 (multi-hump EI);
Singhose, Singer & Seering, ASME JDSMC 119(2):198-205, 1997 (UM-ZV). All from memory.
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.errors import DesignError
from stillhook.shaping.design_cache import DESIGN_CACHE
from stillhook.shaping.shaper import check_tolerance
from stillhook.solvers import solve_square_system

__all__ = ["damped_hump_shaper", "damped_umzv_times", "undamped_hump_amplitudes"]

_MAX_ZETA_STEP = 0.02
#: Newton steps per continuation step (from the previous damping ratio's solution it needs ~3-6).
_MAX_NEWTON_STEPS = 12
#: Smallest continuation step in zeta: a failed step is halved down to this.
_MIN_ZETA_STEP = 1e-4


def _z_and_slope(A: np.ndarray, t: np.ndarray, w: np.ndarray, zeta: float) -> tuple[np.ndarray, np.ndarray]:
    """z(w) and dz/dw for impulses (A, t) at normalized frequencies w (see module docstring)."""
    s = math.sqrt(1.0 - zeta * zeta)
    lag = t[-1] - t
    e = np.exp(-zeta * w[:, None] * lag - 1j * s * w[:, None] * t)
    z = e @ A
    dz = (e * (-zeta * lag - 1j * s * t)) @ A
    return z, dz


def undamped_hump_amplitudes(n_humps: int, tolerance: float) -> np.ndarray:
    """Amplitudes of the undamped EI (1 hump), two-hump and three-hump EI at half periods."""
    V = check_tolerance(tolerance)
    if n_humps == 1:
        return np.array([(1 + V) / 4, (1 - V) / 2, (1 + V) / 4])
    if n_humps == 2:
        X = (V * V * (math.sqrt(1 - V * V) + 1)) ** (1.0 / 3.0)
        a1 = (3 * X * X + 2 * X + 3 * V * V) / (16 * X)
        return np.array([a1, 0.5 - a1, 0.5 - a1, a1])
    if n_humps == 3:
        a1 = (1 + 3 * V + 2 * math.sqrt(2 * V * (V + 1))) / 16
        a2 = (1 - V) / 4
        return np.array([a1, a2, 1 - 2 * (a1 + a2), a2, a1])
    raise DesignError(f"hump count {n_humps!r} is out of range; allowed: 1, 2 or 3")



def _undamped_start(n_humps: int, tolerance: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Undamped amplitudes, times, zeros and humps (normalized), the continuation's start (cached)."""
    def make() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        A0 = undamped_hump_amplitudes(n_humps, tolerance)
        t0 = math.pi * np.arange(A0.size)
        zeros, humps = _undamped_features(A0, t0)
        return A0, t0, zeros, humps

    return DESIGN_CACHE.get("undamped_start", (n_humps, tolerance), make)


def _undamped_features(A: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Zeros and hump frequencies of an undamped EI-family shaper, from its V curve on (0, 2)."""
    w = np.linspace(1e-3, 2.0 - 1e-3, 20001)
    v = np.abs(_z_and_slope(A, t, w, 0.0)[0])
    inner = np.arange(1, w.size - 1)
    minima = inner[(v[inner] <= v[inner - 1]) & (v[inner] <= v[inner + 1]) & (v[inner] < 1e-2)]
    zeros = w[minima]
    humps = []
    for a, b in zip(minima[:-1], minima[1:], strict=True):
        humps.append(w[a + int(np.argmax(v[a:b + 1]))])
    return zeros, np.array(humps)


def _continue(residual, x: np.ndarray, target: float, what: str) -> np.ndarray:
    """x with residual(x, target) = 0, by continuation in zeta from the solution ``x`` at zeta = 0.

    Steps of at most ``_MAX_ZETA_STEP``; each is solved by Newton (``solvers.solve_square_system``) from
    the previous solution moved along the secant through the last two (x + (zeta - zeta_done) dx/dzeta)
    and accepted when max |residual| <= 1e-9. A step that fails is halved
    (near the heaviest damping a form allows, its impulses move fast with zeta) down to
    ``_MIN_ZETA_STEP``, below which the branch is taken to end there. (Letting the step grow again
    after a success costs more than it saves: each failed step costs a full Newton run.)
    """
    done, step = 0.0, target / max(1, math.ceil(target / _MAX_ZETA_STEP))
    slope = np.zeros_like(x)  # dx/dzeta from the last two solutions (secant predictor)
    while done < target:
        zeta = target if done + step > target * (1.0 - 1e-12) else done + step
        with np.errstate(all="ignore"):  # trial points far off may overflow; the residual decides
            x_new = solve_square_system(lambda x, zeta=zeta: residual(x, zeta), x + (zeta - done) * slope,
                                        xtol=1e-13, max_iter=_MAX_NEWTON_STEPS)
            solved = bool(np.max(np.abs(residual(x_new, zeta))) <= 1e-9)
        if solved:
            x, done, slope = x_new, zeta, (x_new - x) / (zeta - done)
        elif step / 2.0 >= _MIN_ZETA_STEP:
            step /= 2.0
        else:
            raise DesignError(f"no damped {what} shaper found for damping ratio {target:g} (solved up to "
                              f"{done:.4g}); allowed: a lighter damping ratio, or a ZV/ZVD-family shaper "
                              "(exact for any damping)")
    return x


def damped_hump_shaper(n_humps: int, omega_rad_s: float, damping_ratio: float,
                       tolerance: float) -> tuple[np.ndarray, np.ndarray]:
    """Times (s) and amplitudes of the damped EI (1 hump), two-hump or three-hump EI shaper.

    Parameters
    ----------
    n_humps : 1, 2 or 3
    omega_rad_s : float > 0
        Undamped natural frequency of the mode.
    damping_ratio : float in [0, 1)
    tolerance : float in (0, 1)
        Hump height Vtol.
    """
    A0, t0, zeros, humps = _undamped_start(n_humps, float(tolerance))
    n = A0.size
    if zeros.size != n - 1 or humps.size != n_humps:
        raise DesignError(f"EI shaper with tolerance {tolerance:g} has no {n_humps}-hump structure; "
                          "allowed: a tolerance below about 0.3")
    pin_hump = n_humps % 2 == 1
    pin_index = (n_humps // 2) if pin_hump else (zeros.size // 2)

    def unpack(x):
        A = x[:n]
        t = np.concatenate([[0.0], x[n:2 * n - 1]])
        n_zeros_free = n - 1 - (0 if pin_hump else 1)
        wz = x[2 * n - 1:2 * n - 1 + n_zeros_free]
        wh = x[2 * n - 1 + n_zeros_free:]
        if pin_hump:
            wh = np.insert(wh, pin_index, 1.0)
        else:
            wz = np.insert(wz, pin_index, 1.0)
        return A, t, wz, wh

    def pack(A, t, wz, wh):
        if pin_hump:
            wh = np.delete(wh, pin_index)
        else:
            wz = np.delete(wz, pin_index)
        return np.concatenate([A, t[1:], wz, wh])

    x = pack(A0, t0, zeros, humps)
    target = float(damping_ratio)

    def residual(x, zeta):
        A, t, wz, wh = unpack(x)
        z0, _ = _z_and_slope(A, t, wz, zeta)
        zh, dzh = _z_and_slope(A, t, wh, zeta)
        return np.concatenate([[A.sum() - 1.0], z0.real, z0.imag, np.abs(zh) - tolerance,
                               np.real(np.conj(zh) * dzh)])

    x = _continue(residual, x, target, f"{n_humps}-hump EI")
    A, t, _, _ = unpack(x)
    if np.any(A <= 0.0) or np.any(np.diff(t) <= 0.0):
        raise DesignError(f"damped {n_humps}-hump EI for damping ratio {target:g} has non-positive amplitudes "
                          "or unordered times; allowed: a lighter damping ratio")
    return t / float(omega_rad_s), A


def damped_umzv_times(omega_rad_s: float, damping_ratio: float) -> np.ndarray:
    """Impulse times (s) of the damped UM-ZV shaper [1, -1, 1] (V = 0 at the design point)."""
    A = np.array([1.0, -1.0, 1.0])
    x = np.array([math.pi / 3.0, 2.0 * math.pi / 3.0])
    target = float(damping_ratio)

    def residual(x, zeta):
        z, _ = _z_and_slope(A, np.concatenate([[0.0], x]), np.array([1.0]), zeta)
        return np.array([z[0].real, z[0].imag])

    x = _continue(residual, x, target, "UM-ZV")
    if not (0.0 < x[0] < x[1]):
        raise DesignError(f"damped UM-ZV for damping ratio {target:g} has unordered times; "
                          "allowed: a lighter damping ratio")
    return np.concatenate([[0.0], x]) / float(omega_rad_s)
