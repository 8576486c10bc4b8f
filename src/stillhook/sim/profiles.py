"""Motion profiles sampled at the drive cycle.

Every trolley profile is a SPEED command v[k] (m/s) at t = k * cycle_s, starting and ending at
0, as a drive receives it each cycle. Between samples the trolley follows the command linearly
(see :mod:`stillhook.sim.dynamics`), so the travelled distance is the trapezoid-rule integral

    distance = cycle_s * sum(v[k])          (v[0] = v[-1] = 0).

Ramp lengths are whole cycles, and the plateau speed is then trimmed so that the distance is
exact and neither speed nor acceleration limit is exceeded.
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.checks import MAX_MOVE_SAMPLES, check_work, finite_number
from stillhook.errors import ConfigError

__all__ = [
    "DEFAULT_JERK_PER_ACCEL_1_S", "check_move_samples", "hoist_lengths", "hoist_speeds", "pendant_steps",
    "project_move", "s_curve", "trapezoid",
]

#: S-curve jerk when none is set: the acceleration is reached in 0.25 s (our choice, no source).
DEFAULT_JERK_PER_ACCEL_1_S = 4.0


def _positive(name: str, value: float, *, zero_ok: bool = False) -> float:
    return finite_number(name, value, allowed="a finite number " + (">= 0" if zero_ok else "> 0"),
                         lo=0.0, lo_ok=zero_ok)


def check_move_samples(n_samples: float, what: str) -> None:
    """Refuse a command longer than :data:`stillhook.checks.MAX_MOVE_SAMPLES` drive cycles, before it is made."""
    check_work(f"drive cycles of {what}", n_samples, MAX_MOVE_SAMPLES,
               hint="use a shorter move, a faster drive or a longer cycle (limit: stillhook.checks.MAX_MOVE_SAMPLES)")


def _ramp_cycles(speed_m_s: float, accel_m_s2: float, cycle_s: float) -> int:
    # Whole cycles for a linear ramp 0 -> speed at no more than accel; 1e-9 guards float noise.
    return max(1, math.ceil(speed_m_s / (accel_m_s2 * cycle_s) - 1e-9))


def trapezoid(distance_m: float, max_speed_m_s: float, max_accel_m_s2: float, cycle_s: float) -> np.ndarray:
    """Rest-to-rest trapezoidal speed command (triangular when the move is short).

    Parameters
    ----------
    distance_m : float > 0
    max_speed_m_s : float > 0
    max_accel_m_s2 : float > 0
    cycle_s : float > 0
        Drive cycle (sample period).

    Returns
    -------
    ndarray, shape (2 n_a + n_c + 1,)
        Speed samples: n_a ramp cycles up, n_c plateau cycles, n_a down. With peak speed v_p,
        the distance is cycle_s * v_p * (n_a + n_c), exact by construction.
    """
    d = _positive("distance_m", distance_m)
    v_max = _positive("max_speed_m_s", max_speed_m_s)
    a_max = _positive("max_accel_m_s2", max_accel_m_s2)
    Ts = _positive("cycle_s", cycle_s)
    # Continuous peak speed: v_max, or sqrt(d a_max) for a triangular move.
    v_target = min(v_max, math.sqrt(d * a_max))
    # duration d / v + v / a, checked before any array is made
    check_move_samples((d / v_target + v_target / a_max) / Ts, f"a {d:g} m move at {v_target:g} m/s and "
                       f"{a_max:g} m/s2 on a {Ts:g} s cycle")
    n_a = _ramp_cycles(v_target, a_max, Ts)
    n_c = max(0, math.ceil(d / (v_target * Ts) - n_a - 1e-9))
    v_p = d / ((n_a + n_c) * Ts)
    while v_p > v_max * (1 + 1e-12) or v_p / (n_a * Ts) > a_max * (1 + 1e-12):
        # rounding left the peak too high: lengthen the plateau (never shortens the ramps)
        n_c += 1
        v_p = d / ((n_a + n_c) * Ts)
    up = v_p * np.arange(n_a) / n_a  # 0 ... v_p (n_a - 1)/n_a
    return np.concatenate([up, np.full(n_c + 1, v_p), up[::-1]])


def s_curve(distance_m: float, max_speed_m_s: float, max_accel_m_s2: float, max_jerk_m_s3: float,
            cycle_s: float) -> np.ndarray:
    """Rest-to-rest jerk-limited (S-curve) speed command.

    The trapezoid's piecewise-constant acceleration is smoothed by a moving average of
    n_j = ceil(a_max / (j_max cycle_s)) samples. A moving average preserves the sum of the
    samples, so the distance stays exact; acceleration stays <= a_max and jerk <= j_max.

    Parameters
    ----------
    distance_m, max_speed_m_s, max_accel_m_s2, max_jerk_m_s3, cycle_s : float > 0
    """
    j_max = _positive("max_jerk_m_s3", max_jerk_m_s3)
    v = trapezoid(distance_m, max_speed_m_s, max_accel_m_s2, cycle_s)
    n_j = _ramp_cycles(max_accel_m_s2, j_max, cycle_s)
    if n_j <= 1:
        return v
    return np.convolve(v, np.full(n_j, 1.0 / n_j))


def pendant_steps(steps, max_accel_m_s2: float, cycle_s: float) -> np.ndarray:
    """Speed command from an operator's stepwise pendant inputs, rate-limited by the drive.

    Parameters
    ----------
    steps : sequence of (duration_s >= 0, speed_m_s)
        Held target speeds in order; after the last step the target is 0.
    max_accel_m_s2 : float > 0
        The drive ramps toward each target at this rate.
    cycle_s : float > 0

    Returns
    -------
    ndarray
        Speed samples from 0 until the command is back at 0.
    """
    a_max = _positive("max_accel_m_s2", max_accel_m_s2)
    Ts = _positive("cycle_s", cycle_s)
    targets = []
    for i, item in enumerate(steps):
        try:
            duration_s, speed = item
        except (TypeError, ValueError):
            raise ConfigError(f"pendant step {i} = {item!r}; allowed: (duration_s, speed_m_s)") from None
        n = round(_positive(f"pendant step {i} duration_s", duration_s, zero_ok=True) / Ts)
        s = finite_number(f"pendant step {i} speed_m_s", speed, allowed="a finite number")
        check_move_samples(len(targets) + n, "the pendant steps")
        targets.extend([s] * n)
    dv = a_max * Ts
    out = [0.0]
    for target in targets:
        out.append(out[-1] + float(np.clip(target - out[-1], -dv, dv)))
    while abs(out[-1]) > 1e-12:
        out.append(out[-1] + float(np.clip(-out[-1], -dv, dv)))
    out[-1] = 0.0
    return np.asarray(out)


def hoist_speeds(start_m: float, end_m: float, hoist_speed_m_s: float, hoist_accel_m_s2: float,
                 cycle_s: float, n_samples: int = 0, start_s: float = 0.0) -> np.ndarray:
    """Hoist speed command dL1/dt (m/s, positive pays rope out) moving L1 from start_m to end_m.

    A trapezoid of distance |end_m - start_m| starting at start_s, padded with zeros to at least
    n_samples. Used as ``simulate(..., hoist_speed_m_s=...)``.
    """
    Ts = _positive("cycle_s", cycle_s)
    delay = round(_positive("start_s", start_s, zero_ok=True) / Ts)
    dist = float(end_m) - float(start_m)
    if dist == 0.0:
        u = np.zeros(1)
    else:
        u = math.copysign(1.0, dist) * trapezoid(abs(dist), hoist_speed_m_s, hoist_accel_m_s2, Ts)
    u = np.concatenate([np.zeros(delay), u])
    if len(u) < n_samples:
        u = np.concatenate([u, np.zeros(n_samples - len(u))])
    return u


def hoist_lengths(start_m: float, end_m: float, hoist_speed_m_s: float, hoist_accel_m_s2: float,
                  cycle_s: float, n_samples: int = 0, start_s: float = 0.0) -> np.ndarray:
    """Rope length samples L1[k] (m) of the hoist move of :func:`hoist_speeds`.

    L1[k] = start_m + cycle_s * sum of trapezoid-rule increments; the last sample is end_m exactly.
    """
    u = hoist_speeds(start_m, end_m, hoist_speed_m_s, hoist_accel_m_s2, cycle_s, n_samples, start_s)
    L = float(start_m) + np.concatenate([[0.0], np.cumsum(0.5 * cycle_s * (u[1:] + u[:-1]))])
    return L


def project_move(project, distance_m: float | None = None):
    """The project's reference move: trolley speed and hoist speed commands (m/s) at the drive cycle.

    Uses ``[move] profile`` (trapezoid, or S-curve with ``[drive] max_jerk_m_s3``, by default
    DEFAULT_JERK_PER_ACCEL_1_S times the acceleration limit), the drive's speed and acceleration
    limits, and ``[move] hoist_to_m`` / ``hoist_start_s`` for hoisting during travel (from the
    nominal rope length).

    Parameters
    ----------
    project : stillhook.project.Project
    distance_m : float > 0, optional
        Overrides ``[move] distance_m``.

    Returns
    -------
    (speed_m_s, hoist_speed_m_s) : (ndarray, ndarray or None)
    """
    drive, move = project.drive, project.move
    d = move["distance_m"] if distance_m is None else distance_m
    Ts = drive["cycle_s"]
    if move["profile"] == "scurve":
        jerk = drive["max_jerk_m_s3"] or DEFAULT_JERK_PER_ACCEL_1_S * drive["max_accel_m_s2"]
        speed = s_curve(d, drive["max_speed_m_s"], drive["max_accel_m_s2"], jerk, Ts)
    else:
        speed = trapezoid(d, drive["max_speed_m_s"], drive["max_accel_m_s2"], Ts)
    hoist = None
    if move["hoist_to_m"] is not None:
        L0 = project.envelope.nominal_rope_length_m
        hoist = hoist_speeds(L0, move["hoist_to_m"], drive["hoist_speed_m_s"], drive["hoist_accel_m_s2"], Ts,
                             start_s=move["hoist_start_s"])
    return speed, hoist
