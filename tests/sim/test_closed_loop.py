"""The closed-loop plant step: physical laws and the open-loop limits."""

from __future__ import annotations

import math

import numpy as np
import pytest

from stillhook.model.rig import Rig
from stillhook.sim.closed_loop import Sensor, run_closed_loop
from stillhook.sim.dynamics import mechanical_energy_j
from stillhook.sim.profiles import trapezoid


def test_free_swing_conserves_energy():
    # undamped, trolley at rest, no hoist: Lagrangian mechanics conserves T + V (physical law)
    rig = Rig(200.0, 300.0, 4.0, 1.5)
    r = run_closed_loop(rig, np.zeros(1), 0.01, 0.05, initial_angles_rad=(0.2, -0.1), settle_s=8.0)
    e = mechanical_energy_j(rig, r.sim)
    at_rest = -(200.0 * 4.0 + 300.0 * 5.5) * rig.gravity_m_s2
    assert np.ptp(e) < 1e-6 * (e[0] - at_rest)


def test_small_swing_has_the_pendulum_period():
    # single pendulum, small angle: period 2 pi sqrt(L / g) (textbook pendulum)
    L, g = 3.0, 9.80665
    rig = Rig(400.0, 0.0, L, 0.0)
    r = run_closed_loop(rig, np.zeros(1), 0.002, 0.05, initial_angles_rad=(0.001, 0.001), settle_s=12.0)
    th = r.sim.theta1_rad
    ups = np.nonzero((th[:-1] < 0) & (th[1:] >= 0))[0]
    t_cross = r.sim.t_s[ups] - th[ups] * 0.002 / (th[ups + 1] - th[ups])
    assert np.mean(np.diff(t_cross)) == pytest.approx(2 * math.pi * math.sqrt(L / g), rel=1e-3)


def test_open_loop_move_ends_at_the_commanded_distance():
    rig = Rig(200.0, 300.0, 4.0, 1.5, damping_ratio=0.002)
    v = trapezoid(3.0, 0.5, 0.3, 0.01)
    r = run_closed_loop(rig, v, 0.01, 0.05, settle_s=5.0)
    m = r.metrics()
    assert m["end_error_m"] == pytest.approx(0.0, abs=1e-9)  # a lag keeps the integral of the command
    assert m["peak_speed_m_s"] <= 0.5 + 1e-12


def test_sensor_delay_and_resolution_reach_the_controller():
    rig = Rig(200.0, 0.0, 4.0, 0.0)
    seen = []

    def spy(y, rope_length_m, reference_m_s):
        seen.append(y)
        return reference_m_s

    run_closed_loop(rig, np.zeros(1), 0.01, 0.05, spy, sensor=Sensor("hook_angle_rad", 0.0, 0.01, 3),
                    initial_angles_rad=(0.123, 0.123), settle_s=0.1)
    assert seen[:4] == pytest.approx([0.12, 0.12, 0.12, 0.12])
    assert all(abs(y / 0.01 - round(y / 0.01)) < 1e-9 for y in seen)
