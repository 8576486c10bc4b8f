"""Feedback design: Riccati and Kalman gains, closed-loop poles, margins, delays, a closed-form pendulum case."""

from __future__ import annotations

import math

import control
import numpy as np
import pytest
import scipy.linalg
import scipy.signal

from stillhook.feedback.design import (
    MIN_MEASUREMENT_VARIANCE,
    delayed_model,
    design_feedback,
    min_damping_ratio,
    regulator_weights,
)
from stillhook.feedback.plant import design_plant
from stillhook.feedback.robustness import (
    check_point,
    closed_loop_matrix,
    controller_system,
    loop_frequency_response,
    margins,
    plant_system,
)
from stillhook.model.envelope import Envelope
from stillhook.model.lookup import schedule_rows
from stillhook.model.rig import Rig

SENSOR = {"kind": "hook_angle_rad", "noise_sd": 0.001, "resolution": 0.0, "delay_cycles": 2}


@pytest.fixture(scope="module")
def env():
    return Envelope(hook_mass_kg=200.0, rigging_length_m=1.5, rope_length_range_m=(2.0, 6.0),
                    payload_mass_range_kg=(200.0, 400.0), damping_ratio=0.002)


@pytest.fixture(scope="module")
def design(env):
    return design_feedback(env, cycle_s=0.01, tau_s=0.05, max_speed_m_s=0.5, max_accel_m_s2=0.3, sensor=SENSOR,
                           rows=3, design_payload_mass_kg=300.0, target_damping_ratio=0.08)


def test_zoh_plant_matches_scipy_cont2discrete():
    # scipy.signal.cont2discrete(method="zoh") is an independent implementation of the same sampling
    rig = Rig(200.0, 300.0, 4.0, 1.5, damping_ratio=0.002)
    p = design_plant(rig, 0.01, 0.05, "payload_offset_m")
    n = p.n_rig
    A_r, B_r, _C, _D = rig.state_space_matrices()
    A = np.zeros((n + 2, n + 2))
    A[:n, :n], A[:n, n], A[n, n], A[n + 1, n] = A_r, -B_r[:, 0] / 0.05, -1 / 0.05, 1.0
    B = np.zeros((n + 2, 1))
    B[:n, 0], B[n, 0] = B_r[:, 0] / 0.05, 1 / 0.05
    Ad, Bd, *_ = scipy.signal.cont2discrete((A, B, np.eye(n + 2), np.zeros((n + 2, 1))), 0.01, method="zoh")
    np.testing.assert_allclose(p.Phi, Ad, atol=1e-12)
    np.testing.assert_allclose(p.Gamma, Bd, atol=1e-12)


def test_kalman_gain_matches_scipy_discrete_riccati(design):
    # the current-estimator gain from scipy.linalg.solve_discrete_are (filter Riccati equation), not python-control
    row = design.rows[1]
    A, _B, C, G = delayed_model(row.plant, design.delay_cycles)
    R = max(design.measurement_variance, MIN_MEASUREMENT_VARIANCE)
    P = scipy.linalg.solve_discrete_are(A.T, C.T, G @ G.T * row.noise_ratio * R, np.array([[R]]))
    M = P @ C.T / (C @ P @ C.T + R)
    np.testing.assert_allclose(row.M, M, rtol=1e-6, atol=1e-12)
    np.testing.assert_allclose(row.L, A @ M, rtol=1e-6, atol=1e-12)


def test_regulator_gain_matches_scipy_discrete_riccati(design):
    # K = (R + G' P G)^-1 G' P Phi with P from scipy.linalg.solve_discrete_are (python-control's dlqr made K)
    row = design.rows[0]
    Phi, Gam = row.plant.Phi, row.plant.Gamma
    Q_sway, Q_pos = regulator_weights(row.plant)
    P = scipy.linalg.solve_discrete_are(Phi, Gam, row.sway_weight * Q_sway + Q_pos, np.eye(1))
    K = np.linalg.solve(np.eye(1) + Gam.T @ P @ Gam, Gam.T @ P @ Phi)
    np.testing.assert_allclose(row.K, K, rtol=1e-6, atol=1e-9)


def test_closed_loop_poles_match_python_control_feedback(env, design):
    rig = env.rig(3.3, 250.0)
    row = design.rows[design.row_for(3.3)]
    plant, ctrl = plant_system(design, rig), controller_system(design, row)
    P = control.ss(*plant, np.zeros((1, 1)), design.cycle_s)
    K = control.ss(*ctrl, design.cycle_s)
    loop = control.feedback(P, K, sign=+1)  # u = K y, positive feedback in python-control's convention
    ours = np.sort_complex(np.linalg.eigvals(closed_loop_matrix(plant, ctrl)))
    theirs = np.sort_complex(control.poles(loop))
    np.testing.assert_allclose(ours, theirs, atol=1e-8)


def test_margins_match_python_control_stability_margins(env, design):
    rig = env.rig(4.0, 300.0)
    pt = check_point(design, rig)
    row = design.rows[pt.row]
    plant, ctrl = plant_system(design, rig), controller_system(design, row)
    L = control.series(control.ss(*plant, np.zeros((1, 1)), design.cycle_s),
                       control.ss(*[-m if i in (2, 3) else m for i, m in enumerate(ctrl)], design.cycle_s))
    # our frequency response agrees with python-control's
    w = np.array([0.5, 1.0, 2.0, 5.0])
    np.testing.assert_allclose(loop_frequency_response(plant, ctrl, design.cycle_s, w),
                               control.frequency_response(L, w).complex.reshape(-1), rtol=1e-8)
    # margins from a brute-force uniform sweep of 200,000 frequencies up to Nyquist (python-control's own
    # stability_margins picks spurious crossings on this lightly damped loop, so the sweep is the reference)
    w_dense = np.linspace(1e-3, math.pi / design.cycle_s * (1 - 1e-9), 200_000)
    dense = margins(loop_frequency_response(plant, ctrl, design.cycle_s, w_dense), w_dense, design.cycle_s)
    assert pt.gain_margin_db == pytest.approx(dense["gain_margin_db"], abs=0.05)
    assert pt.phase_margin_deg == pytest.approx(dense["phase_margin_deg"], abs=0.5)
    assert pt.delay_margin_cycles == pytest.approx(dense["delay_margin_cycles"], rel=0.02)


def test_delay_margin_predicts_instability_under_added_delay(env, design):
    rig = env.rig(2.0, 300.0)
    pt = check_point(design, rig)
    row = design.rows[pt.row]
    dm = pt.delay_margin_cycles
    assert pt.stable and 1 < dm < 60
    radius = [np.max(np.abs(np.linalg.eigvals(closed_loop_matrix(plant_system(design, rig, extra),
                                                                 controller_system(design, row)))))
              for extra in (math.floor(dm), math.ceil(dm))]
    assert radius[0] < 1 < radius[1]


def test_trolley_speed_proportional_to_sway_angle_damps_a_pendulum():
    # Derived: theta'' + (g/L) theta = -a/L with a = v' and v = k theta gives
    # theta'' + (k/L) theta' + (g/L) theta = 0, so zeta = k / (2 sqrt(g L)) (fast drive, fine sampling).
    L, g, k = 4.0, 9.80665, 1.2
    rig = Rig(500.0, 0.0, L, 0.0)
    p = design_plant(rig, 0.0005, 0.001, "hook_angle_rad")
    K = np.zeros((1, p.n_rig + 2))
    K[0, 0] = -k  # u = -K x = k theta
    poles = np.linalg.eigvals(p.Phi - p.Gamma @ K)
    s = np.log(poles[np.argmax(np.abs(np.angle(poles)))]) / 0.0005
    assert -s.real / abs(s) == pytest.approx(k / (2 * math.sqrt(g * L)), rel=0.02)


def test_rows_follow_the_one_schedule_rule(design):
    L = np.linspace(1.5, 7.0, 57)
    expected = schedule_rows(design.rope_lengths_m, L, "nearest")
    assert [design.row_for(x) for x in L] == list(expected)


def test_each_row_reports_the_damping_its_gains_give(design):
    for row in design.rows:
        poles = np.linalg.eigvals(row.plant.Phi - row.plant.Gamma @ row.K)
        assert np.max(np.abs(poles)) < 1
        assert min_damping_ratio(poles, design.cycle_s) == pytest.approx(row.regulator_damping_ratio, abs=1e-9)
        observer = np.linalg.eigvals(row.A_o - row.L @ row.C_o)
        assert min_damping_ratio(observer, design.cycle_s) == pytest.approx(row.observer_damping_ratio, abs=1e-9)


def test_rows_are_encoder_rope_lengths_and_plants_the_pendulum_lengths():
    # [rig] rope_offset_m: the schedule and the check use the encoder's rope length, the models L + offset
    from stillhook.feedback.robust import feedback_for_project
    from stillhook.feedback.robustness import check_envelope
    from stillhook.project import project_from_dict

    p = project_from_dict({"rig": {"hook_mass_kg": 200.0, "rigging_length_m": 1.5, "rope_length_m": [3.0, 4.0],
                                   "rope_offset_m": 0.5, "payload_mass_kg": 300.0},
                           "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
                           "feedback": {"rows": 2}})
    d = feedback_for_project(p)
    assert [r.rope_length_m for r in d.rows] == pytest.approx([3.0, 4.0])
    assert [r.plant.rig.rope_length_m for r in d.rows] == pytest.approx([3.5, 4.5])
    check = check_envelope(d, p.envelope, 0.03, n_rope=3, n_payload=2)
    assert min(pt.rope_length_m for pt in check.points) == pytest.approx(3.0)
