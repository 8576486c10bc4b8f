"""Motion profiles: limits respected, distance exact, rest to rest."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stillhook.errors import ConfigError
from stillhook.sim.profiles import hoist_lengths, pendant_steps, s_curve, trapezoid


def _distance(v, Ts):
    # the trolley follows the samples linearly: trapezoid rule
    return Ts * float(np.sum(0.5 * (v[1:] + v[:-1])))


@settings(max_examples=60, deadline=None)
@given(d=st.floats(0.01, 20.0), v=st.floats(0.06, 2.0), a=st.floats(0.05, 2.0),  # within MAX_MOVE_SAMPLES
       Ts=st.sampled_from([0.001, 0.004, 0.005, 0.01, 0.02]))
def test_trapezoid_limits_and_distance(d, v, a, Ts):
    cmd = trapezoid(d, v, a, Ts)
    assert cmd[0] == 0 and cmd[-1] == 0
    assert np.max(cmd) <= v * (1 + 1e-9)
    assert np.max(np.abs(np.diff(cmd))) / Ts <= a * (1 + 1e-9)
    assert _distance(cmd, Ts) == pytest.approx(d, rel=1e-9)


def test_short_move_is_triangular():
    cmd = trapezoid(0.1, 1.0, 0.5, 0.01)
    assert np.sum(cmd == cmd.max()) == 1
    assert cmd.max() < 1.0


def test_s_curve_limits_jerk_and_keeps_distance():
    Ts, a, j = 0.005, 0.3, 0.6
    cmd = s_curve(5.0, 0.6, a, j, Ts)
    acc = np.diff(cmd) / Ts
    assert np.max(np.abs(acc)) <= a * (1 + 1e-9)
    assert np.max(np.abs(np.diff(acc))) / Ts <= j * (1 + 1e-6)
    assert _distance(cmd, Ts) == pytest.approx(5.0, rel=1e-9)


def test_pendant_steps_ramp_and_stop():
    cmd = pendant_steps([(2.0, 0.4), (1.0, 0.1), (2.0, -0.2)], 0.25, 0.01)
    assert cmd[0] == 0 and cmd[-1] == 0
    assert np.max(np.abs(np.diff(cmd))) <= 0.25 * 0.01 + 1e-12
    assert cmd.max() == pytest.approx(0.4) and cmd.min() == pytest.approx(-0.2)


def test_hoist_lengths_end_exactly():
    L = hoist_lengths(5.0, 3.0, 0.12, 0.2, 0.005, n_samples=5000, start_s=1.0)
    assert L[0] == 5.0 and L[-1] == pytest.approx(3.0, abs=1e-12) and len(L) >= 5000
    assert np.all(np.diff(L) <= 1e-15)


@pytest.mark.parametrize("args", [(0.0, 1.0, 1.0, 0.01), (1.0, float("nan"), 1.0, 0.01), (1.0, 1.0, -1.0, 0.01)])
def test_bad_profile_inputs(args):
    with pytest.raises(ConfigError, match="allowed"):
        trapezoid(*args)


def test_a_move_of_years_is_refused_before_any_array_is_made():
    # 1000 m at 1 cm/s on a 10 us cycle: 1e10 cycles; refused with the numbers (stillhook.checks.MAX_MOVE_SAMPLES)
    with pytest.raises(ConfigError, match=r"drive cycles of a 1000 m move .*1e\+10 is above the limit of 4e\+05"):
        trapezoid(1000.0, 0.01, 0.005, 1e-5)
