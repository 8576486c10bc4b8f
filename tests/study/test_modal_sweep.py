"""The sweep's modal engine: modes, exact discretization, residual peak, against outside references."""

from __future__ import annotations

import math

import numpy as np
import pytest

from stillhook.errors import ConfigError
from stillhook.model.envelope import Envelope
from stillhook.model.statespace import rig_state_space
from stillhook.sim.dynamics import simulate
from stillhook.sim.profiles import trapezoid
from stillhook.study.modal_sweep import AccelRuns, ModalBatch, end_amplitudes, end_amplitudes_dense, residual_sway_m


def _env(hook=340.0, rigging=3.1, ropes=(1.2, 9.5), masses=(70.0, 1600.0), zeta=0.0, g=9.80665):
    return Envelope(hook, rigging, ropes, masses, damping_ratio=zeta, gravity_m_s2=g)


def test_frequencies_match_the_published_test_vector():
    # Kibble & Berkshire, Classical Mechanics, 5th ed., 2004 (double-pendulum frequency equation);
    # computed from that equation:
    # (50, 500, 6, 1.5), g = 9.81 -> 0.18338, 1.49806 Hz.
    env = _env(hook=50.0, rigging=1.5, ropes=(6.0, 6.0), masses=(500.0, 500.0), g=9.81)
    b = ModalBatch.from_envelope(env, [6.0], [500.0])
    assert b.omega_rad_s[0] / (2 * math.pi) == pytest.approx([0.18338, 1.49806], abs=6e-6)


@pytest.mark.parametrize("L1, m2", [(1.2, 70.0), (5.0, 150.0), (9.5, 1600.0), (3.0, 0.0)])
def test_modal_gains_sum_to_the_quasi_static_lean(L1, m2):
    # Physical law: under a constant trolley acceleration a the loads lean back to hook -a L1/g and
    # payload -a (L1 + L2)/g (tan(theta) = a/g, linearized). Each mode's static share is -a p_i/w_i^2.
    env = _env()
    b = ModalBatch.from_envelope(env, [L1], [m2])
    w2 = b.omega_rad_s[0] ** 2
    assert np.sum(b.payload_gain[0] / w2) == pytest.approx((L1 + 3.1) / 9.80665, rel=1e-12)
    assert np.sum(b.hook_gain[0] / w2) == pytest.approx(L1 / 9.80665, rel=1e-12)


def test_single_pendulum_residual_matches_the_closed_form():
    # Derived by superposing the four acceleration steps of a symmetric trapezoid (+A at 0, -A at
    # t_a, -A at t_c, +A at t_c + t_a) on x'' + w^2 x = -a: residual amplitude
    # (A / w^2) |1 - e^(j w t_a)| |1 - e^(j w t_c)| = 4 (A / w^2) |sin(w t_a / 2) sin(w t_c / 2)|.
    env = _env(rigging=0.0, masses=(500.0, 500.0))
    T, v, a = 0.01, 0.4, 0.2
    speed = trapezoid(5.0, v, a, T)
    n_a = int(np.argmax(speed))  # first sample at the plateau speed
    t_a = n_a * T
    A = speed.max() / t_a
    t_c = (len(speed) - 1 - n_a) * T  # time from the start of the ramp up to the start of the ramp down
    Ls = np.array([1.5, 4.0, 8.0])
    b = ModalBatch.from_envelope(env, Ls, np.full(3, 500.0))
    w = np.sqrt(9.80665 / Ls)
    expected = 4 * A / w**2 * np.abs(np.sin(w * t_a / 2) * np.sin(w * t_c / 2))
    assert residual_sway_m(b, speed, T) == pytest.approx(expected, rel=1e-9)


def test_against_scipy_zero_order_hold_discretization():
    # Reference: scipy.signal.cont2discrete(method='zoh') of the rig's state space with the trolley
    # acceleration held over each cycle (exact for piecewise-constant input: Franklin, Powell &
    # Workman, Digital Control of Dynamic Systems, 3rd ed., 1998, ch. 4), stepped with dlsim.
    from scipy.signal import cont2discrete, dlsim

    env = _env(zeta=0.004)
    T = 0.01
    speed = trapezoid(4.0, 0.5, 0.25, T)
    rig = env.rig(3.0, 300.0)
    ss = rig_state_space(rig)
    Ad, Bd, Cd, Dd, _ = cont2discrete((ss.A, ss.B, ss.C[1:2], ss.D[1:2]), T, method="zoh")
    a = np.diff(np.concatenate([speed, np.zeros(2001)])) / T  # accel per cycle, 20 s of rest after
    _, y, _ = dlsim((Ad, Bd, Cd, Dd, T), a)
    n_end = len(speed) - 1
    after = np.abs(y[n_end + 1:, 0])
    grid_peak = after.max()
    got = residual_sway_m(ModalBatch.from_envelope(env, [3.0], [300.0]), speed, T)[0]
    # the sweep finds the continuous peak; on a 10 ms grid the sampled peak is lower by at most
    # (w h)^2 / 8 of it (w = highest mode)
    w_hi = rig.modes()[-1].omega_rad_s
    assert grid_peak <= got * (1 + 1e-9)
    assert got == pytest.approx(grid_peak, rel=(w_hi * T) ** 2 / 8 + 1e-9)


@pytest.mark.parametrize("L1, m2", [(1.2, 70.0), (1.2, 1600.0), (9.5, 70.0), (9.5, 1600.0)])
def test_against_the_nonlinear_simulator_at_the_envelope_corners(L1, m2):
    # solve_ivp reference (stillhook.sim.dynamics). At 1/1000 of the demo's speed the model is linear:
    # agreement to the sampling error of the simulator's 5 ms output grid. At the demo's full speed
    # the nonlinear terms (second order in the sway angle) leave < 1.5 % (measured: 1.1 % worst).
    env = _env(zeta=0.002)
    T = 0.005
    speed = trapezoid(7.5, 0.5, 0.25, T)
    b = ModalBatch.from_envelope(env, [L1], [m2])
    for scale, rel in ((1e-3, 1e-4), (1.0, 0.015)):
        lin = residual_sway_m(b, scale * speed, T)[0]
        ref = simulate(env.rig(L1, m2), scale * speed, T).residual_payload_sway_m
        assert lin == pytest.approx(ref, rel=rel)


def test_dense_and_run_sums_agree():
    env = _env(zeta=0.003)
    T = 0.005
    rng = np.random.default_rng(1)
    speed = np.concatenate([[0.0], np.cumsum(rng.normal(0, 0.01, 700)), [0.0]])
    runs = AccelRuns.from_speed(speed, T)
    b = ModalBatch.from_envelope(env, [2.0, 8.0], [100.0, 1500.0])
    assert runs.accel_m_s2.size > 600  # every cycle its own run: the dense path
    runs_few = AccelRuns.from_speed(trapezoid(3.0, 0.5, 0.25, T), T)
    for r in (runs, runs_few):
        Yd = end_amplitudes_dense(b.poles_rad_s, r)
        Yr = end_amplitudes(b, r) if r is runs_few else _run_sum(b, r)
        np.testing.assert_allclose(Yd, Yr, rtol=1e-9, atol=1e-12 * np.abs(Yr).max())


def _run_sum(b, runs):
    import stillhook.study.modal_sweep as sm

    old = sm.DENSE_RUNS_FRACTION
    sm.DENSE_RUNS_FRACTION = 1e9
    try:
        return sm.end_amplitudes(b, runs)
    finally:
        sm.DENSE_RUNS_FRACTION = old


def test_runs_keep_the_command_end_and_the_speed_change():
    T = 0.005
    speed = trapezoid(2.0, 0.5, 0.25, T)
    runs = AccelRuns.from_speed(speed, T)
    assert runs.end_cycle == len(speed) - 1  # the last sample is 0: the ramp ends there
    assert np.sum(runs.accel_m_s2 * (runs.stop - runs.start)) * T == pytest.approx(0.0, abs=1e-12)
    assert AccelRuns.from_speed(np.zeros(5), T).end_cycle == 0


def test_peak_is_the_continuous_maximum():
    env = _env()
    b = ModalBatch.from_envelope(env, [2.5], [400.0])
    T = 0.005
    speed = trapezoid(3.0, 0.5, 0.25, T)
    got = residual_sway_m(b, speed, T)[0]
    Y = end_amplitudes(b, AccelRuns.from_speed(speed, T))[0] * b.payload_gain[0]
    tau = np.linspace(0.0, 20.0, 400_001)  # 50 us grid: brute force
    x = np.imag(Y[0] * np.exp(b.poles_rad_s[0, 0] * tau) + Y[1] * np.exp(b.poles_rad_s[0, 1] * tau))
    assert got == pytest.approx(np.abs(x).max(), rel=1e-7)
    assert got >= np.abs(x).max() * (1 - 1e-12)


def test_bad_inputs_raise_one_clear_error():
    env = _env()
    with pytest.raises(ConfigError, match="paired 1-D"):
        ModalBatch.from_envelope(env, [1.0, 2.0], [100.0])
    with pytest.raises(ConfigError, match="rope lengths"):
        ModalBatch.from_envelope(env, [-1.0], [100.0])
    b = ModalBatch.from_envelope(env, [2.0], [100.0])
    with pytest.raises(ConfigError, match="cycle_s"):
        residual_sway_m(b, [0.0, 1.0, 0.0], 0.0)
    with pytest.raises(ConfigError, match="speed_m_s"):
        residual_sway_m(b, [0.0, math.nan], 0.01)
    with pytest.raises(ConfigError, match="settle_s"):
        residual_sway_m(b, [0.0, 1.0, 0.0], 0.01, settle_s=-1.0)
