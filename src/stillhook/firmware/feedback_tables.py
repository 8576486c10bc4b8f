"""Fixed-point tables of the feedback controller (codegen/shk_feedback.h states the contract).

Every signal and state is an int32 "Q31 of its full scale": value = n / 2^31 x FS. Full scales:

    sensor reading y          FS_y = 2 max_abs                  (sensor unit)
    speeds r, u, v, dv        FS_v = 2 max_speed                (m/s)
    angles                    FS_a = 2 max_abs_angle            (rad; max_abs_angle = 0.35 rad or the sensor's)
    angle rates               FS_w = FS_a w_max                 (rad/s; w_max the envelope's fastest mode)
    delay line                FS_y
    position deviation dp     FS_p = POSITION_FULL_SCALE_M      (m)

A physical map y_i = sum_j c_ij x_j becomes y~_i = sum_j c~_ij x~_j with c~_ij = c_ij FS_j / FS_i, stored as
round(c~ 2^F) with one fraction count F per table (16 <= F <= 30, the largest that keeps every entry
inside int32). Per row (controller of :mod:`stillhook.feedback.controller`, reorganised so each output is
ONE dot product of the stored state and the cycle's inputs)::

    obs_next  (n_o x (n_o + 2)):  o'   = [A_o E | A_o M | B_o] [o; y; u]         E = I - M C_o
    du_row    (n_o + 3 + n_r):    du   = [-K_x S E | -K_d | -K_x S M | K_x S_r] [o; d; y; x_r]
    ref_next  (n_r x (n_r + 1)):  x_r' = [A_r | B_r] [x_r; r]     (follow_reference; n_r = rig states + speed)
    vhat_row  (n_o + 1):          v^_c = [E | M]_(row of v) [o; y]
    drive     (2 x 3):            d'   = [D | D_b] [d; u - r]                       (all rows)

Notes
-----
Q-format scaling of state-space controllers: Franklin, Powell & Workman, *Digital Control of Dynamic
Systems*, 3rd ed., 1998, ch. on quantization effects (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.errors import EmitError
from stillhook.feedback.design import FeedbackDesign
from stillhook.model.lookup import lookup_thresholds, rope_length_counts

__all__ = ["DEFAULT_MAX_ABS_ANGLE_RAD", "FeedbackTables", "MAX_OBSERVER_STATES", "POSITION_FULL_SCALE_M",
           "feedback_tables", "to_q31", "from_q31"]

#: Sensor range and angle range when [sensor] max_abs is unset (rad): 20 degrees (our choice).
DEFAULT_MAX_ABS_ANGLE_RAD = 0.35
#: Full scale of the position deviation dp (m): the feedback never moves the trolley metres off its path.
POSITION_FULL_SCALE_M = 16.0
#: Largest observer (rig + speed + delay line) the runtime holds: SHK_FB_MAX_OBS in shk_feedback.h.
MAX_OBSERVER_STATES = 16
_ONE = 2**31


def to_q31(value, full_scale):
    """n = sat32(round(value / FS x 2^31)) (int64 array)."""
    n = np.floor(np.asarray(value, dtype=float) / full_scale * _ONE + 0.5)
    return np.clip(n, -_ONE, _ONE - 1).astype(np.int64)


def from_q31(n, full_scale):
    return np.asarray(n, dtype=float) / _ONE * full_scale


@dataclass(frozen=True, eq=False)
class FeedbackTables:
    """Integer tables and limits of the runtime (all Python ints / int64 arrays)."""

    n_rows: int
    n_obs: int
    frac_o: int
    frac_u: int
    frac_v: int
    frac_d: int
    obs_next: np.ndarray      # (n_rows, n_obs, n_obs + 2)
    du_row: np.ndarray        # (n_rows, n_obs + 3)
    vhat_row: np.ndarray      # (n_rows, n_obs + 1)
    drive: np.ndarray         # (2, 3)
    ref_next: np.ndarray      # (n_rows, n_ref, n_ref + 1)
    n_ref: int
    frac_r: int
    follow_reference: bool
    speed_max: int
    accel_room: int
    sensor_max: int
    jump_max: int
    stale_cycles: int
    thresholds: np.ndarray    # (n_rows - 1,) rope counts
    length_min: int
    length_max: int
    lsb_m: float
    fs_y: float
    fs_v: float
    state_scales: np.ndarray  # FS of each observer state, then dv, dp


def _fraction(c: np.ndarray, name: str) -> int:
    peak = float(np.max(np.abs(c))) if c.size else 0.0
    F = 30 if peak == 0.0 else min(30, 30 - max(0, math.ceil(math.log2(peak * (1 + 1e-12)))))
    if F < 16:
        raise EmitError(f"feedback table {name} has an entry of {peak:.3g} in its scaled form; the runtime allows "
                        "at most 2^14: the design's full scales do not fit this controller")
    return F


def _quantize(c: np.ndarray, F: int) -> np.ndarray:
    return np.floor(c * 2.0**F + 0.5).astype(np.int64)


def feedback_tables(design: FeedbackDesign, envelope, sensor: dict, rope_length_lsb_m: float, *,
                    follow_reference: bool = True) -> FeedbackTables:
    """Scale and round a :class:`FeedbackDesign` for the runtime (module docstring).

    ``follow_reference``: the runtime sits behind a shaper and damps the deviation from the shaped move's
    own sway (:class:`stillhook.feedback.controller.FeedbackController`); the emitted runtime does.
    """
    row0 = design.rows[0]
    n, n_o = row0.plant.n_rig, row0.A_o.shape[0]
    if n_o > MAX_OBSERVER_STATES:
        raise EmitError(f"the feedback observer has {n_o} states ({design.delay_cycles} delay cycles); the runtime "
                        f"holds at most {MAX_OBSERVER_STATES}: allowed: [sensor] delay_cycles <= "
                        f"{MAX_OBSERVER_STATES - n - 1}")
    angle = sensor["kind"].endswith("_rad")
    lo_L, hi_L = envelope.rope_length_range_m
    default_abs = DEFAULT_MAX_ABS_ANGLE_RAD * (1.0 if angle else hi_L + envelope.rigging_length_m)
    max_abs = sensor["max_abs"] or default_abs
    max_abs_angle = max_abs if angle else DEFAULT_MAX_ABS_ANGLE_RAD
    w_max = float(np.max([envelope.rig(L, m).modes()[-1].omega_rad_s for L in (lo_L, hi_L)
                          for m in envelope.payload_mass_range_kg]))
    fs_y, fs_v, fs_a = 2.0 * max_abs, 2.0 * design.max_speed_m_s, 2.0 * max_abs_angle
    nq = n // 2
    S_o = np.array([fs_a] * nq + [fs_a * w_max] * nq + [fs_v] + [fs_y] * (n_o - n - 1))
    S_d = np.array([fs_v, POSITION_FULL_SCALE_M])
    n_r = n + 1
    obs, du, vh, ref = [], [], [], []
    for row in design.rows:
        E = np.eye(n_o) - row.M @ row.C_o
        G = np.hstack([row.A_o @ E, row.A_o @ row.M, row.B_o])
        obs.append(G * np.concatenate([S_o, [fs_y, fs_v]])[None, :] / S_o[:, None])
        K_x, K_d = row.K[0, :n], row.K[0, n:]
        KSE = K_x @ E[:n]
        g_u = np.concatenate([-KSE, -K_d, [-(K_x @ row.M[:n, 0])], K_x, [0.0]])
        du.append(g_u * np.concatenate([S_o, S_d, [fs_y], S_o[:n_r]]) / fs_v)
        R = np.hstack([row.A_o[:n_r, :n_r], row.B_o[:n_r]]) if follow_reference else np.zeros((n_r, n_r + 1))
        ref.append(R * np.concatenate([S_o[:n_r], [fs_v]])[None, :] / S_o[:n_r, None])
        vh.append(np.concatenate([E[n], row.M[n]]) * np.concatenate([S_o, [fs_y]]) / S_o[n])
    obs, du, vh, ref = np.array(obs), np.array(du), np.array(vh), np.array(ref)
    drive = np.hstack([design.D_drive, design.Db_drive]) * np.array([fs_v, POSITION_FULL_SCALE_M, fs_v])[None, :]
    drive = drive / S_d[:, None]
    F = {k: _fraction(v, k) for k, v in (("obs_next", obs), ("du_row", du), ("vhat_row", vh), ("drive", drive),
                                          ("ref_next", ref))}
    jump = sensor["max_jump"] or (4.0 * max_abs * w_max * design.cycle_s + 6.0 * sensor["noise_sd"]
                                  + 2.0 * sensor["resolution"])
    lsb = float(rope_length_lsb_m)
    th = lookup_thresholds(design.rope_lengths_m, design.lookup_rule, lsb)
    return FeedbackTables(
        len(design.rows), n_o, F["obs_next"], F["du_row"], F["vhat_row"], F["drive"],
        _quantize(obs, F["obs_next"]), _quantize(du, F["du_row"]), _quantize(vh, F["vhat_row"]),
        _quantize(drive, F["drive"]), _quantize(ref, F["ref_next"]), n_r, F["ref_next"], bool(follow_reference),
        int(to_q31(design.max_speed_m_s, fs_v)), int(to_q31(design.max_accel_m_s2 * design.tau_s, fs_v)),
        int(to_q31(max_abs, fs_y)), int(to_q31(min(jump, max_abs), fs_y)), int(sensor["stale_cycles"]),
        th, int(rope_length_counts(lo_L, lsb)), int(rope_length_counts(hi_L, lsb)), lsb, fs_y, fs_v,
        np.concatenate([S_o, S_d]))
