"""Robust per-row tuning: every envelope point stable with margins, no mode less damped than open loop."""

from __future__ import annotations

import numpy as np
import pytest

from stillhook.feedback.design import min_damping_ratio
from stillhook.feedback.robust import MIN_DELAY_MARGIN_CYCLES, MIN_GAIN_MARGIN_DB, robust_feedback
from stillhook.feedback.robustness import check_envelope, check_point, plant_system, point_poles
from stillhook.model.envelope import Envelope

GRID = {"n_rope": 3, "n_payload": 3}
DRIVE = {"cycle_s": 0.01, "tau_s": 0.05, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3}
# invented cranes: a light hoist with a narrow payload range, and a second one with a 40:1 payload range
CRANE_A = Envelope(hook_mass_kg=200.0, rigging_length_m=1.5, rope_length_range_m=(2.0, 6.0),
                   payload_mass_range_kg=(200.0, 400.0), damping_ratio=0.002)
CRANE_B = Envelope(hook_mass_kg=120.0, rigging_length_m=0.8, rope_length_range_m=(3.0, 12.0),
                   payload_mass_range_kg=(50.0, 2000.0), damping_ratio=0.005)


def _design(env, kind, delay_cycles=2):
    sensor = {"kind": kind, "noise_sd": 0.001, "resolution": 0.0, "delay_cycles": delay_cycles}
    return robust_feedback(env, sensor=sensor, rows=2, design_payload_mass_kg=1.5 * env.payload_mass_range_kg[0],
                           target_damping_ratio=0.08, **DRIVE, **GRID)


@pytest.mark.parametrize("env, kind", [(CRANE_A, "hook_angle_rad"), (CRANE_A, "payload_angle_rad"),
                                       (CRANE_A, "hook_offset_m"), (CRANE_B, "hook_angle_rad")])
def test_every_grid_point_is_stable_with_margins_and_no_less_damped_than_open_loop(env, kind):
    design = _design(env, kind)
    check = check_envelope(design, env, 0.03, **GRID)
    assert check.all_stable
    assert any(r.feedback_on for r in design.rows)  # the check is not passed by switching everything off
    for p in check.points:
        assert p.damping_ratio >= env.damping_ratio - 1e-9
        if design.rows[p.row].feedback_on:
            assert p.gain_margin_db >= MIN_GAIN_MARGIN_DB
            assert p.gain_reduction_margin_db <= -MIN_GAIN_MARGIN_DB
            assert p.delay_margin_cycles >= MIN_DELAY_MARGIN_CYCLES + design.delay_cycles


def test_rows_stay_stable_between_grid_points():
    # off the tuning grid: 6 rope lengths x 8 payload masses, none of them a grid value
    design = _design(CRANE_B, "hook_angle_rad")
    for L in np.linspace(3.05, 11.9, 6):
        for m in np.geomspace(55.0, 1950.0, 8):
            poles = point_poles(design, design.rows[design.row_for(L)], CRANE_B.rig(L, m))
            assert np.max(np.abs(poles)) < 1.0


def test_row_without_a_passing_gain_gets_zero_gain_and_keeps_the_open_loop():
    # a payload-offset sensor on crane B: at least one row has no candidate that passes
    design = _design(CRANE_B, "payload_offset_m")
    off = [k for k, r in enumerate(design.rows) if not r.feedback_on]
    assert off
    for k in off:
        assert not np.any(design.rows[k].K)
        assert "below the open-loop" in design.row_reports[k].reason or "margin" in design.row_reports[k].reason
    # K = 0 opens the loop: its poles are the plant's own (rig, speed loop, sensor delay line) and the
    # observer's, so the least damping over the sway poles is the rig's open-loop damping ratio
    points = [(L, m) for L in np.linspace(3.0, 12.0, 7) for m in (50.0, 600.0, 2000.0) if design.row_for(L) in off]
    assert points
    for L, m in points:
        rig = CRANE_B.rig(L, m)
        poles = point_poles(design, design.rows[design.row_for(L)], rig)
        for z in np.linalg.eigvals(plant_system(design, rig)[0]):
            assert np.min(np.abs(poles - z)) < 1e-6  # the delay line's repeated z = 0 splits by ~eps^(1/2)
        assert min_damping_ratio(poles, design.cycle_s) == pytest.approx(CRANE_B.damping_ratio, abs=1e-9)


def test_demo_inclinometer_no_longer_takes_damping_at_short_rope_heavy_payload(demo_project):
    # the point where the single-mass design left 0.0018 < open-loop 0.002 (1.2 m rope, 1600 kg payload)
    env = demo_project.envelope
    drive = demo_project.drive
    design = robust_feedback(env, cycle_s=drive["cycle_s"], tau_s=drive["speed_loop_time_constant_s"],
                             max_speed_m_s=drive["max_speed_m_s"], max_accel_m_s2=drive["max_accel_m_s2"],
                             sensor={"kind": "hook_angle_rad", "noise_sd": 0.0, "resolution": 0.0, "delay_cycles": 0},
                             rows=4, design_payload_mass_kg=150.0, target_damping_ratio=0.1, **GRID)
    pt = check_point(design, env.rig(1.2, 1600.0))
    assert pt.stable and pt.damping_ratio >= env.damping_ratio - 1e-9
    check = check_envelope(design, env, 0.03, **GRID)
    assert check.all_stable and check.worst.damping_ratio >= env.damping_ratio - 1e-9
    assert any(r.feedback_on for r in design.rows)
