"""Drive-cycle effects: rounding, splitting and re-solving impulses on the cycle grid."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from stillhook.errors import DesignError
from stillhook.shaping.closed_forms import ei, umzv, zv, zvd
from stillhook.shaping.cycle_grid import grid_effects, to_cycle_grid


def test_murphy_watanabe_example_round_split_resolve():
    # Digital shapers on a sample grid: Murphy & Watanabe, IEEE Trans. Robotics & Automation
    # 8(2):285-289, 1992 (from memory). Computed example (V formula of Singer & Seering 1990):
    # ZV at 0.38153 Hz, Ts = 0.05 s:
    # nearest-sample rounding leaves 1.26 % (bound w Ts / 4 = 3.0 %), a linear split 0.06 %,
    # three impulses solved on the grid 0 %.
    f, Ts = 0.38153, 0.05
    e = grid_effects(zv(f), Ts, [f])
    assert e["round"]["vibration_at_design"][0] == pytest.approx(0.0126, abs=5e-5)
    assert e["round"]["vibration_at_design"][0] <= 2 * math.pi * f * Ts / 4
    assert e["split"]["vibration_at_design"][0] == pytest.approx(0.0006, abs=5e-5)
    assert e["resolve"]["vibration_at_design"][0] < 1e-12
    assert e["resolve"]["n_impulses"] == 3


@pytest.mark.parametrize("remedy", ["round", "split", "resolve"])
def test_remedies_put_impulses_on_the_grid_with_unity_gain(remedy):
    Ts = 0.004
    s = ei(0.37, 0.01).convolve(zvd(1.1, 0.01))
    g = to_cycle_grid(s, Ts, remedy=remedy, freqs_hz=[0.37, 1.1], damping_ratio=0.01)
    assert g.on_grid(Ts)
    assert g.amplitudes.sum() == pytest.approx(1.0, abs=1e-12)
    assert np.all(g.amplitudes >= 0)
    delays = g.delays_cycles(Ts)
    assert delays[0] == 0 and np.all(np.diff(delays) > 0)


def test_resolve_keeps_zero_and_slope_of_zvd_and_the_ei_hump():
    Ts, f, zeta = 0.05, 0.43, 0.02
    g = to_cycle_grid(zvd(f, zeta), Ts, remedy="resolve", freqs_hz=[f], damping_ratio=zeta)
    w0 = 2 * math.pi * f
    assert g.residual_vibration(w0, zeta) < 1e-12
    # slope zero too: V grows quadratically, not linearly, away from the design point
    v1, v2 = g.residual_vibration(w0 * 1.001, zeta), g.residual_vibration(w0 * 1.002, zeta)
    assert v2 / v1 == pytest.approx(4.0, rel=0.05)
    h = to_cycle_grid(ei(f, zeta), Ts, remedy="resolve", freqs_hz=[f], damping_ratio=zeta)
    # H(s_p) is kept, so V changes only by the decay over the shift of the last impulse (<= Ts):
    # V_grid = exp(-zeta w (t_n,grid - t_n)) V
    shift = h.duration_s - ei(f, zeta).duration_s
    assert abs(shift) <= Ts
    assert h.residual_vibration(w0, zeta) == pytest.approx(0.05 * math.exp(-zeta * w0 * shift), rel=1e-9)


def test_resolve_handles_negative_shapers_and_needs_frequencies():
    Ts = 0.02
    g = to_cycle_grid(umzv(0.7), Ts, remedy="resolve", freqs_hz=[0.7])
    assert g.on_grid(Ts) and g.overshoots_command and g.vibration_at_hz(0.7) < 1e-12
    with pytest.raises(DesignError, match="freqs_hz"):
        to_cycle_grid(zv(0.7), Ts, remedy="resolve")
    with pytest.raises(DesignError, match="remedy"):
        to_cycle_grid(zv(0.7), Ts, remedy="nearest")
    with pytest.raises(DesignError, match="cycle_s"):
        to_cycle_grid(zv(0.7), 0.0)


def test_on_grid_shaper_is_returned_unchanged():
    s = zv(1.0)  # impulses at 0 and 0.5 s: on a 0.01 s grid already
    g = to_cycle_grid(s, 0.01, remedy="round")
    np.testing.assert_array_equal(g.amplitudes, s.amplitudes)
    np.testing.assert_allclose(g.times_s, s.times_s)


@settings(max_examples=40, deadline=None)
@given(st.floats(0.05, 2.0), st.floats(0.001, 0.05), st.floats(0.0, 0.2))
@example(0.0625, 0.0031106655535154057, 0.0625)  # ~5,000 cycles per period: needs the exact polish
def test_property_split_beats_round_and_resolve_is_exact(f, Ts, zeta):
    if f > 0.25 / Ts:  # keep at least four samples per period
        return
    s = zvd(f, zeta)
    e = grid_effects(s, Ts, [f], zeta)
    # rounding moves each impulse by <= Ts/2: the phase error bound w Ts / 2 on each of the impulses
    assert e["round"]["vibration_at_design"][0] <= 2 * math.pi * f * Ts / 2 + 1e-12
    assert e["resolve"]["vibration_at_design"][0] < 1e-9
