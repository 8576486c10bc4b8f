"""Frequency response of the loops' state spaces (feedback.robustness.state_space_response) against python-control."""

from __future__ import annotations

import control
import numpy as np
import pytest

from stillhook.feedback.robustness import MODAL_COND_LIMIT, state_space_response

# Reference: python-control's StateSpace evaluated at z (a dense solve per point), the library the tests of
# the feedback design use as their outside reference.
Z = np.exp(1j * np.concatenate([np.geomspace(1e-4, 0.2, 300), np.linspace(0.2, np.pi, 300)]))


def reference(A, B, C, D, z):
    sys = control.ss(A, B, C, D, 0.005)
    return np.array([complex(sys(zk)) for zk in z])


@pytest.mark.parametrize("seed", range(6))
def test_random_stable_systems_agree_with_python_control(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 10))
    A = rng.normal(size=(n, n))
    A *= 0.97 / np.max(np.abs(np.linalg.eigvals(A)))
    B, C, D = rng.normal(size=(n, 1)), rng.normal(size=(1, n)), rng.normal(size=(1, 1))
    got, ref = state_space_response(A, B, C, D, Z), reference(A, B, C, D, Z)
    np.testing.assert_allclose(got, ref, rtol=1e-9, atol=1e-12 * np.max(np.abs(ref)))


def test_lightly_damped_sway_poles_near_z_equal_1_agree_with_python_control():
    # two sway modes at 0.2 and 0.5 Hz, damping 0.003, sampled at 5 ms: poles within 0.6 % of z = 1
    T = 0.005
    blocks = []
    for f in (0.2, 0.5):
        w = 2 * np.pi * f
        blocks.append(np.array([[0.0, 1.0], [-w * w, -2 * 0.003 * w]]))
    Ac = np.block([[blocks[0], np.zeros((2, 2))], [np.zeros((2, 2)), blocks[1]]])
    A = np.eye(4) + T * Ac  # forward-Euler discretization is enough for a test system
    B, C, D = np.array([[0.0], [T], [0.0], [T]]), np.array([[1.0, 0.0, 0.7, 0.0]]), np.zeros((1, 1))
    got, ref = state_space_response(A, B, C, D, Z), reference(A, B, C, D, Z)
    np.testing.assert_allclose(got, ref, rtol=1e-9)


def test_a_delay_line_is_defective_and_takes_the_dense_path_exactly():
    # y = u delayed by n cycles: G(z) = z^-n (a Jordan block at 0: no eigenvector basis)
    n = 5
    A = np.diag(np.ones(n - 1), -1)
    B, C, D = np.eye(n)[:, :1], np.eye(n)[-1:, :], np.zeros((1, 1))
    assert np.linalg.cond(np.linalg.eig(A)[1]) > MODAL_COND_LIMIT
    np.testing.assert_allclose(state_space_response(A, B, C, D, Z), Z ** -n, rtol=1e-12)


def test_no_states_is_the_feedthrough():
    got = state_space_response(np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.array([[2.5]]), Z[:3])
    np.testing.assert_array_equal(got, np.full(3, 2.5 + 0j))
