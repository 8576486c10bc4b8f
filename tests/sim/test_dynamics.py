"""Nonlinear model: conservation laws, linear limit, an independent Cartesian formulation."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from stillhook.errors import ConfigError
from stillhook.model.rig import Rig
from stillhook.model.statespace import rig_state_space
from stillhook.sim.dynamics import mechanical_energy_j, simulate
from stillhook.sim.profiles import hoist_speeds, trapezoid

RIG = Rig(340.0, 150.0, 5.0, 3.1)  # invented test rig


def test_energy_is_conserved_in_free_large_angle_swing():
    # Physical law: with no damping and a still trolley, T + V is constant. Large angles (0.7 and
    # -0.5 rad) exercise every nonlinear term.
    res = simulate(RIG, np.zeros(1), 0.01, settle_s=60.0, initial_angles_rad=(0.7, -0.5), rtol=1e-11)
    E = mechanical_energy_j(RIG, res)
    swing = E[0] - (-(RIG.hook_mass_kg + RIG.payload_mass_kg) * RIG.gravity_m_s2 * RIG.rope_length_m
                    - RIG.payload_mass_kg * RIG.gravity_m_s2 * RIG.rigging_length_m)
    assert res.t_s[-1] == pytest.approx(60.0)
    assert np.max(np.abs(E - E[0])) / abs(E[0]) < 1e-7
    assert np.max(np.abs(E - E[0])) / swing < 1e-6  # also relative to the swing energy alone


def test_damping_removes_energy_at_the_modal_rate():
    # With modal damping zeta, a free low-mode swing decays as exp(-zeta w t) (viscously damped free
    # vibration: Rao, Mechanical Vibrations, 5th ed., 2011, section 2.6, from memory).
    rig = Rig(340.0, 150.0, 5.0, 3.1, damping_ratio=0.01)
    low = rig.modes()[0]
    th0 = 0.01 * low.shape / low.shape[0]
    res = simulate(rig, np.zeros(1), 0.01, settle_s=40.0, initial_angles_rad=tuple(th0))
    late = np.abs(res.hook_offset_m[res.t_s > 30.0]).max()
    early = np.abs(res.hook_offset_m[res.t_s < low.period_s]).max()
    # the late peak lies in [30, 40] s and the early one in [0, T]: bound the decay both ways
    assert late / early < math.exp(-0.01 * low.omega_rad_s * 29.0)
    assert late / early > math.exp(-0.01 * low.omega_rad_s * 41.0)


def test_small_moves_agree_with_the_linear_model():
    # python-control's forced_response of the exported linear model as the reference: for a move
    # scaled down 100x, the nonlinear offsets match to well under 0.1 % of the peak.
    import control

    Ts = 0.005
    v = 0.01 * trapezoid(7.5, 0.5, 0.25, Ts)
    res = simulate(RIG, v, Ts, settle_s=15.0)
    a = np.concatenate([np.diff(v) / Ts, [0.0]])
    # forced_response interpolates the input linearly between time points, so give it a grid 10x
    # finer than the cycle on which the piecewise-constant acceleration is nearly exact
    fine = np.arange(len(res.t_s) * 10 - 9) * (Ts / 10)
    k = np.minimum((fine / Ts + 1e-9).astype(int), len(a) - 1)
    lin = control.forced_response(rig_state_space(RIG), T=fine, U=a[k]).outputs[:, ::10]
    peak = np.max(np.abs(res.payload_offset_m))
    assert np.max(np.abs(lin[1] - res.payload_offset_m)) < 1e-3 * peak
    assert np.max(np.abs(lin[0] - res.hook_offset_m)) < 1e-3 * peak


def _cartesian_reference(rig, speed, hoist, Ts, t_eval):
    """Independent formulation: point masses in the plane held by two inextensible ropes.

    m1 r1'' = F1 - T1 e1 + T2 e2, m2 r2'' = F2 - T2 e2 (e1 trolley->hook, e2 hook->payload unit
    vectors); the tensions follow from the acceleration-level constraints
    p.p'' + |p'|^2 = L1 L1'' + L1'^2 and q.q'' + |q'|^2 = 0 (p = r1 - trolley, q = r2 - r1).
    """
    m1, m2, L2, g = rig.hook_mass_kg, rig.payload_mass_kg, rig.rigging_length_m, rig.gravity_m_s2
    n = len(t_eval) + 10
    v = np.concatenate([speed, np.zeros(n)])
    u = np.concatenate([hoist, np.zeros(n)])
    xk = np.concatenate([[0.0], np.cumsum(0.5 * Ts * (v[1:] + v[:-1]))])
    Lk = rig.rope_length_m + np.concatenate([[0.0], np.cumsum(0.5 * Ts * (u[1:] + u[:-1]))])

    def drive(t):
        k = int(t / Ts)
        tau = t - k * Ts
        a, al = (v[k + 1] - v[k]) / Ts, (u[k + 1] - u[k]) / Ts
        return (xk[k] + v[k] * tau + 0.5 * a * tau**2, v[k] + a * tau, a,
                Lk[k] + u[k] * tau + 0.5 * al * tau**2, u[k] + al * tau, al)

    def rhs(t, y):
        r1, r2, v1, v2 = y[0:2], y[2:4], y[4:6], y[6:8]
        x, xd, xdd, L, Ld, Ldd = drive(t)
        p, q = r1 - [x, 0.0], r2 - r1
        pd, qd = v1 - [xd, 0.0], v2 - v1
        e1, e2 = p / np.linalg.norm(p), q / np.linalg.norm(q)
        F1, F2 = np.array([0.0, -m1 * g]), np.array([0.0, -m2 * g])
        # r1'' = (F1 - T1 e1 + T2 e2)/m1, r2'' = (F2 - T2 e2)/m2; unknowns T1, T2
        A = np.array([[-(p @ e1) / m1, (p @ e2) / m1],
                      [q @ e1 / m1, -(q @ e2) * (1 / m2 + 1 / m1)]])
        b = np.array([L * Ldd + Ld**2 - pd @ pd - p @ (F1 / m1 - [xdd, 0.0]),
                      -(qd @ qd) - q @ (F2 / m2 - F1 / m1)])
        T1, T2 = np.linalg.solve(A, b)
        a1 = (F1 - T1 * e1 + T2 * e2) / m1
        a2 = (F2 - T2 * e2) / m2
        return np.concatenate([v1, v2, a1, a2])

    y0 = np.array([0.0, -rig.rope_length_m, 0.0, -rig.rope_length_m - L2, 0, 0, 0, 0])
    sol = solve_ivp(rhs, (0, t_eval[-1]), y0, method="DOP853", rtol=1e-10, atol=1e-12, t_eval=t_eval,
                    max_step=Ts)
    x = np.array([drive(t)[0] for t in t_eval])
    return sol.y[2] - x, sol.y[0] - x


def test_hoisting_during_travel_matches_an_independent_cartesian_model():
    Ts = 0.01
    speed = trapezoid(4.0, 0.5, 0.25, Ts)
    hoist = hoist_speeds(5.0, 2.5, 0.25, 0.3, Ts, start_s=1.0)
    res = simulate(RIG, speed, Ts, hoist_speed_m_s=hoist, settle_s=4.0)
    payload_ref, hook_ref = _cartesian_reference(RIG, speed, hoist, Ts, res.t_s)
    peak = np.max(np.abs(res.payload_offset_m))
    assert np.max(np.abs(res.payload_offset_m - payload_ref)) < 1e-5 * max(peak, 1.0)
    assert np.max(np.abs(res.hook_offset_m - hook_ref)) < 1e-5 * max(peak, 1.0)
    assert res.rope_length_m[-1] == pytest.approx(2.5, abs=1e-9)


def test_cycle_by_cycle_commands_match_the_cartesian_model():
    # An S-curve changes acceleration every cycle in its jerk phases (the RK4 path of simulate);
    # the shaped or filtered commands of later stages do the same.
    from stillhook.sim.profiles import s_curve

    Ts = 0.01
    speed = s_curve(3.0, 0.5, 0.3, 0.6, Ts)
    hoist = hoist_speeds(5.0, 6.0, 0.2, 0.3, Ts)
    res = simulate(RIG, speed, Ts, hoist_speed_m_s=hoist, settle_s=3.0)
    payload_ref, _ = _cartesian_reference(RIG, speed, hoist, Ts, res.t_s)
    assert np.max(np.abs(res.payload_offset_m - payload_ref)) < 1e-5 * np.max(np.abs(payload_ref))


def test_slow_hoisting_follows_the_adiabatic_invariant():
    # Physical law: for a pendulum whose length changes slowly, the action is an adiabatic invariant,
    # so the angular amplitude scales as L^(-3/4) (Landau & Lifshitz, Mechanics, 3rd ed., 1976,
    # section 49, from memory). Lift a single pendulum slowly from 8 m to 2 m.
    rig = Rig(500.0, 0.0, 8.0, 0.0)
    Ts = 0.02
    hoist = hoist_speeds(8.0, 2.0, 0.05, 0.05, Ts)
    res = simulate(rig, np.zeros(1), Ts, hoist_speed_m_s=hoist, settle_s=10.0, initial_angles_rad=(0.01, 0.01))
    before = np.abs(res.theta1_rad[res.t_s < 8.0]).max()
    after = np.abs(res.theta1_rad[res.t_s > res.command_end_s]).max()
    assert after / before == pytest.approx((2.0 / 8.0) ** -0.75, rel=0.03)


def test_single_pendulum_swings_at_the_textbook_period():
    # small-angle pendulum: T = 2 pi sqrt(L/g) (Kibble & Berkshire, Classical Mechanics, 5th ed., 2004)
    rig = Rig(200.0, 0.0, 4.0, 1.0)
    res = simulate(rig, np.zeros(1), 0.002, settle_s=30.0, initial_angles_rad=(1e-3, 1e-3))
    s = res.hook_offset_m
    crossings = res.t_s[1:][(s[:-1] > 0) & (s[1:] <= 0)]
    period = np.mean(np.diff(crossings))
    assert period == pytest.approx(2 * math.pi * math.sqrt(4.0 / rig.gravity_m_s2), rel=1e-4)


def test_metrics_follow_their_definitions():
    Ts = 0.005
    res = simulate(RIG, trapezoid(7.5, 0.5, 0.25, Ts), Ts)
    after = (res.t_s > res.command_end_s) & (res.t_s <= res.command_end_s + 20.0)
    assert res.residual_payload_sway_m == pytest.approx(np.abs(res.payload_offset_m[after]).max())
    assert res.trolley_position_m[-1] == pytest.approx(7.5, abs=1e-9)
    assert res.settle_time_s(res.residual_payload_sway_m * 2) <= res.command_end_s
    assert res.settle_time_s(1e-6) == math.inf


def test_bad_simulation_inputs():
    with pytest.raises(ConfigError, match="NaN"):
        simulate(RIG, [0.0, float("nan"), 0.0], 0.01)
    with pytest.raises(ConfigError, match="cycle_s"):
        simulate(RIG, [0.0, 0.1, 0.0], 0.0)
    with pytest.raises(ConfigError, match="0.05 m"):
        simulate(RIG, [0.0], 0.01, hoist_speed_m_s=-np.ones(1000))
