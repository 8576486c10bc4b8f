"""Closed-loop co-simulation, one drive cycle at a time: controller -> speed command -> speed loop -> rig.

Open-loop moves prescribe the trolley's motion (:mod:`stillhook.sim.dynamics`); a feedback controller
computes each cycle's command from the measured sway, so here the trolley's speed v is a state::

    v' = (u[k] - v) / tau                 the drive's speed loop (first-order lag), u held over cycle k
    x' = v

and the rig follows the large-angle equations written once in :mod:`stillhook.sim.equations` (the
batch engine's) with the trolley acceleration a = v', the hoist's piecewise-linear speed, and a
horizontal force F(t) on the payload, which adds the generalized forces Q1 = F L1 cos(theta1),
Q2 = F L2 cos(theta2) (virtual work of F on x2 = x + L1 sin(theta1) + L2 sin(theta2)). One cycle is
integrated by classical RK4 with w_max h <= 0.02 and h <= tau / 5.

The sensor reads the rig each cycle (:data:`SENSOR_KINDS`), adds Gaussian noise (fixed seed), rounds
to its resolution and is ``delay_cycles`` cycles late. :func:`cycle_step` is the plant step alone, kept
small and separate so that it can move onto another integration engine unchanged in its contract.

Notes
-----
Equations of motion: those of :mod:`stillhook.sim.dynamics` (Kibble & Berkshire, *Classical
Mechanics*, 5th ed., 2004, double pendulum; moving support, variable length and the external force
derived from the same Lagrangian here). RK4: Butcher, *Numerical Methods for Ordinary Differential
Equations*, 2nd ed., 2008 (from memory).
"""

from __future__ import annotations

import math
from collections import deque
from dataclasses import dataclass

import numpy as np

from stillhook.checks import finite_number
from stillhook.errors import ConfigError
from stillhook.model.rig import Rig
from stillhook.model.sensors import SENSOR_KINDS
from stillhook.sim.dynamics import SETTLE_WINDOW_S, SimResult, time_within_s
from stillhook.sim.equations import numpy_rhs

__all__ = ["ClosedLoopResult", "PlantState", "REST_BAND_M", "Sensor", "cycle_step",
           "run_closed_loop", "sensor_reading"]

#: At-rest band of the settle time: |trolley position + payload offset - target| <= this (m); our choice.
REST_BAND_M = 0.01


@dataclass(frozen=True)
class Sensor:
    """What the controller is given each cycle: ``kind`` with noise (sd), resolution and a delay."""

    kind: str = "hook_angle_rad"
    noise_sd: float = 0.0
    resolution: float = 0.0
    delay_cycles: int = 0
    seed: int = 0

    def __post_init__(self):
        if self.kind not in SENSOR_KINDS:
            raise ConfigError(f"sensor kind {self.kind!r} is not allowed; allowed: " + ", ".join(SENSOR_KINDS))


@dataclass
class PlantState:
    """[theta1, theta2, theta1', theta2'] (rad, rad/s), trolley x (m), v (m/s), rope length L1 (m)."""

    y: list
    x_m: float
    v_m_s: float
    rope_length_m: float


def _force_rates(rig: Rig, th1: float, th2: float, L1: float, F: float) -> tuple[float, float]:
    """theta'' added by a horizontal force F (N) on the payload: M q'' = Q, Q = F [L1 cos th1, L2 cos th2].

    The equations of motion are linear in the generalized forces, so this term adds to the shared
    right-hand side (:func:`stillhook.sim.equations.numpy_rhs`) without touching it.
    """
    if F == 0.0:
        return 0.0, 0.0
    m1, m2, L2 = rig.hook_mass_kg, rig.payload_mass_kg, rig.rigging_length_m
    c1 = math.cos(th1)
    if rig.is_single_pendulum:
        dw = F * c1 / ((m1 + m2) * L1)
        return dw, dw
    c2, cD = math.cos(th2), math.cos(th1 - th2)
    M11, M12, M22 = (m1 + m2) * L1 * L1, m2 * L1 * L2 * cD, m2 * L2 * L2
    Q1, Q2 = F * L1 * c1, F * L2 * c2
    det = M11 * M22 - M12 * M12
    return (M22 * Q1 - M12 * Q2) / det, (M11 * Q2 - M12 * Q1) / det


def cycle_step(rig: Rig, state: PlantState, u_m_s: float, cycle_s: float, tau_s: float, *,
               hoist_m_s: tuple[float, float] = (0.0, 0.0), force_n: float = 0.0, substeps: int = 1) -> PlantState:
    """Advance the plant one drive cycle under the held speed command ``u_m_s`` (module docstring).

    Parameters
    ----------
    rig : Rig
        Masses, rigging, gravity, damping (its rope length is not used: ``state.rope_length_m`` is).
    hoist_m_s : (float, float)
        Hoist speed at the start and end of the cycle (linear in between, m/s, positive pays out).
    force_n : float
        Horizontal force on the payload over the cycle (N).
    substeps : int >= 1
        RK4 steps per cycle.
    """
    h = cycle_s / substeps
    u0, u1 = hoist_m_s
    alpha = (u1 - u0) / cycle_s
    rhs = numpy_rhs(rig.is_single_pendulum)
    consts = (rig.hook_mass_kg, rig.payload_mass_kg, rig.rigging_length_m, rig.gravity_m_s2, rig.damping_ratio)
    s = list(state.y) + [state.x_m, state.v_m_s]
    L0 = state.rope_length_m

    def f(t, z):
        a_tr = (u_m_s - z[5]) / tau_s
        L1 = L0 + u0 * t + 0.5 * alpha * t * t
        d1, d2, dw1, dw2 = rhs(z[0], z[1], z[2], z[3], a_tr, L1, u0 + alpha * t, alpha, *consts)
        e1, e2 = _force_rates(rig, z[0], z[1], L1, force_n)
        return (float(d1), float(d2), float(dw1) + e1, float(dw2) + e2, z[5], a_tr)

    t = 0.0
    for _ in range(substeps):
        k1 = f(t, s)
        k2 = f(t + 0.5 * h, [a + 0.5 * h * b for a, b in zip(s, k1, strict=True)])
        k3 = f(t + 0.5 * h, [a + 0.5 * h * b for a, b in zip(s, k2, strict=True)])
        k4 = f(t + h, [a + h * b for a, b in zip(s, k3, strict=True)])
        s = [a + h / 6.0 * (b + 2.0 * c + 2.0 * d + e) for a, b, c, d, e in zip(s, k1, k2, k3, k4, strict=True)]
        t += h
    return PlantState(s[:4], s[4], s[5], L0 + u0 * cycle_s + 0.5 * alpha * cycle_s**2)


def sensor_reading(rig: Rig, state: PlantState, kind: str) -> float:
    """The true (noiseless, undelayed) reading of ``kind`` (rad or m, offsets from the trolley)."""
    th1, th2 = state.y[0], state.y[1]
    hook = state.rope_length_m * math.sin(th1)
    if kind == "hook_angle_rad":
        return th1
    if kind == "payload_angle_rad":
        return th2
    if kind == "hook_offset_m":
        return hook
    single = rig.is_single_pendulum
    return hook + (rig.rigging_length_m * math.sin(th2) if (not single or rig.payload_mass_kg == 0.0) else 0.0)


@dataclass(frozen=True)
class ClosedLoopResult:
    """A closed-loop run: the sway record (:class:`SimResult`, one sample per cycle) and the commands.

    ``sim.command_end_s`` is when the operator's reference, the hoist and the disturbance have all
    ended; residual sway is measured in ``sim.settle_s`` seconds after it.
    """

    sim: SimResult
    command_m_s: np.ndarray
    accel_m_s2: np.ndarray
    target_m: float
    rest_band_m: float

    def metrics(self) -> dict:
        """Residual sway, settle time (None: not within ``rest_band_m`` of the target by the end), peak speed and
        acceleration the drive was asked for, end position error (trolley minus target)."""
        s = self.sim
        place = np.abs(s.trolley_position_m + s.payload_offset_m - self.target_m)
        settle = time_within_s(s.t_s, place, self.rest_band_m)
        return {"residual_payload_sway_m": s.residual_payload_sway_m,
                "settle_s": settle if math.isfinite(settle) else None,
                "peak_speed_m_s": float(np.max(np.abs(s.trolley_speed_m_s))),
                "peak_accel_m_s2": float(np.max(np.abs(self.accel_m_s2))),
                "end_error_m": float(s.trolley_position_m[-1] - self.target_m),
                "rest_band_m": self.rest_band_m}


def run_closed_loop(rig: Rig, reference_m_s, cycle_s: float, tau_s: float, controller=None, *,
                    sensor: Sensor = Sensor(), hoist_m_s=None, initial_angles_rad=(0.0, 0.0),
                    gust_n: float = 0.0, gust_s: float = 0.0, gust_start_s: float | None = None,
                    settle_s: float = SETTLE_WINDOW_S, rest_band_m: float = REST_BAND_M) -> ClosedLoopResult:
    """Run the reference move in closed loop on the nonlinear model.

    Parameters
    ----------
    rig : Rig
        ``rig.rope_length_m`` is the initial rope length.
    reference_m_s : 1-D array
        The operator's (shaped) speed command per cycle (m/s); its sum x cycle_s is the target.
    controller : callable ``(reading, rope_length_m, reference_m_s) -> u_m_s`` or None
        Called once per cycle; None passes the reference to the drive.
    sensor : Sensor
    hoist_m_s : 1-D array, optional
        Hoist speed per cycle (m/s), linear between samples.
    initial_angles_rad : (float, float)
        Load released with this sway (theta1, theta2).
    gust_n, gust_s : float
        Horizontal force (N) on the payload for gust_s seconds from ``gust_start_s`` (default: when
        the reference ends).
    settle_s : float > 0
        Window after the reference, hoist and gust have ended.
    """
    T = finite_number("cycle_s", cycle_s, allowed="a finite number > 0", lo=0.0, lo_ok=False)
    tau = finite_number("speed_loop_time_constant_s", tau_s, allowed="a finite number > 0", lo=0.0, lo_ok=False)
    ref = np.asarray(reference_m_s, dtype=float).reshape(-1)
    hoist = np.zeros(1) if hoist_m_s is None else np.asarray(hoist_m_s, dtype=float).reshape(-1)
    gust_n = finite_number("gust_n", gust_n, allowed="a finite number")
    gust_s = finite_number("gust_s", gust_s, allowed="a finite number >= 0", lo=0.0)
    ref_end = len(ref) * T
    g0 = ref_end if gust_start_s is None else float(gust_start_s)
    end_s = max(ref_end, len(hoist) * T, g0 + gust_s if gust_n != 0.0 else 0.0)
    n = math.ceil((end_s + settle_s) / T - 1e-9) + 1
    ref = np.concatenate([ref, np.zeros(n + 1 - len(ref))])[: n + 1]
    hoist = np.concatenate([hoist, np.zeros(n + 2 - len(hoist))])[: n + 2]
    L_min = float(rig.rope_length_m + min(0.0, np.min(np.cumsum(hoist) * T)))
    if L_min <= 0.05:
        raise ConfigError("the hoist command shortens the rope to <= 0.05 m; allowed: L1 > 0.05 m throughout")
    shortest = Rig(rig.hook_mass_kg, rig.payload_mass_kg, L_min, rig.rigging_length_m, rig.gravity_m_s2)
    w_max = 1.2 * shortest.modes()[-1].omega_rad_s
    sub = max(1, math.ceil(T * w_max / 0.02), math.ceil(5.0 * T / tau))
    th0 = [float(v) for v in initial_angles_rad]
    if rig.is_single_pendulum:
        th0[1] = th0[0]
    st = PlantState([th0[0], th0[1], 0.0, 0.0], 0.0, 0.0, rig.rope_length_m)
    rng = np.random.default_rng(sensor.seed)
    line: deque = deque()
    rec = np.empty((n, 8))
    cmd, acc = np.empty(n), np.empty(n)
    for k in range(n):
        true = sensor_reading(rig, st, sensor.kind)
        meas = true + (rng.normal(0.0, sensor.noise_sd) if sensor.noise_sd > 0 else 0.0)
        if sensor.resolution > 0:
            meas = sensor.resolution * math.floor(meas / sensor.resolution + 0.5)
        if k == 0:
            line.extend([meas] * sensor.delay_cycles)  # before the start the sensor read the initial sway
        line.append(meas)
        y = line.popleft()
        u = float(ref[k]) if controller is None else float(controller(y, st.rope_length_m, float(ref[k])))
        cmd[k], acc[k] = u, (u - st.v_m_s) / tau
        rec[k] = [*st.y, st.x_m, st.v_m_s, st.rope_length_m, hoist[k]]
        force = gust_n if g0 - 1e-9 <= k * T < g0 + gust_s - 1e-9 else 0.0
        st = cycle_step(rig, st, u, T, tau, hoist_m_s=(hoist[k], hoist[k + 1]), force_n=force, substeps=sub)
    t = np.arange(n) * T
    th1, th2, L1 = rec[:, 0], rec[:, 1], rec[:, 6]
    hook = L1 * np.sin(th1)
    single = rig.is_single_pendulum
    payload = hook + (rig.rigging_length_m * np.sin(th2) if (not single or rig.payload_mass_kg == 0.0) else 0.0)
    sim = SimResult(t, th1, th2, rec[:, 2], rec[:, 3], hook, payload, rec[:, 4], rec[:, 5], L1, rec[:, 7],
                    end_s, settle_s)
    return ClosedLoopResult(sim, cmd, acc, float(np.sum(reference_m_s) * T), float(rest_band_m))
