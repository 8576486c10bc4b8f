"""Shaper type, residual vibration V and the closed-form shapers against their published definitions."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stillhook.errors import DesignError
from stillhook.shaping.closed_forms import binomial, ei, ei2, ei3, umzv, zv, zvd, zvdd
from stillhook.shaping.shaper import (
    Shaper,
    insensitive_band_hz,
    insensitivity_width,
    sensitivity_curve,
    worst_vibration,
)


def K(zeta):
    return math.exp(-zeta * math.pi / math.sqrt(1 - zeta * zeta))


# -- V itself, against a direct simulation of a damped oscillator ---------------------------------
@pytest.mark.parametrize("zeta", [0.0, 0.05, 0.3])
def test_residual_vibration_matches_simulated_oscillator(zeta):
    # V is the ratio of the residual oscillation left by the impulse sequence to that of a single
    # unit impulse applied at the last impulse time (Singer & Seering, ASME JDSMC 112(1):76-82, 1990).
    # Checked against the exact step responses of x'' + 2 zeta w x' + w^2 x = w^2 u, computed with the
    # matrix exponential (scipy.linalg.expm as the reference), superposed for the shaped step.
    from scipy.linalg import expm

    w = 2 * math.pi * 0.7
    s = Shaper([0.0, 0.31, 0.9, 1.4], [0.2, 0.3, 0.1, 0.4])
    A = np.array([[0.0, 1.0], [-w * w, -2 * zeta * w]])
    B = np.array([0.0, w * w])
    aug = np.zeros((3, 3))
    aug[:2, :2], aug[:2, 2] = A, B
    t = np.linspace(6.0, 12.0, 601)
    phi = expm(aug * (t[1] - t[0]))

    def step(tau):  # output after a unit input step applied tau seconds ago, from rest
        z = [expm(aug * tau[0]) @ np.array([0.0, 0.0, 1.0])]
        for _ in range(tau.size - 1):
            z.append(phi @ z[-1])
        return np.array(z)

    def residual_amplitude(times, amps):
        y = sum(a * step(t - ti)[:, 0] for ti, a in zip(times, amps, strict=True))
        wd = w * math.sqrt(1 - zeta * zeta)
        # fit x - 1 = e^{-zeta w t} (a cos wd t + b sin wd t): the amplitude referred to t = 0
        basis = np.exp(-zeta * w * t)[:, None] * np.stack([np.cos(wd * t), np.sin(wd * t)], 1)
        coef, *_ = np.linalg.lstsq(basis, y - 1.0, rcond=None)
        return math.hypot(*coef)

    shaped = residual_amplitude(s.times_s, s.amplitudes)
    single = residual_amplitude([s.duration_s], [1.0])
    assert s.residual_vibration(w, zeta) == pytest.approx(shaped / single, rel=1e-8)


def test_residual_vibration_is_vectorized_over_any_shape():
    s = zvd(1.0)
    w = 2 * math.pi * np.linspace(0.1, 3.0, 10000).reshape(100, 100)
    v = s.residual_vibration(w)
    assert v.shape == (100, 100)
    # ZVD undamped: V = cos^2(pi r / 2) for r = w / w0 (from [1, 2, 1]/4 at half periods, derived)
    r = w / (2 * math.pi)
    np.testing.assert_allclose(v, np.cos(np.pi * r / 2) ** 2, atol=1e-12)


def test_half_cycle_posicast_equals_zv():
    # O.J.M. Smith, "Posicast control of damped oscillatory systems", Proc. IRE 45(9):1249-1255, 1957:
    # a step split into 1/(1 + d) now and d/(1 + d) half a damped period later, d = the overshoot
    # ratio exp(-zeta pi / sqrt(1 - zeta^2)), ends the oscillation. That is the ZV shaper.
    for zeta in (0.0, 0.1, 0.4):
        d = K(zeta)
        f = 0.35
        Td = 1 / (f * math.sqrt(1 - zeta**2))
        s = zv(f, zeta)
        np.testing.assert_allclose(s.times_s, [0.0, Td / 2], rtol=1e-12)
        np.testing.assert_allclose(s.amplitudes, [1 / (1 + d), d / (1 + d)], rtol=1e-12)


# -- closed forms ----------------------------------------------------------------------------------
@pytest.mark.parametrize("zeta", [0.0, 0.02, 0.15, 0.5])
def test_zv_zvd_zvdd_formulas_and_zero_vibration_with_damping(zeta):
    # Singer & Seering, ASME JDSMC 112(1):76-82, 1990: ZV [1, K]/(1+K) at [0, Td/2];
    # ZVD [1, 2K, K^2]/(1+K)^2 at [0, Td/2, Td]; ZVDD the binomial (1 + K)^3 at half periods.
    f = 0.42
    half = 0.5 / (f * math.sqrt(1 - zeta**2))
    k = K(zeta)
    for s, coeffs in ((zv(f, zeta), [1, k]), (zvd(f, zeta), [1, 2 * k, k * k]),
                      (zvdd(f, zeta), [1, 3 * k, 3 * k * k, k**3])):
        c = np.array(coeffs)
        np.testing.assert_allclose(s.amplitudes, c / c.sum(), rtol=1e-12)
        np.testing.assert_allclose(s.times_s, half * np.arange(c.size), rtol=1e-12)
        assert s.vibration_at_hz(f, zeta) < 1e-12
    # derivative conditions: V ~ |dw|^n near the design point for the n-th binomial
    w0 = 2 * math.pi * f
    for n in (1, 2, 3):
        s = binomial(n, f, zeta)
        v1, v2 = s.residual_vibration(w0 * 1.001, zeta), s.residual_vibration(w0 * 1.002, zeta)
        assert v2 / v1 == pytest.approx(2.0**n, rel=0.02)


def test_ei_undamped_formula():
    # Singhose, Seering & Singer, J. Mech. Design 116(2):654-659, 1994:
    # [(1+V)/4, (1-V)/2, (1+V)/4] at [0, T/2, T]; V(w0) = Vtol, and V = 0 on either side.
    for V in (0.02, 0.05, 0.1):
        s = ei(0.5, 0.0, V)
        np.testing.assert_allclose(s.amplitudes, [(1 + V) / 4, (1 - V) / 2, (1 + V) / 4], rtol=1e-12)
        np.testing.assert_allclose(s.times_s, [0.0, 1.0, 2.0], rtol=1e-12)
        assert s.vibration_at_hz(0.5) == pytest.approx(V, rel=1e-9)


def _humps_and_zeros(s, f0, zeta, lo=0.3, hi=1.7):
    f = np.linspace(lo * f0, hi * f0, 200001)
    v = s.vibration_at_hz(f, zeta)
    i = np.arange(1, v.size - 1)
    maxima = v[i][(v[i] > v[i - 1]) & (v[i] >= v[i + 1])]
    minima = v[i][(v[i] < v[i - 1]) & (v[i] <= v[i + 1])]
    return maxima, minima


@pytest.mark.parametrize("zeta", [0.0, 0.05])
@pytest.mark.parametrize("maker, humps", [(ei, 1), (ei2, 2), (ei3, 3)])
def test_ei_family_humps_peak_at_tolerance(maker, humps, zeta):
    # Multi-hump EI: Singhose, Porter, Tuttle & Singer, ASME JDSMC 119(2):320-326, 1997 (from
    # memory): inside the insensitive region V touches Vtol at each hump and is 0 between them.
    V, f0 = 0.05, 0.8
    s = maker(f0, zeta, V)
    maxima, minima = _humps_and_zeros(s, f0, zeta)
    inside = maxima[maxima < 0.5]
    assert inside.size == humps
    np.testing.assert_allclose(inside, V, rtol=1e-5)
    assert np.sum(minima < 1e-4) == humps + 1


def test_ei2_ei3_undamped_formulas():
    # Singhose, Porter, Tuttle & Singer, ASME JDSMC 119(2):320-326, 1997 (formulas from memory):
    # two-hump EI A1 = A4 = (3X^2 + 2X + 3V^2)/(16X), X = (V^2 (sqrt(1 - V^2) + 1))^(1/3), A2 = A3 = 1/2 - A1;
    # three-hump EI A1 = A5 = (1 + 3V + 2 sqrt(2V(V+1)))/16, A2 = A4 = (1 - V)/4, A3 = 1 - 2(A1 + A2).
    V = 0.05
    X = (V * V * (math.sqrt(1 - V * V) + 1)) ** (1 / 3)
    a1 = (3 * X * X + 2 * X + 3 * V * V) / (16 * X)
    np.testing.assert_allclose(ei2(1.0, 0.0, V).amplitudes, [a1, 0.5 - a1, 0.5 - a1, a1], rtol=1e-12)
    b1, b2 = (1 + 3 * V + 2 * math.sqrt(2 * V * (V + 1))) / 16, (1 - V) / 4
    np.testing.assert_allclose(ei3(1.0, 0.0, V).amplitudes, [b1, b2, 1 - 2 * (b1 + b2), b2, b1], rtol=1e-12)
    np.testing.assert_allclose(ei3(1.0, 0.0, V).times_s, 0.5 * np.arange(5), rtol=1e-12)


def test_damped_ei_matches_published_curve_fit():
    # Damped EI curve fit (Singhose, Seering & Singer 1994; coefficients from memory, so checked
    # loosely): A1 = 0.24968 + 0.24961 V + 0.80008 z + 1.23328 V z + 0.49599 z^2 + 3.17316 V z^2,
    # A3 = 0.25149 + 0.21474 V - 0.83249 z + 1.41498 V z + 0.83249 z^2 - 4.90094 V z^2,
    # t2 = (0.49999 + 0.46159 V z + 4.26169 V z^2 + 1.75601 z^3 + 8.57843 V z^3) T.
    V, z, f = 0.05, 0.1, 1.0
    s = ei(f, z, V)
    a1 = 0.24968 + 0.24961 * V + 0.80008 * z + 1.23328 * V * z + 0.49599 * z * z + 3.17316 * V * z * z
    a3 = 0.25149 + 0.21474 * V - 0.83249 * z + 1.41498 * V * z + 0.83249 * z * z - 4.90094 * V * z * z
    t2 = 0.49999 + 0.46159 * V * z + 4.26169 * V * z * z + 1.75601 * z**3 + 8.57843 * V * z**3
    assert s.amplitudes[0] == pytest.approx(a1, abs=2e-3)
    assert s.amplitudes[2] == pytest.approx(a3, abs=2e-3)
    assert s.times_s[1] == pytest.approx(t2 / f, abs=2e-3)


def test_umzv_negative_impulses_zero_vibration_and_overshoot_flag():
    # UM-ZV: [1, -1, 1] at [0, T/6, T/3] (Singhose, Singer & Seering, ASME JDSMC 119(2):198-205, 1997,
    # from memory); damped times solved from V(w0) = 0.
    s = umzv(0.5)
    np.testing.assert_allclose(s.times_s, [0.0, 1 / 3, 2 / 3], rtol=1e-12)
    np.testing.assert_array_equal(s.amplitudes, [1.0, -1.0, 1.0])
    assert s.vibration_at_hz(0.5) < 1e-12
    assert s.overshoots_command and s.command_gain == 3.0
    assert s.speed_range_factor == (-1.0, 2.0)
    d = umzv(0.5, 0.1)
    assert d.vibration_at_hz(0.5, 0.1) < 1e-10 and d.overshoots_command
    assert not zvd(0.5).overshoots_command
    # a short move shaped by UM-ZV really leaves [0, v_max]: the trolley reverses
    Ts = 1 / 60
    on_grid = Shaper([0.0, 20 * Ts, 40 * Ts], [1.0, -1.0, 1.0])
    v = np.concatenate([np.linspace(0, 1, 6), np.linspace(1, 0, 6)[1:]])
    y = on_grid.apply(v, Ts)
    assert y.min() == pytest.approx(-1.0) and v.min() == 0.0


# -- insensitivity -----------------------------------------------------------------------------------
@pytest.mark.parametrize("maker, width", [
    (zv, 0.0637), (zvd, 0.2871), (zvdd, 0.4804), (ei, 0.3994), (ei2, 0.7245), (ei3, 0.9639), (umzv, 0.0551)])
def test_five_percent_insensitivity_widths_undamped(maker, width):
    # Computed from the formulas of the sources named here; Vaughan, Yano & Singhose, "Comparison of robust input
    # shapers", J. Sound Vib. 315:797-815, 2008 rounds them to 0.06, 0.29, 0.40, 0.73, 0.96-0.97.
    s = maker(0.37) if maker in (zv, zvd, zvdd, umzv) else maker(0.37, 0.0, 0.05)
    assert insensitivity_width(s, 0.37, 0.05) == pytest.approx(width, abs=1e-4)


def test_zv_width_closed_form():
    # ZV: V = |cos(pi r / 2)| undamped, so V <= Vtol for |r - 1| <= 2 asin(Vtol)/pi (derived).
    for tol in (0.01, 0.05, 0.2):
        assert insensitivity_width(zv(2.0), 2.0, tol) == pytest.approx(4 * math.asin(tol) / math.pi, rel=1e-8)


def test_insensitive_band_edges_hold_tolerance_and_heavy_damping_is_unbounded():
    s = ei2(0.6, 0.0, 0.05)
    lo, hi = insensitive_band_hz(s, 0.6, 0.05)
    assert s.vibration_at_hz(lo) == pytest.approx(0.05, rel=1e-6)
    assert s.vibration_at_hz(hi) == pytest.approx(0.05, rel=1e-6)
    assert s.vibration_at_hz(np.linspace(lo, hi, 5001)).max() <= 0.05 * (1 + 1e-9)
    # heavy damping: the residual decays during the shaper, so V stays small at high frequency
    lo, hi = insensitive_band_hz(zvd(1.0, 0.5), 1.0, 0.05, 0.5)
    assert math.isinf(hi) and 0.0 < lo < 1.0
    # mis-tuned: V(f0) above the tolerance -> empty band
    assert insensitive_band_hz(zv(1.0), 1.2, 0.05) == (1.2, 1.2)


def test_worst_vibration_and_sensitivity_curve():
    s = zvd(1.0)
    v, f = worst_vibration(s, 0.8, 1.1)
    assert f == pytest.approx(0.8) and v == pytest.approx(math.cos(math.pi * 0.8 / 2) ** 2, rel=1e-9)
    v, f = worst_vibration(ei(1.0), 0.95, 1.05)  # interior maximum: the EI hump at f0
    assert v == pytest.approx(0.05, rel=1e-6) and f == pytest.approx(1.0, abs=1e-4)
    r, vv = sensitivity_curve(s, 1.0, n=200)
    assert r.shape == vv.shape == (200,)
    assert r[np.argmin(vv)] == pytest.approx(1.0) and vv.min() < 1e-12


# -- the type ----------------------------------------------------------------------------------------
def test_shaper_validation_errors():
    with pytest.raises(DesignError, match="sum to 1"):
        Shaper([0.0, 1.0], [0.5, 0.6])
    with pytest.raises(DesignError, match="start at 0"):
        Shaper([0.1, 1.0], [0.5, 0.5])
    with pytest.raises(DesignError, match="ascending"):
        Shaper([0.0, 1.0, 1.0], [0.2, 0.3, 0.5])
    with pytest.raises(DesignError, match="as many"):
        Shaper([0.0, 1.0], [1.0])
    with pytest.raises(DesignError, match="finite"):
        Shaper([0.0, float("nan")], [0.5, 0.5])
    for bad in (0.0, -1.0, float("inf")):
        with pytest.raises(DesignError, match="frequency"):
            zv(bad)
    for bad in (1.0, -0.1):
        with pytest.raises(DesignError, match="damping"):
            zvd(1.0, bad)
    for bad in (0.0, 1.0):
        with pytest.raises(DesignError, match="tolerance"):
            ei(1.0, 0.0, bad)


def test_grid_delays_and_apply_match_numpy_convolution():
    Ts = 0.01
    s = Shaper([0.0, 0.05, 0.12], [0.25, 0.5, 0.25])
    assert s.on_grid(Ts) and not s.on_grid(0.007)
    np.testing.assert_array_equal(s.delays_cycles(Ts), [0, 5, 12])
    with pytest.raises(DesignError, match="not whole"):
        s.delays_cycles(0.007)
    v = np.random.default_rng(1).uniform(0, 1, 200)
    kernel = np.zeros(13)
    kernel[[0, 5, 12]] = s.amplitudes
    np.testing.assert_allclose(s.apply(v, Ts), np.convolve(v, kernel), atol=1e-15)  # numpy as reference
    assert s.apply(v, Ts).sum() == pytest.approx(v.sum())  # unity gain: same distance travelled


def test_from_impulses_sorts_merges_and_normalizes():
    s = Shaper.from_impulses([0.5, 0.2, 0.2 + 1e-12, 0.9], [1.0, 1.0, 1.0, 0.0])
    np.testing.assert_allclose(s.times_s, [0.0, 0.3])
    np.testing.assert_allclose(s.amplitudes, [2 / 3, 1 / 3])
    with pytest.raises(DesignError, match="sum to 0"):
        Shaper.from_impulses([0.0, 1.0], [1.0, -1.0])


# -- properties (hypothesis) ---------------------------------------------------------------------------
freq = st.floats(0.05, 5.0)
zeta = st.floats(0.0, 0.3)
makers = st.sampled_from([zv, zvd, zvdd, umzv, lambda f, z: binomial(4, f, z)])


@settings(max_examples=60, deadline=None)
@given(makers, freq, zeta)
def test_property_closed_forms_unity_gain_sorted_times_zero_vibration(maker, f, z):
    s = maker(f, z)
    assert s.amplitudes.sum() == pytest.approx(1.0, abs=1e-12)
    assert s.times_s[0] == 0.0 and np.all(np.diff(s.times_s) > 0)
    assert s.vibration_at_hz(f, z) < 1e-9


@settings(max_examples=25, deadline=None)
@given(st.sampled_from([ei, ei2, ei3]), freq, st.floats(0.0, 0.15), st.floats(0.01, 0.15))
def test_property_ei_family(maker, f, z, tol):
    s = maker(f, z, tol)
    assert s.amplitudes.sum() == pytest.approx(1.0, abs=1e-12) and np.all(s.amplitudes > 0)
    assert np.all(np.diff(s.times_s) > 0)
    # V at the design point: Vtol for the odd-hump shapers, 0 for two-hump EI (a zero sits at f0)
    assert s.vibration_at_hz(f, z) == pytest.approx(0.0 if maker is ei2 else tol, abs=1e-8)


impulses = st.lists(st.tuples(st.floats(0.0, 5.0), st.floats(0.05, 1.0)), min_size=1, max_size=5)


@settings(max_examples=60, deadline=None)
@given(impulses, impulses, st.floats(0.1, 10.0), zeta)
def test_property_convolution_commutes_and_multiplies_vibration(a, b, w, z):
    sa = Shaper.from_impulses([t for t, _ in a], [x for _, x in a])
    sb = Shaper.from_impulses([t for t, _ in b], [x for _, x in b])
    ab, ba = sa.convolve(sb), sb.convolve(sa)
    np.testing.assert_allclose(ab.times_s, ba.times_s, atol=1e-12)
    np.testing.assert_allclose(ab.amplitudes, ba.amplitudes, atol=1e-12)
    assert ab.amplitudes.sum() == pytest.approx(1.0)
    # V of a convolution is the product (same pole): Singer & Seering 1990 V with the decay factors
    assert ab.residual_vibration(w, z) == pytest.approx(sa.residual_vibration(w, z) * sb.residual_vibration(w, z),
                                                       rel=1e-9, abs=1e-12)
