"""Command shapers: impulse sequences convolved with the trolley speed command.

A shaper is a sequence of impulses (times t_i >= 0, amplitudes A_i summing to 1). Convolving it
with the speed command delays and blends the command so that the sway it leaves cancels. For a
mode of undamped angular frequency w and damping ratio zeta the residual vibration, as a
fraction of what a single unit impulse leaves, is::

    V(w, zeta) = exp(-zeta w t_n) sqrt(C^2 + S^2),
    C = sum_i A_i exp(zeta w t_i) cos(w_d t_i),   S = sum_i A_i exp(zeta w t_i) sin(w_d t_i),
    w_d = w sqrt(1 - zeta^2),  t_n = last impulse time.

Equivalently V = exp(-zeta w t_n) |H(s_p)| with H(s) = sum_i A_i exp(-s t_i) evaluated at the
pole s_p = -zeta w + j w_d, so V of a convolution is the product of the two V's.

This module holds the :class:`Shaper` type, V and its sensitivity curve, the insensitivity width
at a tolerance and the worst V over a band. The closed-form shapers (ZV ... UM-ZV) live in
:mod:`stillhook.shaping.closed_forms` and are importable from here as well.

Notes
-----
V: Singer & Seering, "Preshaping command inputs to reduce system vibration", ASME J. Dyn. Sys.
Meas. Control 112(1):76-82, 1990. ZV is the half-cycle posicast of O.J.M. Smith, "Posicast
control of damped oscillatory systems", Proc. IRE 45(9):1249-1255, 1957.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.checks import check_quantity, finite_number
from stillhook.errors import DesignError
from stillhook.shaping.design_cache import DESIGN_CACHE
from stillhook.solvers import bounded_minimum, brent_root

__all__ = [
    "Shaper", "TIME_MERGE_S", "check_cycle", "check_damping", "check_frequency",
    "check_tolerance", "insensitive_band_hz", "insensitivity_width", "residual_vibration", "sensitivity_curve",
    "worst_vibration",
]

#: Impulse times closer than this (s) are merged by :meth:`Shaper.convolve` and the grid code.
TIME_MERGE_S = 1e-9
#: Relative slack used when deciding whether V is within a tolerance (floating-point noise only).
_SLACK = 1e-9
#: insensitive_band_hz stops searching upward at this multiple of the design frequency.
_UNBOUNDED_RATIO = 100.0


def check_frequency(freq_hz: float) -> float:
    return check_quantity("frequency_hz", freq_hz, error=DesignError)


def check_damping(damping_ratio: float) -> float:
    return check_quantity("damping_ratio", damping_ratio, error=DesignError)


def check_tolerance(tolerance: float) -> float:
    return finite_number("tolerance (fraction)", tolerance, error=DesignError, lo=0.0, lo_ok=False, hi=1.0,
                         hi_ok=False, allowed="0 < tolerance < 1 (e.g. 0.05 for 5 %)")


def check_cycle(cycle_s: float) -> float:
    """The drive cycle (s) as a finite number > 0, else DesignError."""
    return check_quantity("cycle_s", cycle_s, error=DesignError)


def residual_vibration(times_s, amplitudes, omega_rad_s, damping_ratio: float = 0.0) -> np.ndarray:
    """V(w, zeta) of an impulse sequence, vectorized over ``omega_rad_s`` (any shape).

    Parameters
    ----------
    times_s : array (n,), ascending, >= 0
    amplitudes : array (n,)
    omega_rad_s : float or array, > 0
        Undamped natural angular frequencies of the mode (rad/s).
    damping_ratio : float in [0, 1)

    Returns
    -------
    ndarray, shape of ``omega_rad_s``
        Residual vibration as a fraction (1 = as much as an unshaped step).

    Notes
    -----
    V = exp(-zeta w t_n) |sum_i A_i exp(zeta w t_i) exp(j w_d t_i)|, written with the decays
    exp(-zeta w (t_n - t_i)) <= 1 so that it cannot overflow (Singer & Seering 1990).
    """
    t = np.asarray(times_s, dtype=float)
    a = np.asarray(amplitudes, dtype=float)
    w = np.asarray(omega_rad_s, dtype=float)
    zeta = float(damping_ratio)
    phase = np.multiply.outer(w * math.sqrt(1.0 - zeta * zeta), t)  # w_d t_i
    cos, sin = np.cos(phase), np.sin(phase)  # real arithmetic: several times faster than complex exp
    if zeta > 0.0:
        decay = np.exp(-zeta * np.multiply.outer(w, t[-1] - t))
        cos *= decay
        sin *= decay
    return np.hypot(cos @ a, sin @ a)


@dataclass(frozen=True, eq=False)
class Shaper:
    """An input shaper: impulses at ``times_s`` with ``amplitudes``.

    A command filter (:class:`stillhook.sim.command_filter.CommandFilter`): ``apply``,
    ``added_duration_s``, ``mean_delay_s``, ``residual_vibration``.

    Parameters
    ----------
    times_s : array (n,), strictly ascending, times_s[0] == 0
        Impulse times (s).
    amplitudes : array (n,), summing to 1
        Impulse amplitudes (unity DC gain, so the trolley ends where it would have).
    name : str
        Label such as ``"zvd@0.38Hz"``.

    Attributes
    ----------
    duration_s : float
        Time of the last impulse: how much the shaper lengthens a move.
    overshoots_command : bool
        True when an amplitude is negative (UM-ZV): the shaped speed can leave [0, v_max] and the
        acceleration can reach ``command_gain`` times the command's, so the drive needs margin.
    """

    times_s: np.ndarray
    amplitudes: np.ndarray
    name: str = ""

    def __post_init__(self) -> None:
        t = np.array(self.times_s, dtype=float).reshape(-1)
        a = np.array(self.amplitudes, dtype=float).reshape(-1)
        if t.size == 0 or t.size != a.size:
            raise DesignError(f"a shaper needs as many times as amplitudes (>= 1); got {t.size} and {a.size}")
        if not (np.all(np.isfinite(t)) and np.all(np.isfinite(a))):
            raise DesignError("shaper times and amplitudes must be finite numbers")
        if abs(t[0]) > TIME_MERGE_S or np.any(np.diff(t) <= 0.0):
            raise DesignError("shaper times must start at 0 and be strictly ascending; got "
                              + ", ".join(f"{v:g}" for v in t))
        if abs(a.sum() - 1.0) > 1e-9:
            raise DesignError(f"shaper amplitudes must sum to 1 (unity gain); they sum to {a.sum():.12g}")
        t[0] = 0.0
        t.setflags(write=False)
        a.setflags(write=False)
        object.__setattr__(self, "times_s", t)
        object.__setattr__(self, "amplitudes", a)

    @classmethod
    def from_impulses(cls, times_s, amplitudes, name: str = "") -> Shaper:
        """Build a shaper from impulses in any order: sort, merge coincident, drop zeros, shift to 0.

        Amplitudes are normalized to sum to 1 (raises DesignError when they sum to about 0).
        """
        t = np.asarray(times_s, dtype=float).reshape(-1)
        a = np.asarray(amplitudes, dtype=float).reshape(-1)
        if t.size != a.size or t.size == 0:
            raise DesignError(f"a shaper needs as many times as amplitudes (>= 1); got {t.size} and {a.size}")
        order = np.argsort(t, kind="stable")
        t, a = t[order], a[order]
        keep_t, keep_a = [t[0]], [a[0]]
        for ti, ai in zip(t[1:], a[1:], strict=True):
            if ti - keep_t[-1] <= TIME_MERGE_S:
                keep_a[-1] += ai
            else:
                keep_t.append(ti)
                keep_a.append(ai)
        t, a = np.array(keep_t), np.array(keep_a)
        nz = np.abs(a) > 1e-15
        if not np.any(nz):
            raise DesignError("shaper amplitudes are all zero")
        t, a = t[nz], a[nz]
        total = a.sum()
        if abs(total) < 1e-12:
            raise DesignError("shaper amplitudes sum to 0; a shaper must have unity gain")
        return cls(t - t[0], a / total, name)

    # -- basic properties -------------------------------------------------------------------
    @property
    def duration_s(self) -> float:
        """Last impulse time (s)."""
        return float(self.times_s[-1])

    @property
    def added_duration_s(self) -> float:
        """How much longer a shaped command runs (s): the last impulse time (command-filter interface)."""
        return self.duration_s

    @property
    def mean_delay_s(self) -> float:
        """Mean delay sum A_i t_i (s), the centroid of the impulses (command-filter interface)."""
        return float(np.dot(self.amplitudes, self.times_s))

    @property
    def n_impulses(self) -> int:
        return int(self.times_s.size)

    @property
    def overshoots_command(self) -> bool:
        return bool(np.any(self.amplitudes < 0.0))

    @property
    def command_gain(self) -> float:
        """sum |A_i|: bound on shaped acceleration over command acceleration (1 for positive shapers)."""
        return float(np.abs(self.amplitudes).sum())

    @property
    def speed_range_factor(self) -> tuple[float, float]:
        """Bounds (lo, hi) of shaped speed / v_max for a command within [0, v_max].

        (-sum of negative amplitudes, sum of positive amplitudes): (0, 1) for positive shapers,
        (-1, 2) for UM-ZV.
        """
        a = self.amplitudes
        return float(a[a < 0].sum()), float(a[a > 0].sum())

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Shaper):
            return NotImplemented
        return (self.name == other.name and np.array_equal(self.times_s, other.times_s)
                and np.array_equal(self.amplitudes, other.amplitudes))

    def __hash__(self) -> int:
        return hash((self.name, self.times_s.tobytes(), self.amplitudes.tobytes()))

    # -- maths ------------------------------------------------------------------------------
    def residual_vibration(self, omega_rad_s, damping_ratio: float = 0.0) -> np.ndarray:
        """V(w, zeta) as a fraction, vectorized over ``omega_rad_s`` (see module docstring)."""
        return residual_vibration(self.times_s, self.amplitudes, omega_rad_s, check_damping(damping_ratio))

    def vibration_at_hz(self, freq_hz, damping_ratio: float = 0.0) -> np.ndarray:
        """V at frequencies given in Hz."""
        return self.residual_vibration(2.0 * np.pi * np.asarray(freq_hz, dtype=float), damping_ratio)

    def convolve(self, other: Shaper) -> Shaper:
        """Convolution: every pair of impulses (t_i + t_j, A_i A_j), coincident impulses merged.

        V of the result is V_self * V_other at every frequency (both are evaluated at the same pole).
        """
        t = (self.times_s[:, None] + other.times_s[None, :]).reshape(-1)
        a = (self.amplitudes[:, None] * other.amplitudes[None, :]).reshape(-1)
        name = "*".join(n for n in (self.name, other.name) if n)
        return Shaper.from_impulses(t, a, name)

    # -- drive cycle ------------------------------------------------------------------------
    def on_grid(self, cycle_s: float, rtol: float = 1e-6) -> bool:
        """True when every impulse time is a whole number of drive cycles (within rtol cycles)."""
        k = self.times_s / float(cycle_s)
        return bool(np.all(np.abs(k - np.round(k)) <= rtol))

    def delays_cycles(self, cycle_s: float) -> np.ndarray:
        """Impulse delays in whole drive cycles; DesignError if the shaper is not on the grid."""
        cycle_s = check_cycle(cycle_s)
        if not self.on_grid(cycle_s):
            raise DesignError(f"shaper {self.name or '(unnamed)'} has impulse times that are not whole "
                              f"multiples of the drive cycle {cycle_s:g} s; "
                              "use stillhook.shaping.cycle_grid.to_cycle_grid")
        return np.round(self.times_s / cycle_s).astype(np.int64)

    def apply(self, speed_m_s, cycle_s: float) -> np.ndarray:
        """Shaped speed samples: y[k] = sum_i A_i v[k - d_i], length len(v) + max delay.

        Parameters
        ----------
        speed_m_s : array (n,)
            Speed command sampled every drive cycle.
        cycle_s : float > 0
            Drive cycle; the shaper must be on its grid.
        """
        v = np.asarray(speed_m_s, dtype=float).reshape(-1)
        d = self.delays_cycles(cycle_s)
        y = np.zeros(v.size + int(d[-1]))
        for di, ai in zip(d, self.amplitudes, strict=True):
            y[di:di + v.size] += ai * v
        return y

    def as_dict(self, cycle_s: float | None = None) -> dict:
        """JSON-ready impulses; with ``cycle_s`` and on its grid, also ``delay_cycles`` per impulse."""
        delays = self.delays_cycles(cycle_s) if cycle_s is not None and self.on_grid(cycle_s) else None
        impulses = []
        for i, (t, a) in enumerate(zip(self.times_s, self.amplitudes, strict=True)):
            row = {"time_s": float(t), "amplitude": float(a)}
            if delays is not None:
                row["delay_cycles"] = int(delays[i])
            impulses.append(row)
        return {"name": self.name, "impulses": impulses, "duration_s": self.duration_s,
                "overshoots_command": self.overshoots_command, "command_gain": self.command_gain}


# -- sensitivity ------------------------------------------------------------------------------
def sensitivity_curve(shaper: Shaper, design_freq_hz: float, damping_ratio: float = 0.0, *,
                      ratio_max: float = 2.0, n: int = 401) -> tuple[np.ndarray, np.ndarray]:
    """V against normalized frequency f/f0 in (0, ratio_max]: returns (ratios, V)."""
    f0 = check_frequency(design_freq_hz)
    r = np.linspace(ratio_max / n, ratio_max, n)
    return r, shaper.vibration_at_hz(r * f0, damping_ratio)


def _grid_step_hz(shaper: Shaper) -> float:
    # |dV/dw| <= sum A_i t_i <= t_n: a step of 0.01 / t_n rad/s moves V by at most 0.01.
    return 0.01 / (2.0 * np.pi * max(shaper.duration_s, 1e-6))


def insensitive_band_hz(shaper: Shaper, design_freq_hz: float, tolerance: float,
                        damping_ratio: float = 0.0) -> tuple[float, float]:
    """The contiguous frequency range around ``design_freq_hz`` where V <= tolerance.

    Returns (f0, f0) when V(f0) itself exceeds the tolerance, and an upper edge of ``inf`` when V
    stays within the tolerance up to 100 f0 (heavy damping makes V decay at high frequency).
    Edges are found on a grid fine enough that V moves by < 0.01 between points, then refined
    by root finding.
    """
    f0, tol = check_frequency(design_freq_hz), check_tolerance(tolerance)
    zeta = check_damping(damping_ratio)

    def excess(f):
        return shaper.vibration_at_hz(f, zeta) - tol * (1.0 + _SLACK)

    if excess(f0) > 0.0:
        return f0, f0
    step = min(_grid_step_hz(shaper), 0.01 * f0)
    edges = []
    for direction in (-1.0, 1.0):
        inside, edge = f0, None
        while edge is None:
            span = inside + direction * step * np.arange(1, 2049)
            span = span[span > 0.0]
            out = np.nonzero(excess(span) > 0.0)[0] if span.size else np.array([], dtype=int)
            if out.size:
                k = int(out[0])
                a, b = (inside if k == 0 else float(span[k - 1])), float(span[k])
                edge = brent_root(excess, min(a, b), max(a, b), xtol=1e-12 * f0)
            elif span.size < 2048:  # walked down to 0 Hz without leaving the tolerance
                edge = 0.0
            elif span[-1] > _UNBOUNDED_RATIO * f0:  # heavy damping: V decays at high frequency
                edge = math.inf
            else:
                inside = float(span[-1])
        edges.append(edge)
    return edges[0], edges[1]


def insensitivity_width(shaper: Shaper, design_freq_hz: float, tolerance: float = 0.05,
                        damping_ratio: float = 0.0) -> float:
    """Width of the insensitive band normalized by the design frequency: (f_hi - f_lo) / f0.

    Notes
    -----
    The measure of Singhose, Seering & Singer, J. Mech. Design 116(2):654-659, 1994.
    """
    lo, hi = insensitive_band_hz(shaper, design_freq_hz, tolerance, damping_ratio)
    return (hi - lo) / float(design_freq_hz)


def worst_vibration(shaper: Shaper, f_lo_hz: float, f_hi_hz: float, damping_ratio: float = 0.0) -> tuple[float, float]:
    """Largest V over [f_lo_hz, f_hi_hz]: returns (V_max, frequency in Hz where it occurs).

    Sampled so that V moves < 0.01 between samples, then refined by Brent's bounded search
    (:func:`stillhook.solvers.bounded_minimum` of -V) between the neighbours of the largest sample.
    """
    lo, hi = check_frequency(f_lo_hz), check_frequency(f_hi_hz)
    if lo > hi:
        raise DesignError(f"band [{lo:g}, {hi:g}] Hz has lo > hi; allowed: lo <= hi")
    zeta = check_damping(damping_ratio)
    # the same check recurs (a band design's verification, then the project's report of it): kept per shaper
    key = (shaper.times_s.tobytes(), shaper.amplitudes.tobytes(), lo, hi, zeta)
    return DESIGN_CACHE.get("worst_vibration", key, lambda: _worst_sampled(shaper, lo, hi, zeta))


def _worst_sampled(shaper: Shaper, lo: float, hi: float, zeta: float) -> tuple[float, float]:
    n = int(min(2_000_000, max(64, math.ceil((hi - lo) / _grid_step_hz(shaper)) + 1)))
    f = np.linspace(lo, hi, n)
    v = shaper.vibration_at_hz(f, zeta)
    k = int(np.argmax(v))
    best_v, best_f = float(v[k]), float(f[k])
    if n > 1 and hi > lo:
        a, b = float(f[max(k - 1, 0)]), float(f[min(k + 1, n - 1)])
        x, neg_v = bounded_minimum(lambda x: -float(shaper.vibration_at_hz(x, zeta)), a, b, xatol=1e-10 * hi)
        if -neg_v > best_v:
            best_v, best_f = -neg_v, x
    return best_v, best_f
