"""Robust tuning: each row's gains must pass over the row's whole rope span and the whole payload range.

:func:`stillhook.feedback.design.design_feedback` tunes each row at ONE rig (rope L_r, payload m_d). Over a
wide payload range the sway modes move far, and a gain tuned at one mass can take damping away from a mode
at another (measured on the demo, hook inclinometer: least damping 0.0018 at 1.2 m and 1600 kg, below the
open-loop 0.002; with a payload-angle or payload-offset sensor the loop went unstable). So, per row r::

    P_r        the envelope-grid points (:func:`~stillhook.feedback.robustness.envelope_grid`: geometric
               rope lengths, the row lengths, both sides of every switch, geometric payload masses and
               the design mass) that the schedule hands to row r
    candidates (m_c, alpha) for alpha in ALPHA_LADDER, m_c in (m_d, m_max, m_min): design_row at the rig
               (L_r, m_c), both weights tuned to alpha x target_damping_ratio
    accepted   at every point of P_r: stable, least closed-loop damping ratio >= zeta_0 (the rig's open-loop
               damping: no mode ends less damped than without feedback), gain margin >= MIN_GAIN_MARGIN_DB
               up and down, delay margin >= MIN_DELAY_MARGIN_CYCLES + the sensor's delay (extra cycles)
    chosen     the largest alpha with an accepted candidate; among those, the largest least damping
    none       K = 0: the row runs the shaper alone (the observer keeps tracking); the design says so

Why a ladder and not a bisection on alpha: the worst damping over P_r is not monotonic in alpha (demo,
row 7.07 m designed at 1600 kg: 0.019, 0.004, 0.0016, 0.0018 for alpha = 1, 1/2, 1/4, 1/10), so a
bisection could settle on a local edge; a short fixed ladder is checked point by point. Why several
design masses: the observer's model is what the payload moves; on the demo's long rows the design at the
heaviest payload keeps 0.026 of damping everywhere against 0.007 at the nominal 150 kg, on short rows the
nominal is better. The checks are the envelope check's own (:func:`~stillhook.feedback.robustness.check_point`
on the same grid), so the final envelope check passes the same points the tuning accepted.

Notes
-----
Gain margin 6 dB is common practice for sampled motion loops (no source); robustness of LQG to plant
variation is not guaranteed and must be checked: Doyle, "Guaranteed margins for LQG regulators", IEEE
Trans. Autom. Control 23(4):756-757, 1978 (from memory).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from stillhook.feedback.design import FeedbackDesign, design_feedback, design_row, min_damping_ratio
from stillhook.feedback.plant import design_plant
from stillhook.feedback.robustness import check_point, envelope_grid, point_poles

__all__ = ["ALPHA_LADDER", "MIN_DELAY_MARGIN_CYCLES", "MIN_GAIN_MARGIN_DB", "RowReport", "feedback_for_project",
           "robust_feedback", "zero_gain_row"]

#: Fractions of the damping target tried, most aggressive first.
ALPHA_LADDER = (1.0, 0.5, 0.25, 0.125)
#: Required gain margin (dB) at every point, for a gain increase and (where it exists) a decrease.
MIN_GAIN_MARGIN_DB = 6.0
#: Required delay margin (extra drive cycles) at every point, plus the sensor's own delay.
MIN_DELAY_MARGIN_CYCLES = 2.0


@dataclasses.dataclass(frozen=True)
class RowReport:
    """What the robust tuning found for one row (over its points P_r).

    The numbers are those of the row as designed (for a row left without feedback: the open loop);
    ``reason`` says why a row has no feedback, with the numbers of the best candidate tried.
    """

    row: int
    points: int
    feedback_on: bool
    design_payload_mass_kg: float
    aggressiveness: float
    worst_damping_ratio: float
    worst_rope_length_m: float
    worst_payload_mass_kg: float
    gain_margin_db: float
    delay_margin_cycles: float
    reason: str = ""

    def as_dict(self) -> dict:
        """JSON-ready: a margin that does not exist (no crossover, or not computed) is None."""
        return {k: (None if isinstance(v, float) and not math.isfinite(v) else v)
                for k, v in dataclasses.asdict(self).items()}


def zero_gain_row(row):
    """The row with K = 0 (feedback off there; its observer kept so the state tracks through a switch)."""
    n = row.plant.n_rig
    zeta_open = min_damping_ratio(np.linalg.eigvals(row.plant.Phi[:n, :n]), row.plant.cycle_s)
    return dataclasses.replace(row, K=np.zeros_like(row.K), sway_weight=0.0, regulator_damping_ratio=zeta_open,
                               aggressiveness=0.0, feedback_on=False)


def _evaluate(design: FeedbackDesign, k: int, rigs, zeta_0: float, delay_needed: float):
    """(accepted, summary dict, reason) of row k of ``design`` over (rope m, rig) points."""
    row = design.rows[k]
    damp = [(min_damping_ratio(point_poles(design, row, rig), design.cycle_s), L, rig) for L, rig in rigs]
    zeta, L_w, rig_w = min(damp, key=lambda t: t[0])
    summary = {"worst_damping_ratio": zeta, "worst_rope_length_m": L_w,
               "worst_payload_mass_kg": rig_w.payload_mass_kg, "gain_margin_db": math.nan,
               "delay_margin_cycles": math.nan}
    if zeta < zeta_0:
        return False, summary, (f"least damping {zeta:.4g} at rope {L_w:.3f} m, payload "
                                f"{rig_w.payload_mass_kg:.4g} kg is below the open-loop {zeta_0:g}")
    pts = [check_point(design, rig, L, row_index=k) for L, rig in rigs]
    gm = min(min(p.gain_margin_db, -p.gain_reduction_margin_db) for p in pts)
    dm = min(p.delay_margin_cycles for p in pts)
    summary.update(gain_margin_db=gm, delay_margin_cycles=dm)
    if gm < MIN_GAIN_MARGIN_DB:
        return False, summary, f"gain margin {gm:.3g} dB < {MIN_GAIN_MARGIN_DB:g} dB"
    if dm < delay_needed:
        return False, summary, f"delay margin {dm:.3g} cycles < {delay_needed:g}"
    return True, summary, ""


def robust_feedback(envelope, *, sensor: dict, design_payload_mass_kg: float, target_damping_ratio: float,
                    n_rope: int = 9, n_payload: int = 7, **drive_and_rows) -> FeedbackDesign:
    """:func:`design_feedback`, then each row re-tuned until it passes over its points (module docstring).

    Parameters as :func:`~stillhook.feedback.design.design_feedback`; ``n_rope``, ``n_payload`` size the
    grid as in :func:`~stillhook.feedback.robustness.check_envelope` (keep them equal to the check's).
    The returned design's ``row_reports`` holds one :class:`RowReport` per row.
    """
    base = design_feedback(envelope, sensor=sensor, design_payload_mass_kg=design_payload_mass_kg,
                           target_damping_ratio=target_damping_ratio, **drive_and_rows)
    L_grid, m_grid = envelope_grid(base, envelope, n_rope, n_payload)
    zeta_0 = float(envelope.damping_ratio)
    delay_needed = MIN_DELAY_MARGIN_CYCLES + base.delay_cycles
    m_lo, m_hi = envelope.payload_mass_range_kg
    masses = list(dict.fromkeys([float(design_payload_mass_kg), float(m_hi), float(m_lo)]))
    rows, reports = list(base.rows), []
    for k, base_row in enumerate(base.rows):
        rigs = [(float(L), envelope.rig(float(L), float(m))) for L in L_grid if base.row_for(L) == k for m in m_grid]
        best, tried = None, []
        for alpha in ALPHA_LADDER:
            for m_c in masses:
                row = base_row if (alpha == 1.0 and m_c == masses[0]) else design_row(
                    design_plant(envelope.rig(base_row.rope_length_m, m_c),
                                 base.cycle_s, base.tau_s, base.sensor_kind),
                    base.delay_cycles, base.measurement_variance, alpha * target_damping_ratio,
                    rope_length_m=base_row.rope_length_m)
                row = dataclasses.replace(row, aggressiveness=alpha)
                trial = dataclasses.replace(base, rows=rows[:k] + [row] + rows[k + 1:])
                ok, summary, reason = _evaluate(trial, k, rigs, zeta_0, delay_needed)
                tried.append((summary["worst_damping_ratio"], m_c, alpha, summary, reason))
                if ok and (best is None or summary["worst_damping_ratio"] > best[3]["worst_damping_ratio"]):
                    best = (row, m_c, alpha, summary)
            if best is not None:
                break
        if best is not None:
            row, m_c, alpha, summary = best
            rows[k] = row
            reports.append(RowReport(k, len(rigs), True, m_c, alpha, **summary))
        else:
            _z, m_c, alpha, _summary, reason = max(tried, key=lambda t: t[0])
            rows[k] = zero_gain_row(base_row)
            _ok, summary, _r = _evaluate(dataclasses.replace(base, rows=rows), k, rigs, -math.inf, -math.inf)
            reports.append(RowReport(k, len(rigs), False, m_c, 0.0, **summary,
                                     reason=f"best candidate (payload {m_c:g} kg, {alpha:g} x target): {reason}"))
    return dataclasses.replace(base, rows=rows, row_reports=tuple(reports))


def feedback_for_project(project) -> FeedbackDesign:
    """:func:`robust_feedback` from ``[drive]``, ``[sensor]`` and ``[feedback]`` of a project."""
    fb, drive, env = project.feedback, project.drive, project.envelope
    mass = fb["design_payload_mass_kg"]
    return robust_feedback(env, cycle_s=drive["cycle_s"], tau_s=drive["speed_loop_time_constant_s"],
                           max_speed_m_s=drive["max_speed_m_s"], max_accel_m_s2=drive["max_accel_m_s2"],
                           sensor=project.sensor, rows=fb["rows"],
                           design_payload_mass_kg=env.nominal_payload_mass_kg if mass is None else mass,
                           target_damping_ratio=fb["target_damping_ratio"])
