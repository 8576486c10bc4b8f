"""The simulator stillhook had before the batch engine: per rig, a Python right-hand side, DOP853
(scipy ``solve_ivp``) on constant-acceleration stretches and a Python RK4 loop per cycle elsewhere.

Kept here (benchmarks only, not part of the package) as the per-rig ``solve_ivp`` reference the
speed benchmarks measure against (issue 12) and as an independent cross-check of the new engine.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import solve_ivp

from stillhook.checks import finite_number
from stillhook.errors import ConfigError
from stillhook.model.rig import Rig
from stillhook.sim.dynamics import SETTLE_WINDOW_S, SimResult
from stillhook.sim.motion import as_samples

_MAX_OUTPUT_STEP_S = 0.01


class _Motion:
    """Piecewise-linear speed samples -> piecewise-constant acceleration, position by exact integration."""

    def __init__(self, speed: np.ndarray, x0: float, cycle_s: float, n: int):
        v = np.concatenate([speed, np.zeros(max(0, n + 1 - len(speed)))])[: n + 1]
        self.v = v
        self.a = np.diff(v) / cycle_s  # acceleration over cycle k
        self.x = x0 + np.concatenate([[0.0], np.cumsum(0.5 * cycle_s * (v[1:] + v[:-1]))])
        self.Ts = cycle_s

    def at(self, t: np.ndarray):
        k = np.clip(np.floor(t / self.Ts + 1e-9).astype(int), 0, len(self.a) - 1)
        tau = t - k * self.Ts
        a = self.a[k]
        return self.x[k] + self.v[k] * tau + 0.5 * a * tau**2, self.v[k] + a * tau, a


def _damping_table(rig: Rig, L_values: np.ndarray):
    """Modal damping matrix C(L1) on a grid of rope lengths, for linear interpolation."""
    if rig.damping_ratio == 0.0:
        return None
    lo, hi = float(L_values.min()), float(L_values.max())
    grid = np.array([lo]) if hi - lo < 1e-9 else np.linspace(lo, hi, 33)
    table = np.array([Rig(rig.hook_mass_kg, rig.payload_mass_kg, L, rig.rigging_length_m,
                          rig.gravity_m_s2, rig.damping_ratio).damping_matrix() for L in grid])
    return grid, table


def simulate_solve_ivp(rig: Rig, speed_m_s, cycle_s: float, *, rope_length_m=None, hoist_speed_m_s=None,
             settle_s: float = SETTLE_WINDOW_S, initial_angles_rad=(0.0, 0.0),
             initial_rates_rad_s=(0.0, 0.0), rtol: float = 1e-9) -> SimResult:
    """Simulate a move on the nonlinear model.

    Parameters
    ----------
    rig : Rig
        Masses, rigging length, gravity, damping; ``rig.rope_length_m`` is the initial L1.
    speed_m_s : array_like, 1-D
        Trolley speed command samples (m/s) at t = k cycle_s (as the drive receives it).
    cycle_s : float > 0
        Drive cycle (s).
    hoist_speed_m_s : array_like, optional
        Hoist speed command dL1/dt samples (m/s, positive pays out) at the same cycle; L1 starts
        at rig.rope_length_m. Exact: piecewise-constant hoist acceleration.
    rope_length_m : array_like, optional
        Alternatively, rope length samples (m); the hoist speed is taken as their per-cycle
        difference quotient (L1'' neglected inside a cycle). Give at most one of the two.
    settle_s : float > 0
        Window after the command ends over which residual sway is measured.
    initial_angles_rad, initial_rates_rad_s : pair of float
        Initial theta1, theta2 and rates (for free-swing studies).
    rtol : float
        Integrator relative tolerance (DOP853).

    Returns
    -------
    SimResult
    """
    Ts = finite_number("cycle_s", cycle_s, allowed="a finite number > 0", lo=0.0, lo_ok=False)
    settle_s = finite_number("settle_s", settle_s, allowed="a finite number > 0", lo=0.0, lo_ok=False)
    v_cmd = as_samples("speed_m_s", speed_m_s)
    if rope_length_m is not None and hoist_speed_m_s is not None:
        raise ConfigError("give rope_length_m or hoist_speed_m_s, not both")
    if rope_length_m is not None:
        L_s = as_samples("rope_length_m", rope_length_m)
        if np.any(L_s <= 0):
            raise ConfigError("rope_length_m samples must all be > 0")
        if abs(L_s[0] - rig.rope_length_m) > 1e-9:
            rig = Rig(rig.hook_mass_kg, rig.payload_mass_kg, float(L_s[0]), rig.rigging_length_m,
                      rig.gravity_m_s2, rig.damping_ratio)
        u_cmd = np.concatenate([np.diff(L_s) / Ts, [0.0]])
        hoist_stepwise = True
    else:
        u_cmd = np.zeros(1) if hoist_speed_m_s is None else as_samples("hoist_speed_m_s", hoist_speed_m_s)
        hoist_stepwise = False

    def last_active(a: np.ndarray) -> int:
        nz = np.nonzero(np.abs(a) > 0.0)[0]
        return 0 if len(nz) == 0 else int(nz[-1]) + 1

    n_end = max(last_active(v_cmd), last_active(u_cmd))
    command_end_s = n_end * Ts
    t_final = command_end_s + settle_s
    n_cycles = math.ceil(t_final / Ts - 1e-9) + 1
    trolley = _Motion(v_cmd, 0.0, Ts, n_cycles)
    if hoist_stepwise:
        u = np.concatenate([u_cmd, np.zeros(max(0, n_cycles + 1 - len(u_cmd)))])[: n_cycles + 1]
        hoist_L = rig.rope_length_m + np.concatenate([[0.0], np.cumsum(Ts * u[:-1])])

        def hoist_at(t):
            k = np.clip(np.floor(t / Ts + 1e-9).astype(int), 0, n_cycles)
            return hoist_L[k] + u[k] * (t - k * Ts), u[k], np.zeros_like(t)
    else:
        hoist = _Motion(u_cmd, rig.rope_length_m, Ts, n_cycles)
        hoist_at = hoist.at
        hoist_L = hoist.x
        u = hoist.v
    if np.any(hoist_L <= 0.05):
        raise ConfigError("the hoist command shortens the rope to <= 0.05 m; allowed: L1 > 0.05 m throughout")

    m1, m2, L2, g = rig.hook_mass_kg, rig.payload_mass_kg, rig.rigging_length_m, rig.gravity_m_s2
    single = rig.is_single_pendulum
    zeta = rig.damping_ratio
    ctab = None if single else _damping_table(rig, hoist_L)
    # Per-cycle constants: trolley acceleration a[k], hoist L1[k], L1'[k], L1''[k].
    a_tr = trolley.a[:n_cycles]
    u_k = u[:n_cycles]
    L_k = hoist_L[:n_cycles]
    al_k = np.zeros(n_cycles) if hoist_stepwise else np.diff(u)[:n_cycles] / Ts

    def rhs(t, y, k_lo, k_hi):
        # inside segment cycles [k_lo, k_hi): accelerations are constant over each cycle k
        k = min(max(int(t / Ts), k_lo), k_hi - 1)
        tau = t - k * Ts
        a, alpha = a_tr[k], al_k[k]
        L1 = L_k[k] + u_k[k] * tau + 0.5 * alpha * tau * tau
        L1d = u_k[k] + alpha * tau
        th1, w1 = y[0], y[2]
        s1, c1 = math.sin(th1), math.cos(th1)
        if single:
            dw1 = -(a * c1 + 2.0 * L1d * w1 + g * s1) / L1 - 2.0 * zeta * math.sqrt(g / L1) * w1
            return [w1, w1, dw1, dw1]
        th2, w2 = y[1], y[3]
        s2, c2 = math.sin(th2), math.cos(th2)
        sD, cD = math.sin(th1 - th2), math.cos(th1 - th2)
        M11 = (m1 + m2) * L1 * L1
        M12 = m2 * L1 * L2 * cD
        M22 = m2 * L2 * L2
        f1 = -(m1 + m2) * L1 * (a * c1 + 2.0 * L1d * w1 + g * s1) - m2 * L1 * L2 * w2 * w2 * sD
        f2 = -m2 * L2 * (a * c2 + alpha * sD + 2.0 * L1d * w1 * cD - L1 * w1 * w1 * sD + g * s2)
        if ctab is not None:
            grid, table = ctab
            if len(grid) == 1:
                C = table[0]
            else:
                j = min(max(int(np.searchsorted(grid, L1)) - 1, 0), len(grid) - 2)
                f = (L1 - grid[j]) / (grid[j + 1] - grid[j])
                C = table[j] + f * (table[j + 1] - table[j])
            f1 -= C[0, 0] * w1 + C[0, 1] * w2
            f2 -= C[1, 0] * w1 + C[1, 1] * w2
        det = M11 * M22 - M12 * M12
        return [w1, w2, (M22 * f1 - M12 * f2) / det, (M11 * f2 - M12 * f1) / det]

    # Output grid: the drive cycle, subdivided to <= 10 ms.
    sub = max(1, math.ceil(Ts / _MAX_OUTPUT_STEP_S - 1e-9))
    dt_out = Ts / sub
    n_out = math.floor(t_final / dt_out + 1e-9) + 1
    t_out = np.arange(n_out) * dt_out

    # Segments: where both accelerations hold constant for many cycles (ramps, plateaus, rest)
    # an adaptive DOP853 run covers the whole stretch; where they change every cycle (S-curves,
    # shaped or filtered commands) a classical RK4 steps through each cycle, whose acceleration
    # is constant, with omega_max h <= 0.02 (local error ~ (omega h)^5 / 120 < 3e-11).
    change = (np.diff(a_tr) != 0.0) | (np.diff(al_k) != 0.0)
    if hoist_stepwise:
        change |= np.diff(u_k) != 0.0
    bounds = np.concatenate([[0], np.nonzero(change)[0] + 1, [n_cycles]])
    L_min = float(np.min(hoist_L))
    omega_max = 1.2 * Rig(m1, m2, L_min, L2, g, 0.0).modes()[-1].omega_rad_s
    n_rk = sub * max(1, math.ceil(Ts * omega_max / (0.02 * sub)))

    th0 = [float(v) for v in initial_angles_rad]
    w0 = [float(v) for v in initial_rates_rad_s]
    if single:
        th0[1], w0[1] = th0[0], w0[0]
    y = np.array([th0[0], th0[1], w0[0], w0[1]])
    Y = np.empty((n_out, 4))
    out_index = 0

    def rk4_cycle(y, k):
        nonlocal out_index
        h = Ts / n_rk
        t = k * Ts
        for i in range(n_rk):
            if i % (n_rk // sub) == 0 and out_index < n_out and abs(t_out[out_index] - t) < 1e-9:
                Y[out_index] = y
                out_index += 1
            k1 = rhs(t, y, k, k + 1)
            k2 = rhs(t + 0.5 * h, [y[j] + 0.5 * h * k1[j] for j in range(4)], k, k + 1)
            k3 = rhs(t + 0.5 * h, [y[j] + 0.5 * h * k2[j] for j in range(4)], k, k + 1)
            k4 = rhs(t + h, [y[j] + h * k3[j] for j in range(4)], k, k + 1)
            y = [y[j] + h / 6.0 * (k1[j] + 2.0 * k2[j] + 2.0 * k3[j] + k4[j]) for j in range(4)]
            t += h
        return y

    for b0, b1 in zip(bounds[:-1], bounds[1:], strict=True):
        t0, t1 = b0 * Ts, min(b1 * Ts, t_final)
        if t1 <= t0:
            continue
        if b1 - b0 < 8 and b1 * Ts <= t_final + 1e-12:
            for k in range(int(b0), int(b1)):
                y = rk4_cycle(y, k)
            continue
        mask = (t_out >= t0 - 1e-12) & (t_out < t1 - 1e-12)
        if b1 >= n_cycles:
            mask |= np.abs(t_out - t1) <= 1e-12
        t_eval = np.clip(np.concatenate([t_out[mask], [t1]]), t0, t1)
        t_eval = t_eval[np.concatenate([np.diff(t_eval) > 0, [True]])]
        sol = solve_ivp(rhs, (t0, t1), y, method="DOP853", rtol=rtol, atol=1e-12,
                        t_eval=t_eval, args=(int(b0), int(b1)))
        if not sol.success:  # pragma: no cover - integrator failure is a bug, not user input
            raise RuntimeError(f"integration failed at t = {t0:.3f} s: {sol.message}")
        n_mask = int(mask.sum())
        Y[mask] = sol.y[:, :n_mask].T
        out_index = int(np.nonzero(mask)[0][-1]) + 1 if n_mask else out_index
        y = sol.y[:, -1]
    if n_out - out_index > 1:  # pragma: no cover - bookkeeping bug, not user input
        raise RuntimeError(f"simulation filled {out_index} of {n_out} output samples")
    if out_index < n_out:  # the final sample when the last stretch was stepped by RK4
        Y[out_index] = y
    x_t, v_t, _ = trolley.at(t_out)
    L_t, u_t, _ = hoist_at(t_out)
    th1, th2 = Y[:, 0], Y[:, 1]
    hook = L_t * np.sin(th1)
    payload = hook + (L2 * np.sin(th2) if (not single or m2 == 0.0) else 0.0)
    return SimResult(t_out, th1, th2, Y[:, 2], Y[:, 3], hook, payload, x_t, v_t, L_t, u_t, command_end_s, settle_s)
