"""Closed-form command shapers: ZV, ZVD, ZVDD and the n-th binomial, EI, two- and three-hump EI, UM-ZV.

Each returns a :class:`stillhook.shaping.shaper.Shaper` designed for a mode of frequency ``freq_hz`` and
damping ratio ``damping_ratio`` (times in seconds, amplitudes summing to 1). The ZV family is exact
for any damping (K = exp(-zeta pi / sqrt(1 - zeta^2)), half damped periods); the damped EI family and
UM-ZV are solved from their defining conditions in :mod:`stillhook.shaping.damped_forms`. They are also
available as ``stillhook.shaping.shaper.zv`` etc.

Notes
-----
Singer & Seering, ASME JDSMC 112(1):76-82, 1990 (ZV, ZVD, ZVDD); Smith, Proc. IRE 45(9), 1957
(half-cycle posicast = ZV); Singhose, Seering & Singer, J. Mech. Design 116(2):654-659, 1994 (EI);
Singhose, Porter, Tuttle & Singer, ASME JDSMC 119(2):320-326, 1997 (multi-hump EI); Singhose,
Singer & Seering, ASME JDSMC 119(2):198-205, 1997 (UM-ZV).
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.errors import DesignError
from stillhook.shaping.damped_forms import damped_hump_shaper, damped_umzv_times, undamped_hump_amplitudes
from stillhook.shaping.shaper import Shaper, check_damping, check_frequency, check_tolerance

__all__ = ["CLOSED_FORMS", "binomial", "ei", "ei2", "ei3", "umzv", "zv", "zvd", "zvdd"]


def _damped_half_period_s(freq_hz: float, zeta: float) -> float:
    """Half the damped period: pi / w_d (s)."""
    return 0.5 / (freq_hz * math.sqrt(1.0 - zeta * zeta))


def _k_factor(zeta: float) -> float:
    """K = exp(-zeta pi / sqrt(1 - zeta^2)): decay over half a damped period."""
    return math.exp(-zeta * math.pi / math.sqrt(1.0 - zeta * zeta))


def binomial(n: int, freq_hz: float, damping_ratio: float = 0.0) -> Shaper:
    """The n-th binomial shaper: the coefficients of (1 + K z)^n at half damped periods.

    n = 1 is ZV, 2 ZVD, 3 ZVDD. A_i = C(n, i) K^i / (1 + K)^n at t_i = i pi / w_d; V and its first
    n - 1 frequency derivatives vanish at the design point.

    Notes
    -----
    Singer & Seering, ASME JDSMC 112(1):76-82, 1990 (ZV, ZVD and the repeated-derivative family).
    """
    if isinstance(n, bool) or not isinstance(n, int | np.integer) or n < 1:
        raise DesignError(f"binomial order n = {n!r} is out of range; allowed: a whole number >= 1")
    f, zeta = check_frequency(freq_hz), check_damping(damping_ratio)
    K, half = _k_factor(zeta), _damped_half_period_s(f, zeta)
    a = np.array([math.comb(n, i) * K**i for i in range(n + 1)])
    label = {1: "zv", 2: "zvd", 3: "zvdd"}.get(int(n), f"binomial{n}")
    return Shaper(half * np.arange(n + 1), a / a.sum(), f"{label}@{f:.6g}Hz")


def zv(freq_hz: float, damping_ratio: float = 0.0) -> Shaper:
    """ZV: [1, K] / (1 + K) at [0, T_d/2] (Singer & Seering 1990; Smith's half-cycle posicast 1957)."""
    return binomial(1, freq_hz, damping_ratio)


def zvd(freq_hz: float, damping_ratio: float = 0.0) -> Shaper:
    """ZVD: [1, 2K, K^2] / (1 + K)^2 at [0, T_d/2, T_d] (Singer & Seering 1990)."""
    return binomial(2, freq_hz, damping_ratio)


def zvdd(freq_hz: float, damping_ratio: float = 0.0) -> Shaper:
    """ZVDD: [1, 3K, 3K^2, K^3] / (1 + K)^3 at half damped periods (Singer & Seering 1990)."""
    return binomial(3, freq_hz, damping_ratio)


def ei(freq_hz: float, damping_ratio: float = 0.0, tolerance: float = 0.05) -> Shaper:
    """Extra-insensitive shaper: V = tolerance at f0 (a hump), V = 0 either side.

    Undamped: [(1+V)/4, (1-V)/2, (1+V)/4] at [0, T/2, T]. Damped: solved from the same conditions
    (:mod:`stillhook.shaping.damped_forms`).

    Notes
    -----
    Singhose, Seering & Singer, "Residual vibration reduction using vector diagrams to generate
    shaping inputs", J. Mech. Design 116(2):654-659, 1994.
    """
    return _hump(1, freq_hz, damping_ratio, tolerance, "ei")


def ei2(freq_hz: float, damping_ratio: float = 0.0, tolerance: float = 0.05) -> Shaper:
    """Two-hump EI: impulses at [0, 0.5, 1, 1.5] T, A1 = A4 = (3X^2 + 2X + 3V^2)/(16X), A2 = A3 = 1/2 - A1,
    X = (V^2 (sqrt(1 - V^2) + 1))^(1/3). Damped: solved numerically.

    Notes
    -----
    Singhose, Porter, Tuttle & Singer, "Vibration reduction using multi-hump input shapers",
    ASME JDSMC 119(2):320-326, 1997 (formula from memory, checked: each hump peaks at V).
    """
    return _hump(2, freq_hz, damping_ratio, tolerance, "ei2")


def ei3(freq_hz: float, damping_ratio: float = 0.0, tolerance: float = 0.05) -> Shaper:
    """Three-hump EI: five impulses at half periods, A1 = A5 = (1 + 3V + 2 sqrt(2V(V+1)))/16,
    A2 = A4 = (1 - V)/4, A3 = 1 - 2(A1 + A2). Damped: solved numerically.

    Notes
    -----
    Singhose, Porter, Tuttle & Singer, ASME JDSMC 119(2):320-326, 1997 (formula from memory).
    """
    return _hump(3, freq_hz, damping_ratio, tolerance, "ei3")


def _hump(n_humps: int, freq_hz: float, damping_ratio: float, tolerance: float, label: str) -> Shaper:
    f, zeta, V = check_frequency(freq_hz), check_damping(damping_ratio), check_tolerance(tolerance)
    if zeta == 0.0:
        a = undamped_hump_amplitudes(n_humps, V)
        t = 0.5 / f * np.arange(a.size)
    else:
        t, a = damped_hump_shaper(n_humps, 2.0 * math.pi * f, zeta, V)
    return Shaper(t, a / a.sum(), f"{label}@{f:.6g}Hz")


def umzv(freq_hz: float, damping_ratio: float = 0.0) -> Shaper:
    """Unity-magnitude ZV: [1, -1, 1] at [0, T/6, T/3] undamped; damped times solved numerically.

    Shortest ZV-type shaper (T/3), but its negative impulse makes the shaped speed overshoot and
    reverse and triples the peak acceleration (``overshoots_command`` is True): the drive needs
    that margin.

    Notes
    -----
    Singhose, Singer & Seering, "Time-optimal negative input shapers", ASME JDSMC 119(2):198-205,
    1997 (from memory). The paper fits the damped times with polynomials; here they are solved
    from V(w0, zeta) = 0 directly.
    """
    f, zeta = check_frequency(freq_hz), check_damping(damping_ratio)
    if zeta == 0.0:
        t = np.array([0.0, 1.0 / 6.0, 1.0 / 3.0]) / f
    else:
        t = damped_umzv_times(2.0 * math.pi * f, zeta)
    return Shaper(t, np.array([1.0, -1.0, 1.0]), f"umzv@{f:.6g}Hz")


#: Closed-form constructors by CLI/project method name. Each takes (freq_hz, damping_ratio, tolerance).
CLOSED_FORMS = {
    "zv": lambda f, z, v: zv(f, z),
    "zvd": lambda f, z, v: zvd(f, z),
    "zvdd": lambda f, z, v: zvdd(f, z),
    "ei": ei,
    "ei2": ei2,
    "ei3": ei3,
    "umzv": lambda f, z, v: umzv(f, z),
}
