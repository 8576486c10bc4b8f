"""Motion inputs of the simulator: drive commands sampled each cycle -> per-cycle tables.

A drive follows its speed command v[k] (given at t = k T, T the drive cycle) linearly between
samples, so over cycle k the acceleration is constant and the position is exact::

    a_k = (v[k+1] - v[k]) / T,   x(k T + tau) = x_k + v_k tau + a_k tau^2 / 2,   x_{k+1} = x_k + T (v_k + v_{k+1}) / 2

Rope length given as samples L[k] (instead of a hoist speed) is followed at the constant speed
(L[k+1] - L[k]) / T over each cycle (the hoist acceleration inside a cycle is neglected).

Notes
-----
Exact integration of a piecewise-linear speed (trapezoid rule, exact for linear segments).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.errors import ConfigError

__all__ = ["MIN_ROPE_LENGTH_M", "Track", "as_samples", "command_end_index", "cycles_needed"]

#: Shortest rope the simulator accepts anywhere along a hoist command (m).
MIN_ROPE_LENGTH_M = 0.05


def as_samples(name: str, values) -> np.ndarray:
    """Validated 1-D float array of finite command samples (ConfigError otherwise)."""
    a = np.asarray(values, dtype=float)
    if a.ndim != 1 or len(a) < 1:
        raise ConfigError(f"{name} must be a 1-D sequence of samples, got shape {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ConfigError(f"{name} contains NaN or infinite samples; allowed: finite numbers")
    return a


def command_end_index(samples: np.ndarray) -> int:
    """Number of cycles until the command is at zero for good (index after the last non-zero sample)."""
    nz = np.flatnonzero(samples)
    return 0 if len(nz) == 0 else int(nz[-1]) + 1


def cycles_needed(t_final_s: float, cycle_s: float) -> int:
    """Drive cycles tabulated for a run ending at t_final_s (one spare cycle past the end)."""
    return math.ceil(t_final_s / cycle_s - 1e-9) + 1


@dataclass(frozen=True)
class Track:
    """One axis (trolley travel or rope length) over n drive cycles.

    Attributes
    ----------
    cycle_s : float > 0
    start_m : ndarray, shape (n + 1,)
        Position (or rope length) at the start of each cycle, x_k (m).
    speed_m_s : ndarray, shape (n + 1,)
        Speed at the start of each cycle, v_k (m/s).
    accel_m_s2 : ndarray, shape (n,)
        Constant acceleration over each cycle, a_k (m/s^2).
    """

    cycle_s: float
    start_m: np.ndarray
    speed_m_s: np.ndarray
    accel_m_s2: np.ndarray

    @classmethod
    def from_speed(cls, speed_m_s: np.ndarray, x0_m: float, cycle_s: float, n: int) -> Track:
        """Track of a speed command (zero after its last sample), linear between samples."""
        v = np.zeros(n + 1)
        m = min(len(speed_m_s), n + 1)
        v[:m] = speed_m_s[:m]
        x = np.empty(n + 1)
        x[0] = 0.0
        np.cumsum(0.5 * cycle_s * (v[1:] + v[:-1]), out=x[1:])
        return cls(cycle_s, x0_m + x, v, np.diff(v) / cycle_s)

    @classmethod
    def from_positions(cls, position_m: np.ndarray, cycle_s: float, n: int) -> Track:
        """Track through position samples at constant speed over each cycle (held after the last)."""
        u = np.zeros(n + 1)
        d = np.diff(position_m) / cycle_s
        m = min(len(d), n + 1)
        u[:m] = d[:m]
        x = np.empty(n + 1)
        x[0] = 0.0
        np.cumsum(cycle_s * u[:-1], out=x[1:])
        return cls(cycle_s, float(position_m[0]) + x, u, np.zeros(n))

    @classmethod
    def still(cls, x0_m: float, cycle_s: float, n: int) -> Track:
        """An axis at rest at x0_m."""
        return cls(cycle_s, np.full(n + 1, float(x0_m)), np.zeros(n + 1), np.zeros(n))

    def at(self, t_s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Position (m) and speed (m/s) at times t_s (s), exact inside each cycle."""
        T = self.cycle_s
        k = np.clip(np.floor(t_s / T + 1e-9).astype(np.int64), 0, len(self.accel_m_s2) - 1)
        tau = t_s - k * T
        a = self.accel_m_s2[k]
        return self.start_m[k] + self.speed_m_s[k] * tau + 0.5 * a * tau * tau, self.speed_m_s[k] + a * tau

    def min_m(self) -> float:
        """Smallest position over the track (the extremes lie at cycle starts or at a stop inside a cycle)."""
        lo = float(np.min(self.start_m))
        a, v = self.accel_m_s2, self.speed_m_s[:-1]
        with np.errstate(divide="ignore", invalid="ignore"):
            tau = np.where(a != 0.0, -v / a, -1.0)
        inside = (tau > 0.0) & (tau < self.cycle_s)
        if np.any(inside):
            x = self.start_m[:-1][inside] + v[inside] * tau[inside] + 0.5 * a[inside] * tau[inside] ** 2
            lo = min(lo, float(np.min(x)))
        return lo
