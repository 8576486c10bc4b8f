"""Linear two-mode model against textbook results and python-control."""

import math

import numpy as np
import pytest
from scipy.linalg import eigh

from stillhook.errors import RigError
from stillhook.model.rig import Rig, mode_frequencies_rad_s
from stillhook.model.statespace import rig_state_space

G = 9.81


def frequency_equation_roots(m1, m2, L1, L2, g):
    """w^2 roots of w^4 - (1+R)(g/L1 + g/L2) w^2 + (1+R) g^2/(L1 L2) = 0, R = m2/m1.

    Kibble & Berkshire, Classical Mechanics, 5th ed., Imperial College Press, 2004, normal modes of
    the double pendulum; same roots in Singhose, Kim & Kenison, ASME J. Dyn. Sys. Meas. Control
    130(3):034504, 2008 (from memory).
    """
    R = m2 / m1
    return np.sort(np.roots([1.0, -(1 + R) * (g / L1 + g / L2), (1 + R) * g * g / (L1 * L2)]).real)


@pytest.mark.parametrize("m1,m2,L1,L2", [(1, 4, 2, 0.5), (50, 500, 6, 1.5), (10, 1, 1, 1), (340, 70, 9.5, 3.1),
                                         (340, 1600, 1.2, 3.1), (5000, 20, 12, 0.4)])
def test_modes_solve_the_frequency_equation(m1, m2, L1, L2):
    rig = Rig(m1, m2, L1, L2, gravity_m_s2=G)
    w2 = [m.omega_rad_s**2 for m in rig.modes()]
    np.testing.assert_allclose(w2, frequency_equation_roots(m1, m2, L1, L2, G), rtol=1e-10)
    np.testing.assert_allclose(mode_frequencies_rad_s(m1, m2, L1, L2, G) ** 2, w2, rtol=1e-10)


def test_worked_values():
    # Computed from the frequency equation (Kibble & Berkshire 2004), computed with g = 9.81:
    # (m1, m2, L1, L2) = (50, 500, 6, 1.5), g = 9.81 -> 0.18338 Hz and 1.49806 Hz.
    f = [m.frequency_hz for m in Rig(50, 500, 6, 1.5, gravity_m_s2=G).modes()]
    np.testing.assert_allclose(f, [0.18338, 1.49806], atol=1e-5)


def test_equal_masses_and_lengths():
    # Kibble & Berkshire 2004: equal masses and lengths give w^2 = (2 -+ sqrt 2) g/L, angle ratio
    # theta2/theta1 = +-sqrt 2, so displacement ratio x2/x1 = 1 +- sqrt 2.
    L = 2.5
    modes = Rig(7.0, 7.0, L, L, gravity_m_s2=G).modes()
    np.testing.assert_allclose([m.omega_rad_s**2 for m in modes], [(2 - math.sqrt(2)) * G / L,
                                                                   (2 + math.sqrt(2)) * G / L], rtol=1e-12)
    np.testing.assert_allclose([m.payload_to_hook_ratio for m in modes], [1 + math.sqrt(2), 1 - math.sqrt(2)],
                               rtol=1e-12)
    np.testing.assert_allclose([m.shape[1] / m.shape[0] for m in modes], [math.sqrt(2), -math.sqrt(2)], rtol=1e-12)


def test_limits_of_mass_ratio():
    # Kibble & Berkshire 2004: m1 >> m2 decouples to g/L1 and g/L2; m1 << m2 gives a low mode
    # near g/(L1 + L2).
    L1, L2 = 6.0, 1.5
    # mass ratio 1e7 both ways, inside the plausibility bounds (stillhook.checks.LIMITS)
    w2 = sorted(m.omega_rad_s**2 for m in Rig(5e5, 0.05, L1, L2, gravity_m_s2=G).modes())
    np.testing.assert_allclose(w2, sorted([G / L1, G / L2]), rtol=1e-6)
    w2_low = Rig(1.0, 1e7, L1, L2, gravity_m_s2=G).modes()[0].omega_rad_s ** 2
    np.testing.assert_allclose(w2_low, G / (L1 + L2), rtol=1e-6)


@pytest.mark.parametrize("m2,L2", [(0.0, 2.0), (300.0, 0.0)])
def test_single_pendulum_has_one_mode_and_textbook_period(m2, L2):
    # Simple pendulum: T = 2 pi sqrt(L/g) (any mechanics textbook, e.g. Kibble & Berkshire 2004).
    L1 = 4.0
    modes = Rig(120.0, m2, L1, L2, gravity_m_s2=G).modes()
    assert len(modes) == 1
    assert modes[0].period_s == pytest.approx(2 * math.pi * math.sqrt(L1 / G), rel=1e-12)
    assert all(math.isfinite(v) for v in modes[0].as_dict().values())


def test_participations_add_up_to_the_quasi_static_lean():
    # Under a constant trolley acceleration a the pendulum leans back by a/g (statics): hook offset
    # -a L1/g and payload offset -a (L1 + L2)/g. The modal static parts must add up to that.
    rig = Rig(340.0, 150.0, 5.0, 3.1, gravity_m_s2=G)
    modes = rig.modes()
    assert sum(m.hook_participation_m_per_m_s2 for m in modes) == pytest.approx(-5.0 / G, rel=1e-12)
    assert sum(m.payload_participation_m_per_m_s2 for m in modes) == pytest.approx(-8.1 / G, rel=1e-12)


@pytest.mark.parametrize("zeta", [0.0, 0.01])
def test_state_space_poles_equal_modes(zeta):
    # python-control as the reference: poles of the exported model are -zeta w +- j w sqrt(1-zeta^2).
    rig = Rig(340.0, 150.0, 5.0, 3.1, damping_ratio=zeta)
    poles = rig_state_space(rig).poles()
    expected = []
    for m in rig.modes():
        wd = m.omega_rad_s * math.sqrt(1 - zeta**2)
        expected += [-zeta * m.omega_rad_s - 1j * wd, -zeta * m.omega_rad_s + 1j * wd]
    by_imag = np.argsort(np.imag(poles))
    expected = np.array(expected)
    np.testing.assert_allclose(poles[by_imag], expected[np.argsort(np.imag(expected))], atol=1e-10)


def test_state_space_dc_gain_is_the_lean():
    import control

    rig = Rig(340.0, 150.0, 5.0, 3.1, damping_ratio=0.01)
    dc = np.asarray(control.dcgain(rig_state_space(rig))).ravel()
    np.testing.assert_allclose(dc[:2], [-5.0 / rig.gravity_m_s2, -8.1 / rig.gravity_m_s2], rtol=1e-9)


@pytest.mark.parametrize("kwargs,word", [
    (dict(hook_mass_kg=0.0), "hook_mass_kg"), (dict(payload_mass_kg=-1.0), "payload_mass_kg"),
    (dict(rope_length_m=float("nan")), "rope_length_m"), (dict(rigging_length_m=-0.1), "rigging_length_m"),
    (dict(damping_ratio=1.0), "damping_ratio"), (dict(gravity_m_s2=float("inf")), "gravity_m_s2"),
])
def test_bad_rig_is_one_clear_error(kwargs, word):
    base = dict(hook_mass_kg=100.0, payload_mass_kg=50.0, rope_length_m=3.0, rigging_length_m=1.0)
    base.update(kwargs)
    with pytest.raises(RigError, match=word) as info:
        Rig(**base)
    assert "allowed" in str(info.value)


def test_modes_equal_scipy_generalized_eigh_over_extreme_rigs():
    # Reference: scipy.linalg.eigh(K, M) (LAPACK sygvd); the rig reduces by Cholesky itself (Golub & Van Loan,
    # Matrix Computations, 4th ed., 2013, section 8.7) so that modelling a rig does not load scipy.linalg.
    rng = np.random.default_rng(7)
    for m1, m2, L1, L2 in zip(rng.uniform(0.5, 5000, 300), 10 ** rng.uniform(-3, 4, 300), rng.uniform(0.1, 60, 300),
                              rng.uniform(0.05, 15, 300), strict=True):
        rig = Rig(m1, m2, L1, L2)
        w2_ref, phi_ref = eigh(rig.stiffness_matrix(), rig.mass_matrix())
        phi_ref = phi_ref * np.where(phi_ref[0] < 0, -1.0, 1.0)
        got = [m.omega_rad_s ** 2 for m in rig.modes()]
        np.testing.assert_allclose(got, w2_ref, rtol=1e-12)
        shapes = np.array([m.shape for m in rig.modes()]).T
        np.testing.assert_allclose(shapes / np.abs(shapes).max(), phi_ref / np.abs(phi_ref).max(), atol=1e-10)
