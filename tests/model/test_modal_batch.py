"""The one batch modal decomposition against the rig's eigen-solution, the frequency equation and statics."""

from __future__ import annotations

import numpy as np
import pytest

from stillhook.model.modal_batch import batch_modes
from stillhook.model.rig import Rig

G = 9.80665
#: (m1, m2, L1, L2): double pendulums, a heavy and a light payload, an empty hook, no rigging.
RIGS = [(340.0, 70.0, 1.2, 3.1), (340.0, 1600.0, 9.5, 3.1), (50.0, 500.0, 6.0, 1.5), (10.0, 1.0, 1.0, 1.0),
        (340.0, 0.0, 5.0, 3.1), (340.0, 500.0, 4.0, 0.0), (340.0, 0.0, 2.0, 0.0)]


@pytest.mark.parametrize("rig", RIGS)
def test_matches_the_rig_eigen_solution(rig):
    # Rig.modes(): the generalized symmetric eigenproblem K phi = w^2 M phi solved per rig with
    # scipy.linalg.eigh (Kibble & Berkshire, Classical Mechanics, 5th ed., 2004, normal modes).
    m1, m2, L1, L2 = rig
    b = batch_modes(m1, [m2], [L1], L2, G)
    ref = Rig(m1, m2, L1, L2, gravity_m_s2=G).modes()
    n = len(ref)
    assert bool(b.two_modes[0]) == (n == 2)
    np.testing.assert_allclose(b.omega_rad_s[0, :n], [m.omega_rad_s for m in ref], rtol=1e-10)
    np.testing.assert_allclose(b.payload_participation_m_per_m_s2[0, :n],
                               [m.payload_participation_m_per_m_s2 for m in ref], rtol=1e-8, atol=1e-12)
    np.testing.assert_allclose(b.hook_participation_m_per_m_s2[0, :n],
                               [m.hook_participation_m_per_m_s2 for m in ref], rtol=1e-8, atol=1e-12)
    if n == 1:  # no second mode: it carries nothing
        assert b.payload_participation_m_per_m_s2[0, 1] == 0.0 == b.hook_participation_m_per_m_s2[0, 1]


@pytest.mark.parametrize("rig", [r for r in RIGS if r[1] > 0 and r[3] > 0])
def test_frequencies_solve_the_frequency_equation(rig):
    # w^4 - (1 + R)(g/L1 + g/L2) w^2 + (1 + R) g^2 / (L1 L2) = 0, R = m2/m1 (Kibble & Berkshire 2004)
    m1, m2, L1, L2 = rig
    w2 = batch_modes(m1, [m2], [L1], L2, G).omega_rad_s[0] ** 2
    R = m2 / m1
    residual = w2**2 - (1 + R) * (G / L1 + G / L2) * w2 + (1 + R) * G * G / (L1 * L2)
    assert np.all(np.abs(residual) <= 1e-10 * w2**2)


def test_empty_hook_is_one_mode_with_the_rigging_in_line():
    # physical law: with no payload mass the rigging has no dynamics of its own; it hangs in line with
    # the rope, so the payload point leans (L1 + L2)/g per m/s^2 in the one pendulum mode sqrt(g/L1)
    b = batch_modes(340.0, [0.0, 0.0], [2.0, 8.0], 3.1, G)
    assert not b.two_modes.any()
    np.testing.assert_allclose(b.omega_rad_s[:, 0], np.sqrt(G / np.array([2.0, 8.0])), rtol=1e-15)
    np.testing.assert_allclose(b.payload_participation_m_per_m_s2[:, 0], -(np.array([2.0, 8.0]) + 3.1) / G)


def test_static_offsets_add_up_to_the_quasi_static_lean():
    # physical law: a constant acceleration a leans hook and payload back by a L1/g and a (L1 + L2)/g
    L1, m2 = np.meshgrid(np.linspace(1.2, 9.5, 7), np.linspace(0.0, 1600.0, 9), indexing="ij")
    b = batch_modes(340.0, m2, L1, 3.1, G)  # grid shape (7, 9) by broadcasting
    assert b.omega_rad_s.shape == (7, 9, 2)
    np.testing.assert_allclose(b.hook_participation_m_per_m_s2.sum(axis=-1), -L1 / G, rtol=1e-10)
    np.testing.assert_allclose(b.payload_participation_m_per_m_s2.sum(axis=-1), -(L1 + 3.1) / G, rtol=1e-10)


def test_light_payload_approaches_its_own_pendulum_mode():
    # as m2 -> 0 the high mode tends to sqrt(g/L2) (the payload swinging below a hook it does not move)
    # and its payload participation stays finite; the mode shape form keeps it free of 0/0
    b = batch_modes(340.0, [1e-9], [5.0], 3.1, G)
    assert b.omega_rad_s[0, 1] == pytest.approx(np.sqrt(G / 3.1), rel=1e-9)
    assert np.all(np.isfinite(b.payload_participation_m_per_m_s2))
