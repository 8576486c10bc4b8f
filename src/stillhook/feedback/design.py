"""Observer + state feedback per rope-length row: LQR and steady-state Kalman gains tuned to a damping target.

Per row (rope length L_r, payload mass m_d of ``[feedback] design_payload_mass_kg``):

Regulator. On the sampled plant z = [x_rig, dv, dp] (:mod:`stillhook.feedback.plant`; dv, dp are the
trolley's speed and position deviation caused by the feedback correction du) the LQR gain K minimizes

    J = sum_k  z' Q z + du^2,     Q = q_s (C_o' C_o + C_r' C_r / w_1^2) + w_p^2 e_p e_p'

with C_o the hook and payload offsets, C_r their rates, w_1 the low mode (rad/s) and w_p = w_1 / 3 the
bandwidth of the position return (our choice: slow beside the sway, so the return adds little sway).
Penalizing dp makes the loop return the trolley to the operator's reference path: the shaped command
still ends exactly at its target. q_s is the smallest weight (log scan, then bisection) that gives every
regulator pole a damping ratio >= ``target_damping_ratio``.

Observer. A steady-state Kalman filter (:func:`stillhook.feedback.riccati.kalman_predictor`) on [x_rig, v]
plus the sensor's delay line, with disturbance w (a horizontal acceleration of the load, variance
lambda R) and measurement noise R = noise_sd^2 + resolution^2 / 12; lambda is the smallest ratio that
gives every observer pole the same damping target. The step uses the current estimate
x^[k|k] = x^[k|k-1] + M (y[k] - C x^[k|k-1]) with M = P C' (C P C' + R)^-1 (the predictor gain is L = A M).

Both gains come from the discrete algebraic Riccati equation (:mod:`stillhook.feedback.riccati`,
scipy.linalg.solve_discrete_are); python-control's dlqr / dlqe are the tests' reference.

Why LQR/LQE tuned to a damping ratio rather than pole placement: a two-mode plant seen through one sensor
with a delay has more poles than a designer can sensibly place by hand, and placed poles carry no margin
guarantee; LQR keeps the whole state weighted (both modes, the drive, the position return) with one
knob, and the knob is set by the quantity an engineer specifies: the closed-loop damping ratio.

Notes
-----
LQR and the discrete Kalman filter: Franklin, Powell & Workman, *Digital Control of Dynamic Systems*,
3rd ed., 1998 (from memory); the current-estimator form is theirs. Observer + state feedback with an
inclinometer on a full-scale crane: Kim, Hong & Sul, Int. J. Control Autom. Syst. 2(4):435-449, 2004.
Gain scheduling by rope length: Ermidoro et al., Mechatronics 39:237-247, 2016.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.errors import ConfigError, DesignError
from stillhook.feedback.plant import DesignPlant, design_plant
from stillhook.feedback.riccati import kalman_predictor, lqr_gain
from stillhook.model.lookup import schedule_rows

__all__ = ["FeedbackDesign", "FeedbackRow", "MIN_MEASUREMENT_VARIANCE", "POSITION_BANDWIDTH_RATIO",
           "REACHABLE_FRACTION", "delayed_model", "design_feedback", "design_row",
           "min_damping_ratio", "regulator_weights", "row_rope_lengths_m"]

#: w_p = w_1 / POSITION_BANDWIDTH_RATIO (our choice, see the module docstring).
POSITION_BANDWIDTH_RATIO = 3.0
#: Floor of the measurement variance R (sensor unit^2) so that a noiseless sensor still gives a
#: regular Kalman problem; the tuned ratio lambda makes the result independent of it.
MIN_MEASUREMENT_VARIANCE = 1e-12
#: Log-scan of the tuning weights (decades), then bisection to this relative precision.
_SCAN_DECADES = (-6.0, 10.0)
_SCAN_POINTS = 17
_BISECT_STEPS = 16
#: Where the damping target is out of reach, tune to this fraction of the best damping found.
REACHABLE_FRACTION = 0.9


def min_damping_ratio(poles_z, cycle_s: float) -> float:
    """Least damping ratio of discrete poles: s = ln(z)/T, zeta = -Re s / |s| (1 for z = 0; < 0 if unstable)."""
    z = np.asarray(poles_z, dtype=complex).reshape(-1)
    z = z[np.abs(z) > 1e-12]
    if len(z) == 0:
        return 1.0
    s = np.log(z) / cycle_s
    return float(np.min(-s.real / np.abs(s)))


def delayed_model(plant: DesignPlant, delay_cycles: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(A, B, C, G) of [x_rig, v, m[k-1], ..., m[k-d]] with y[k] = m[k-d] (m = the undelayed reading)."""
    n = plant.n_rig + 1
    d = int(delay_cycles)
    A = np.zeros((n + d, n + d))
    A[:n, :n] = plant.Phi[:n, :n]
    B = np.zeros((n + d, 1))
    B[:n] = plant.Gamma[:n]
    G = np.zeros((n + d, 1))
    G[:n] = plant.G[:n]
    c = plant.C_sensor[:, :n]
    C = np.zeros((1, n + d))
    if d == 0:
        C[:, :n] = c
    else:
        A[n, :n] = c                        # m[k] enters the line
        for i in range(1, d):
            A[n + i, n + i - 1] = 1.0       # and moves one place per cycle
        C[0, n + d - 1] = 1.0
    return A, B, C, G


def _tune(gain_and_poles, target: float, cycle_s: float):
    """(log10 weight, gain, least damping, poles): the smallest weight on a log scan whose poles reach
    ``min(target, REACHABLE_FRACTION x the best damping on the scan)``, refined by bisection.

    Where the target is out of reach (a mode the sensor or the drive barely touches) the knee of the
    curve is taken, not the largest weight: past it the gains grow without buying damping.
    """
    def attempt(x):
        try:
            gain, poles = gain_and_poles(10.0**x)
        except (np.linalg.LinAlgError, ValueError):  # Riccati pencil on the unit circle: no answer here
            return None, None, -math.inf
        return gain, poles, min_damping_ratio(poles, cycle_s)

    xs = np.linspace(*_SCAN_DECADES, _SCAN_POINTS)
    scan = [attempt(x) for x in xs]
    zetas = [z for _g, _p, z in scan]
    if max(zetas) == -math.inf:
        raise DesignError("no Riccati solution over the whole weight scan; the sensor may not see the sway "
                          "(check [sensor] kind) or the rig may be degenerate")
    goal = min(target, REACHABLE_FRACTION * max(zetas))
    i = next(i for i, z in enumerate(zetas) if z >= goal)
    hit = (xs[i], scan[i][0], zetas[i], scan[i][1])
    if i == 0 or zetas[i - 1] == -math.inf:
        return hit
    lo, hi = xs[i - 1], xs[i]
    for _ in range(_BISECT_STEPS):
        mid = 0.5 * (lo + hi)
        g_mid, p_mid, z_mid = attempt(mid)
        if z_mid >= goal:
            hi, hit = mid, (mid, g_mid, z_mid, p_mid)
        else:
            lo = mid
    return hit


@dataclass(frozen=True, eq=False)
class FeedbackRow:
    """Gains of one rope-length row.

    Attributes
    ----------
    rope_length_m : float
    K : ndarray (1, n_rig + 2)
        du = -K [x^_rig, dv, dp].
    A_o, B_o, C_o, M, L : ndarray
        Observer model (:func:`delayed_model`), current-estimator gain M, predictor gain L = A_o M.
    sway_weight, noise_ratio : float
        The tuned q_s and lambda.
    regulator_damping_ratio, observer_damping_ratio : float
        Least damping ratio of the regulator poles and of the observer poles at the design rig.
    design_payload_mass_kg : float
        Payload mass of the design rig (the robust tuning may pick another mass than the project's).
    aggressiveness : float in [0, 1]
        Fraction of the damping target both weights were tuned to (1: the target; the robust tuning
        backs it off; 0 with ``feedback_on = False``).
    feedback_on : bool
        False: the robust tuning found no gain that passes the row's checks; K = 0 (shaper alone there).
    """

    rope_length_m: float
    plant: DesignPlant
    K: np.ndarray
    A_o: np.ndarray
    B_o: np.ndarray
    C_o: np.ndarray
    M: np.ndarray
    L: np.ndarray
    sway_weight: float
    noise_ratio: float
    regulator_damping_ratio: float
    observer_damping_ratio: float
    design_payload_mass_kg: float = math.nan
    aggressiveness: float = 1.0
    feedback_on: bool = True

    def as_dict(self) -> dict:
        return {"rope_length_m": self.rope_length_m, "gains": self.K[0].tolist(),
                "observer_gains": self.M[:, 0].tolist(), "sway_weight": self.sway_weight,
                "noise_ratio": self.noise_ratio, "regulator_damping_ratio": self.regulator_damping_ratio,
                "observer_damping_ratio": self.observer_damping_ratio,
                "design_payload_mass_kg": self.design_payload_mass_kg, "aggressiveness": self.aggressiveness,
                "feedback_on": self.feedback_on}


def regulator_weights(plant: DesignPlant) -> tuple[np.ndarray, np.ndarray]:
    """(Q_sway, Q_pos) of the LQR cost: Q = q_s Q_sway + Q_pos, R = 1 (module docstring)."""
    n = plant.n_rig
    w1 = plant.rig.modes()[0].omega_rad_s
    C_rate = np.zeros_like(plant.C_offsets)
    nq = n // 2
    C_rate[:, nq:n] = plant.C_offsets[:, :nq]
    Q_sway = plant.C_offsets.T @ plant.C_offsets + C_rate.T @ C_rate / w1**2
    Q_pos = np.zeros((n + 2, n + 2))
    Q_pos[n + 1, n + 1] = (w1 / POSITION_BANDWIDTH_RATIO) ** 2
    return Q_sway, Q_pos


def design_row(plant: DesignPlant, delay_cycles: int, measurement_variance: float, target: float,
               rope_length_m: float | None = None) -> FeedbackRow:
    """LQR and Kalman gains of one row, both tuned to ``target`` (module docstring).

    ``rope_length_m`` is the row's rope length as the hoist encoder reads it (default: the plant rig's
    pendulum length, the same when the envelope has no rope offset).
    """
    T = plant.cycle_s
    Q_sway, Q_pos = regulator_weights(plant)
    R = np.eye(1)

    def regulator(q):
        K, _S, E = lqr_gain(plant.Phi, plant.Gamma, q * Q_sway + Q_pos, R)
        return K, E

    q_s, K, zeta_r, _ = _tune(regulator, target, T)
    A_o, B_o, C_o, G_o = delayed_model(plant, delay_cycles)
    RN = np.array([[max(measurement_variance, MIN_MEASUREMENT_VARIANCE)]])

    def observer(lam):
        L, P, E = kalman_predictor(A_o, G_o, C_o, lam * RN, RN)
        return (L, P), E

    lam, (L, P), zeta_o, _ = _tune(observer, target, T)
    M = P @ C_o.T @ np.linalg.inv(C_o @ P @ C_o.T + RN)
    L_row = plant.rig.rope_length_m if rope_length_m is None else float(rope_length_m)
    return FeedbackRow(L_row, plant, K, A_o, B_o, C_o, M, L, 10.0**q_s, 10.0**lam, zeta_r, zeta_o,
                       plant.rig.payload_mass_kg)


def row_rope_lengths_m(rope_length_range_m: tuple[float, float], rows: int) -> np.ndarray:
    """Row lengths, geometric over the hoist range (sway frequency goes as 1/sqrt(L): equal ratios)."""
    lo, hi = rope_length_range_m
    if rows == 1 or hi - lo < 1e-9:
        return np.array([math.sqrt(lo * hi)]) if rows == 1 else np.array([lo])
    return np.geomspace(lo, hi, rows)


@dataclass(frozen=True, eq=False)
class FeedbackDesign:
    """The scheduled feedback controller of a project.

    Attributes
    ----------
    rows : list of FeedbackRow
        Ascending rope length; a measured length picks its row by ``lookup_rule``
        (:func:`stillhook.model.lookup.schedule_rows`), as the shaper schedule does.
    D_drive, Db_drive : ndarray (2, 2), (2, 1)
        Sampled [dv, dp] model of the correction through the speed loop.
    row_reports : tuple of stillhook.feedback.robust.RowReport
        Filled by the robust tuning (:func:`stillhook.feedback.robust.robust_feedback`); empty here.
    """

    rows: list
    lookup_rule: str
    sensor_kind: str
    delay_cycles: int
    measurement_variance: float
    cycle_s: float
    tau_s: float
    max_speed_m_s: float
    max_accel_m_s2: float
    design_payload_mass_kg: float
    target_damping_ratio: float
    D_drive: np.ndarray
    Db_drive: np.ndarray
    row_reports: tuple = ()

    @property
    def rope_lengths_m(self) -> np.ndarray:
        return np.array([r.rope_length_m for r in self.rows])

    def row_for(self, rope_length_m) -> int:
        """Row index for a measured rope length (the one schedule rule)."""
        return int(schedule_rows(self.rope_lengths_m, rope_length_m, self.lookup_rule))


def design_feedback(envelope, *, cycle_s: float, tau_s: float, max_speed_m_s: float, max_accel_m_s2: float,
                    sensor: dict, rows: int, design_payload_mass_kg: float, target_damping_ratio: float
                    ) -> FeedbackDesign:
    """Design every row (see the module docstring).

    Parameters
    ----------
    envelope : stillhook.model.envelope.Envelope
    cycle_s, tau_s : float > 0
        Drive cycle and speed-loop time constant (s).
    max_speed_m_s, max_accel_m_s2 : float > 0
        Drive limits the command must respect.
    sensor : dict
        ``[sensor]`` keys: kind, noise_sd, resolution, delay_cycles.
    rows : int >= 1
    design_payload_mass_kg : float, inside the envelope's payload range
    target_damping_ratio : float in (0, 0.7]
    """
    lo, hi = envelope.payload_mass_range_kg
    if not lo <= design_payload_mass_kg <= hi:
        raise ConfigError(f"[feedback] design_payload_mass_kg = {design_payload_mass_kg:g} is outside the payload "
                          f"range; allowed: a value in [{lo:g}, {hi:g}]")
    variance = sensor["noise_sd"] ** 2 + sensor["resolution"] ** 2 / 12.0
    out = []
    for L in row_rope_lengths_m(envelope.rope_length_range_m, rows):
        plant = design_plant(envelope.rig(float(L), design_payload_mass_kg), cycle_s, tau_s, sensor["kind"])
        out.append(design_row(plant, sensor["delay_cycles"], variance, target_damping_ratio, rope_length_m=L))
    n = out[0].plant.n_rig
    P = out[0].plant
    return FeedbackDesign(out, "nearest", sensor["kind"], int(sensor["delay_cycles"]), variance, float(cycle_s),
                          float(tau_s), float(max_speed_m_s), float(max_accel_m_s2), float(design_payload_mass_kg),
                          float(target_damping_ratio), P.Phi[n:, n:].copy(), P.Gamma[n:].copy())
