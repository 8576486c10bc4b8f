"""LQR and Kalman gains from the DARE against python-control's dlqr / dlqe (the reference library)."""

from __future__ import annotations

import control
import numpy as np
import pytest

from stillhook.feedback.design import delayed_model, regulator_weights
from stillhook.feedback.plant import design_plant
from stillhook.feedback.riccati import kalman_predictor, lqr_gain
from stillhook.model.rig import Rig


def _random_system(seed: int):
    rng = np.random.default_rng(seed)
    n, m, r = int(rng.integers(2, 7)), int(rng.integers(1, 3)), int(rng.integers(1, 3))
    A = rng.normal(size=(n, n)) / np.sqrt(n) * rng.uniform(0.5, 1.3)  # stable and unstable ones
    B, C, G = rng.normal(size=(n, m)), rng.normal(size=(r, n)), rng.normal(size=(n, m))
    W = rng.normal(size=(n, n))
    Q = W @ W.T + 1e-3 * np.eye(n)
    R = np.diag(rng.uniform(0.1, 10.0, m))
    RN = np.diag(rng.uniform(0.01, 1.0, r))
    return A, B, C, G, Q, R, RN


def _same_poles(ours, theirs):
    np.testing.assert_allclose(np.sort_complex(ours), np.sort_complex(np.asarray(theirs, dtype=complex)),
                               rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("seed", range(8))
def test_lqr_matches_python_control_dlqr(seed):
    # Reference: python-control dlqr (statefbk.py); Franklin, Powell & Workman, Digital Control of Dynamic
    # Systems, 3rd ed., 1998, section 9.2 (from memory) for the equations.
    A, B, _C, _G, Q, R, _RN = _random_system(seed)
    K, S, poles = lqr_gain(A, B, Q, R)
    K_ref, S_ref, E_ref = control.dlqr(A, B, Q, R)
    np.testing.assert_allclose(K, K_ref, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(S, S_ref, rtol=1e-9, atol=1e-12)
    _same_poles(poles, E_ref)
    assert np.max(np.abs(poles)) < 1.0
    # S solves the DARE (module docstring): residual at rounding level
    res = A.T @ S @ A - A.T @ S @ B @ np.linalg.solve(R + B.T @ S @ B, B.T @ S @ A) + Q - S
    assert np.max(np.abs(res)) <= 1e-9 * np.max(np.abs(S))


@pytest.mark.parametrize("seed", range(8))
def test_kalman_matches_python_control_dlqe(seed):
    # Reference: python-control dlqe (stochsys.py); Anderson & Moore, Optimal Filtering, 1979, ch. 4 (from memory).
    A, _B, C, G, _Q, _R, RN = _random_system(seed)
    QN = np.eye(G.shape[1])  # G QN G' exactly symmetric: python-control refuses an asymmetry above eps
    L, P, poles = kalman_predictor(A, G, C, QN, RN)
    L_ref, P_ref, E_ref = control.dlqe(A, G, C, QN, RN)
    np.testing.assert_allclose(L, L_ref, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(P, P_ref, rtol=1e-9, atol=1e-12)
    _same_poles(poles, E_ref)
    np.testing.assert_allclose(L, A @ P @ C.T @ np.linalg.inv(C @ P @ C.T + RN), rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("kind, delay", [("payload_angle_rad", 0), ("hook_angle_rad", 3)])
def test_gains_on_a_design_plant_match_python_control(kind, delay):
    # the matrices the feedback design actually hands over: a two-mode rig, drive lag, position, delay line
    plant = design_plant(Rig(340.0, 150.0, 5.0, 3.1, damping_ratio=0.01), 0.01, 0.05, kind)  # invented rig
    Q_sway, Q_pos = regulator_weights(plant)
    Q = 30.0 * Q_sway + Q_pos
    K, _S, E = lqr_gain(plant.Phi, plant.Gamma, Q, np.eye(1))
    K_ref, _S_ref, E_ref = control.dlqr(plant.Phi, plant.Gamma, Q, np.eye(1))
    np.testing.assert_allclose(K, K_ref, rtol=1e-8, atol=1e-12)
    _same_poles(E, E_ref)
    A, _B, C, G = delayed_model(plant, delay)
    RN = np.array([[1e-6]])
    L, P, E = kalman_predictor(A, G, C, 100.0 * RN, RN)
    L_ref, P_ref, E_ref = control.dlqe(A, G, C, 100.0 * RN, RN)
    np.testing.assert_allclose(L, L_ref, rtol=1e-8, atol=1e-12)
    np.testing.assert_allclose(P, P_ref, rtol=1e-8, atol=1e-15)
    _same_poles(E, E_ref)
