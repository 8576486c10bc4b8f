"""Nonlinear planar dynamics of the hook and payload under a moving trolley and a moving hoist.

Geometry (y up): trolley at (x, 0); hook r1 = (x + L1 s1, -L1 c1); payload
r2 = r1 + (L2 s2, -L2 c2), with s_i = sin(theta_i), c_i = cos(theta_i). The trolley position
x(t) and the rope length L1(t) are prescribed (the drives follow their commands); L2 is fixed.

Derivation (Lagrange's equations for the rheonomic generalized coordinates q = [theta1, theta2]).
With r_k'' = J_k q'' + h_k, the equations sum_k m_k J_k^T (J_k q'' + h_k) = sum_k J_k^T F_k + Q_d
(F_k = (0, -m_k g), ideal rope constraints) give, with D = theta1 - theta2::

    (m1 + m2) L1^2 theta1'' + m2 L1 L2 cos D theta2''
        = -(m1 + m2) L1 (x'' c1 + 2 L1' theta1' + g s1) - m2 L1 L2 theta2'^2 sin D - (C q')_1

    m2 L1 L2 cos D theta1'' + m2 L2^2 theta2''
        = -m2 L2 (x'' c2 + L1'' sin D + 2 L1' theta1' cos D - L1 theta1'^2 sin D + g s2) - (C q')_2

L1'' drops out of the first equation (radial acceleration of the hook does not swing it) but not
the second: hoisting accelerates the hook along the rope, which the payload feels sideways. The
hoist term 2 L1' theta1' is the Coriolis effect that makes sway grow while lowering and shrink
while lifting. At small angles and constant L1 the equations reduce to the linear model of
:mod:`stillhook.model.rig`. Damping C is the rig's modal damping matrix at the current rope length.

A single pendulum (no payload mass or no rigging) keeps only theta1 with the total hanging mass:
theta1'' = -(x'' c1 + 2 L1' theta1' + g s1)/L1 - 2 zeta w theta1'; a massless payload hangs in line.

The trolley follows the sampled speed command with linear interpolation between samples, so the
trolley acceleration is piecewise constant over each drive cycle; likewise the hoist
(:mod:`stillhook.sim.motion`). The equations are written once in :mod:`stillhook.sim.equations`;
:mod:`stillhook.sim.stepping` integrates them by classical RK4 through each drive cycle, compiled
(:mod:`stillhook.sim.kernel`) or in numpy, for one run or a batch of rigs and commands at once
(:func:`simulate_batch`).

Notes
-----
Equations of the double pendulum: Kibble & Berkshire, *Classical Mechanics*, 5th ed., 2004;
the moving-support and variable-length terms follow from the same Lagrangian (derived here).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.checks import MAX_SIM_SAMPLES, check_quantity, check_work, finite_number
from stillhook.errors import ConfigError
from stillhook.model.rig import Rig, mode_frequencies_rad_s
from stillhook.sim.motion import MIN_ROPE_LENGTH_M, Track, as_samples, command_end_index, cycles_needed
from stillhook.sim.stepping import StepPlan, run_steps

__all__ = ["SETTLE_WINDOW_S", "SimResult", "mechanical_energy_j", "simulate", "simulate_batch", "step_rad_for",
           "time_within_s"]

#: Residual sway is measured over this many seconds after the command ends (the documented metric).
SETTLE_WINDOW_S = 20.0
#: Output sample spacing limit (s): fine enough to catch the peak of a 2 Hz sway within 0.2 % (1 - cos(pi 2 Hz 0.01 s)).
_MAX_OUTPUT_STEP_S = 0.01
#: Headroom on the highest mode frequency at the shortest rope when sizing the RK4 step (large angles
#: and the hoist's Coriolis term raise the local frequency a little).
_OMEGA_HEADROOM = 1.2


@dataclass(frozen=True)
class SimResult:
    """Time series and metrics of one simulated move.

    Attributes
    ----------
    t_s : ndarray
        Output times (s), uniform, from 0 to command_end_s + settle_s.
    theta1_rad, theta2_rad, theta1_rate_rad_s, theta2_rate_rad_s : ndarray
        Rope and rigging angles from vertical and their rates.
    hook_offset_m, payload_offset_m : ndarray
        Horizontal offsets of hook and payload from the trolley (m), signed.
    trolley_position_m, trolley_speed_m_s, rope_length_m, rope_speed_m_s : ndarray
    command_end_s : float
        Time the trolley and hoist commands are both back at rest for good.
    settle_s : float
        Length of the residual-sway window after command_end_s.
    """

    t_s: np.ndarray
    theta1_rad: np.ndarray
    theta2_rad: np.ndarray
    theta1_rate_rad_s: np.ndarray
    theta2_rate_rad_s: np.ndarray
    hook_offset_m: np.ndarray
    payload_offset_m: np.ndarray
    trolley_position_m: np.ndarray
    trolley_speed_m_s: np.ndarray
    rope_length_m: np.ndarray
    rope_speed_m_s: np.ndarray
    command_end_s: float
    settle_s: float

    def _during(self) -> np.ndarray:
        return self.t_s <= self.command_end_s + 1e-12

    def _after(self) -> np.ndarray:
        return (self.t_s > self.command_end_s + 1e-12) & (self.t_s <= self.command_end_s + self.settle_s + 1e-9)

    @property
    def peak_payload_offset_m(self) -> float:
        """Peak |payload offset from the trolley| while the command runs (m)."""
        return float(np.max(np.abs(self.payload_offset_m[self._during()])))

    @property
    def residual_payload_sway_m(self) -> float:
        """Residual sway: peak |payload offset| in the settle_s seconds after the command ends (m)."""
        return float(np.max(np.abs(self.payload_offset_m[self._after()])))

    @property
    def residual_hook_sway_m(self) -> float:
        """Peak |hook offset| in the settle_s seconds after the command ends (m)."""
        return float(np.max(np.abs(self.hook_offset_m[self._after()])))

    def settle_time_s(self, threshold_m: float) -> float:
        """Time from t = 0 until |payload offset| stays at or below threshold_m (s).

        Returns ``math.inf`` when the payload is still outside the threshold at the end of the
        simulated window.
        """
        return time_within_s(self.t_s, np.abs(self.payload_offset_m), threshold_m)

    def metrics(self) -> dict:
        """JSON-ready metrics."""
        return {
            "command_end_s": self.command_end_s,
            "peak_payload_offset_m": self.peak_payload_offset_m,
            "residual_payload_sway_m": self.residual_payload_sway_m,
            "residual_hook_sway_m": self.residual_hook_sway_m,
            "settle_window_s": self.settle_s,
        }


def time_within_s(t_s: np.ndarray, error_m: np.ndarray, threshold_m: float) -> float:
    """First time from which error_m stays <= threshold_m (s); ``math.inf`` if it is outside at the end."""
    outside = np.nonzero(error_m > threshold_m)[0]
    if len(outside) == 0:
        return 0.0
    if outside[-1] == len(t_s) - 1:
        return math.inf
    return float(t_s[outside[-1] + 1])


def step_rad_for(rtol: float) -> float:
    """RK4 step w_max h (rad) for a requested relative tolerance.

    RK4's local error on an oscillator is about (w h)^5 / 120 of the amplitude: w h = 0.02 gives
    3e-11 at rtol = 1e-9, and the step scales as rtol^(1/5) from there, within [0.005, 0.05].
    """
    rtol = finite_number("rtol", rtol, allowed="a finite number > 0", lo=0.0, lo_ok=False)
    return min(0.05, max(0.005, 0.02 * (rtol / 1e-9) ** 0.2))


def _as_list(name: str, values, kind) -> list:
    if isinstance(values, kind):
        return [values]
    out = list(values)
    if not out:
        raise ConfigError(f"{name} must not be empty")
    return out


def _steps_per_cycle(par: np.ndarray, single: np.ndarray, L_min: np.ndarray, Ts: float, sub: int,
                     step_rad: float) -> np.ndarray:
    """RK4 steps per cycle of each run: w_max h <= step_rad, w_max the highest mode at the shortest rope."""
    m1, m2, L2, g = par[:, 0], par[:, 1], par[:, 2], par[:, 3]
    omega = np.sqrt(g / L_min)  # single pendulum
    for g_value in np.unique(g[single == 0]):
        k = (single == 0) & (g == g_value)
        omega[k] = mode_frequencies_rad_s(m1[k], m2[k], L_min[k], L2[k], g_value)[:, 1]
    n = np.ceil(Ts * _OMEGA_HEADROOM * omega / (step_rad * sub) - 1e-9).astype(np.int64)
    return sub * np.maximum(1, n)


class _Tables:
    """Distinct drive tables of a batch, each stored once and shared between runs by offset."""

    def __init__(self):
        self.tracks, self.offsets, self.index, self.size, self.lowest = [], [], {}, 0, {}

    def add(self, key, make) -> int:
        if key not in self.index:
            track = make()
            self.index[key] = len(self.tracks)
            self.tracks.append(track)
            self.offsets.append(self.size)
            self.size += len(track.accel_m_s2)
        return self.index[key]


def simulate_batch(rigs, speeds_m_s, cycle_s: float, *, rope_length_m=None, hoist_speed_m_s=None,
                   settle_s: float = SETTLE_WINDOW_S, initial_angles_rad=(0.0, 0.0),
                   initial_rates_rad_s=(0.0, 0.0), rtol: float = 1e-9, engine: str = "auto") -> list[SimResult]:
    """Simulate several moves on the nonlinear model at once: rigs x commands, paired or broadcast.

    Parameters
    ----------
    rigs : Rig or sequence of Rig
    speeds_m_s : sequence of 1-D array_like
        Trolley speed commands (m/s) sampled at cycle_s. With one rig and several commands (or one
        command and several rigs) the single one is used for every run; otherwise run r simulates
        rigs[r] under speeds_m_s[r].
    settle_s : float > 0 or sequence of float > 0
        As in :func:`simulate`; one for every run or one per run.
    cycle_s, rope_length_m, hoist_speed_m_s, initial_angles_rad, initial_rates_rad_s
        As in :func:`simulate`, shared by every run.
    rtol : float > 0
        Relative tolerance; sets the RK4 step (:func:`step_rad_for`).
    engine : {"auto", "compiled", "numpy"}
        Compiled kernel (when a C compiler works; "auto" falls back to numpy) or the numpy engine.

    Returns
    -------
    list of SimResult
        One per run, in order; each equals what :func:`simulate` returns for that run alone.
    """
    Ts = check_quantity("cycle_s", cycle_s)
    step_rad = step_rad_for(rtol)
    rigs = _as_list("rigs", rigs, Rig)
    cmds = [as_samples("speed_m_s", v) for v in _as_list("speeds_m_s", speeds_m_s, np.ndarray)]
    if len(rigs) != len(cmds) and 1 not in (len(rigs), len(cmds)):
        raise ConfigError(f"{len(rigs)} rigs and {len(cmds)} commands: give one of either or as many of both")
    n_runs = max(len(rigs), len(cmds))
    if np.ndim(settle_s) == 1 and len(settle_s) not in (1, n_runs):
        raise ConfigError(f"settle_s has {len(settle_s)} values for {n_runs} runs; allowed: one, or one per run")
    settles = [check_quantity("settle_s", v) for v in np.broadcast_to(np.asarray(settle_s, dtype=object), (n_runs,))]
    for r in range(n_runs):  # refused before any integration: the recording of each run is bounded
        check_work("drive cycles to simulate (command and settle window)", len(cmds[r % len(cmds)]) + settles[r] / Ts,
                   MAX_SIM_SAMPLES, hint="use a shorter move or a longer drive cycle (limit: "
                   "stillhook.checks.MAX_SIM_SAMPLES)")
    hoist = _hoist_input(rope_length_m, hoist_speed_m_s, Ts)
    th0 = [float(v) for v in initial_angles_rad]
    w0 = [float(v) for v in initial_rates_rad_s]
    sub = max(1, math.ceil(Ts / _MAX_OUTPUT_STEP_S - 1e-9))
    ends = [command_end_index(c) for c in cmds]
    runs = [_setup_run(rigs[r % len(rigs)], r % len(cmds), cmds[r % len(cmds)], ends[r % len(cmds)], hoist, Ts,
                       settles[r], sub) for r in range(n_runs)]
    return _integrate(runs, hoist, Ts, sub, step_rad, th0, w0, engine)


def _hoist_input(rope_length_m, hoist_speed_m_s, Ts: float):
    """("lengths", L samples) | ("speed", u samples) | ("still", None), checked."""
    if rope_length_m is not None and hoist_speed_m_s is not None:
        raise ConfigError("give rope_length_m or hoist_speed_m_s, not both")
    if rope_length_m is not None:
        L_s = as_samples("rope_length_m", rope_length_m)
        if np.any(L_s <= 0):
            raise ConfigError("rope_length_m samples must all be > 0")
        return "lengths", L_s, command_end_index(np.concatenate([np.diff(L_s), [0.0]]))
    if hoist_speed_m_s is not None:
        u = as_samples("hoist_speed_m_s", hoist_speed_m_s)
        return "speed", u, command_end_index(u)
    return "still", None, 0


def _setup_run(rig: Rig, cmd_index: int, cmd: np.ndarray, cmd_end: int, hoist, Ts: float, settle_s: float,
               sub: int) -> dict:
    kind, samples, hoist_end = hoist
    if kind == "lengths" and abs(samples[0] - rig.rope_length_m) > 1e-9:
        rig = Rig(rig.hook_mass_kg, rig.payload_mass_kg, float(samples[0]), rig.rigging_length_m,
                  rig.gravity_m_s2, rig.damping_ratio)
    command_end_s = max(cmd_end, hoist_end) * Ts
    t_final = command_end_s + settle_s
    dt_out = Ts / sub
    return {"rig": rig, "cmd_index": cmd_index, "cmd": cmd, "n": cycles_needed(t_final, Ts),
            "n_out": math.floor(t_final / dt_out + 1e-9) + 1, "command_end_s": command_end_s, "settle_s": settle_s}


def _hoist_track(hoist, Ts: float, n: int) -> Track:
    """Rope length change from its start (m): one table per command, shared by every rig's start length."""
    kind, samples, _ = hoist
    if kind == "lengths":
        return Track.from_positions(samples - samples[0], Ts, n)
    if kind == "speed":
        return Track.from_speed(samples, 0.0, Ts, n)
    return Track.still(0.0, Ts, n)


def _integrate(runs, hoist, Ts, sub, step_rad, th0, w0, engine) -> list[SimResult]:
    trolley, rope = _Tables(), _Tables()
    tr_i, ho_i, L_min = [], [], []
    for run in runs:
        rig, n = run["rig"], run["n"]
        tr_i.append(trolley.add((run["cmd_index"], n), lambda run=run: Track.from_speed(run["cmd"], 0.0, Ts, run["n"])))
        ho_i.append(rope.add(n, lambda n=n: _hoist_track(hoist, Ts, n)))
        if ho_i[-1] not in rope.lowest:
            rope.lowest[ho_i[-1]] = rope.tracks[ho_i[-1]].min_m()
        L_min.append(rig.rope_length_m + rope.lowest[ho_i[-1]])
        if L_min[-1] <= MIN_ROPE_LENGTH_M:
            raise ConfigError(f"the hoist command shortens the rope to <= {MIN_ROPE_LENGTH_M} m; "
                              f"allowed: L1 > {MIN_ROPE_LENGTH_M} m throughout")
    rigs = [run["rig"] for run in runs]
    single = np.array([rig.is_single_pendulum for rig in rigs], dtype=np.int64)
    par = np.array([[r.hook_mass_kg, r.payload_mass_kg, r.rigging_length_m, r.gravity_m_s2, r.damping_ratio]
                    for r in rigs])
    y0 = np.array([[th0[0], th0[0] if s else th0[1], w0[0], w0[0] if s else w0[1]] for s in single])
    tr_tracks = [trolley.tracks[i] for i in tr_i]
    ho_tracks = [rope.tracks[i] for i in ho_i]
    plan = StepPlan(
        cycle_s=Ts, sub=sub,
        par=par, single=single, n_rk=_steps_per_cycle(par, single, np.array(L_min), Ts, sub, step_rad),
        n_out=np.array([run["n_out"] for run in runs], dtype=np.int64),
        tr_a=np.concatenate([t.accel_m_s2 for t in trolley.tracks]),
        tr_off=np.array([trolley.offsets[i] for i in tr_i], dtype=np.int64),
        tr_n=np.array([len(t.accel_m_s2) for t in tr_tracks], dtype=np.int64),
        ho_L0=np.array([r.rope_length_m for r in rigs]),
        ho_L=np.concatenate([t.start_m[:-1] for t in rope.tracks]),
        ho_v=np.concatenate([t.speed_m_s[:-1] for t in rope.tracks]),
        ho_a=np.concatenate([t.accel_m_s2 for t in rope.tracks]),
        ho_off=np.array([rope.offsets[i] for i in ho_i], dtype=np.int64),
        ho_n=np.array([len(t.accel_m_s2) for t in ho_tracks], dtype=np.int64),
        y0=y0)
    Y, _ = run_steps(plan, engine)
    shared: dict = {}
    out = []
    for r, run in enumerate(runs):
        row = int(plan.out_off[r])
        out.append(_result(run, Y[row:row + run["n_out"]], (tr_i[r], tr_tracks[r]), (ho_i[r], ho_tracks[r]),
                           Ts / sub, shared))
    return out


def _read_only(*arrays):
    for a in arrays:
        a.flags.writeable = False
    return arrays


def _result(run: dict, Y: np.ndarray, trolley, rope, dt_out: float, shared: dict) -> SimResult:
    """SimResult of one run; time, trolley and rope-change series are shared (read-only) between runs."""
    rig, n_out = run["rig"], run["n_out"]
    if ("t", n_out) not in shared:
        shared["t", n_out] = _read_only(np.arange(n_out) * dt_out)[0]
    t_out = shared["t", n_out]
    if ("trolley", trolley[0], n_out) not in shared:
        shared["trolley", trolley[0], n_out] = _read_only(*trolley[1].at(t_out))
    if ("rope", rope[0], n_out) not in shared:
        shared["rope", rope[0], n_out] = _read_only(*rope[1].at(t_out))
    x_t, v_t = shared["trolley", trolley[0], n_out]
    dL_t, u_t = shared["rope", rope[0], n_out]
    L_t = rig.rope_length_m + dL_t
    th1, th2 = Y[:, 0], Y[:, 1]
    hook = L_t * np.sin(th1)
    L2, single = rig.rigging_length_m, rig.is_single_pendulum
    payload = hook + (L2 * np.sin(th2) if (not single or rig.payload_mass_kg == 0.0) else 0.0)
    return SimResult(t_out, th1, th2, Y[:, 2].copy(), Y[:, 3].copy(), hook, payload, x_t, v_t, L_t, u_t,
                     run["command_end_s"], run["settle_s"])


def simulate(rig: Rig, speed_m_s, cycle_s: float, *, rope_length_m=None, hoist_speed_m_s=None,
             settle_s: float = SETTLE_WINDOW_S, initial_angles_rad=(0.0, 0.0),
             initial_rates_rad_s=(0.0, 0.0), rtol: float = 1e-9, engine: str = "auto") -> SimResult:
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
    rtol : float > 0
        Relative tolerance; sets the RK4 step (:func:`step_rad_for`: w_max h = 0.02 at 1e-9).
    engine : {"auto", "compiled", "numpy"}
        See :func:`simulate_batch`.

    Returns
    -------
    SimResult
    """
    return simulate_batch(rig, [as_samples("speed_m_s", speed_m_s)], cycle_s, rope_length_m=rope_length_m,
                          hoist_speed_m_s=hoist_speed_m_s, settle_s=settle_s, initial_angles_rad=initial_angles_rad,
                          initial_rates_rad_s=initial_rates_rad_s, rtol=rtol, engine=engine)[0]


def mechanical_energy_j(rig: Rig, result: SimResult) -> np.ndarray:
    """Kinetic plus potential energy of hook and payload (J), potential zero at the trolley height.

    T = 1/2 m1 |r1'|^2 + 1/2 m2 |r2'|^2,  V = m1 g y1 + m2 g y2, with the velocities of the
    module docstring (trolley and hoist speeds included).
    """
    m1, m2, L2, g = rig.hook_mass_kg, rig.payload_mass_kg, rig.rigging_length_m, rig.gravity_m_s2
    th1, th2, w1, w2 = result.theta1_rad, result.theta2_rad, result.theta1_rate_rad_s, result.theta2_rate_rad_s
    L1, L1d, xd = result.rope_length_m, result.rope_speed_m_s, result.trolley_speed_m_s
    vx1 = xd + L1d * np.sin(th1) + L1 * np.cos(th1) * w1
    vy1 = -L1d * np.cos(th1) + L1 * np.sin(th1) * w1
    y1 = -L1 * np.cos(th1)
    if rig.is_single_pendulum:
        m = m1 + (m2 if L2 == 0.0 else 0.0)
        return 0.5 * m * (vx1**2 + vy1**2) + m * g * y1
    vx2 = vx1 + L2 * np.cos(th2) * w2
    vy2 = vy1 + L2 * np.sin(th2) * w2
    y2 = y1 - L2 * np.cos(th2)
    return 0.5 * m1 * (vx1**2 + vy1**2) + 0.5 * m2 * (vx2**2 + vy2**2) + m1 * g * y1 + m2 * g * y2
