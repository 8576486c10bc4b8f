"""Notch design: checks against scipy, python-control, Orfanidis's digital notch and the notch's own maths."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stillhook.errors import ConfigError, DesignError, StillhookError
from stillhook.notch.design import band_centre_hz, design_notches, notch_section, pole_damping_for_band
from stillhook.notch.transfer import cascade_tf


def _iirnotch_pole_damping(f0_hz: float, Q: float, fs_hz: float) -> float:
    """zeta_p of our prewarped design that reproduces scipy.signal.iirnotch(f0, Q, fs).

    Orfanidis, Introduction to Signal Processing, Prentice Hall, 1996, section 11.3: the digital
    notch is the bilinear image of (s^2 + W0^2)/(s^2 + dW s + W0^2) with W0 = tan(w0/2) and
    beta = tan(dw/2) = dW / (1 + W0^2), dw = 2 pi (f0/Q) / fs the digital -3 dB width. Our prototype
    scaled by the prewarp constant has dW = 2 zeta_p W0, so zeta_p = beta (1 + W0^2) / (2 W0).
    """
    W0 = math.tan(math.pi * f0_hz / fs_hz)
    beta = math.tan(math.pi * (f0_hz / Q) / fs_hz)
    return beta * (1.0 + W0 * W0) / (2.0 * W0)


@pytest.mark.parametrize("f0, Q, fs", [(0.5, 2.0, 100.0), (0.38153, 2.0, 20.0), (0.2, 0.7, 200.0),
                                       (1.5, 10.0, 50.0), (4.0, 1.0, 10.0)])
def test_matches_scipy_iirnotch(f0, Q, fs):
    # scipy.signal.iirnotch follows Orfanidis, Introduction to Signal Processing, 1996, section 11.3.
    from scipy.signal import iirnotch

    b, a = iirnotch(f0, Q, fs)
    zeta_p = _iirnotch_pole_damping(f0, Q, fs)
    # width_hz is the digital -3 dB width, which is iirnotch's f0 / Q (issue 11: stated width = actual width)
    design = design_notches(f0, 1.0 / fs, width_hz=f0 / Q)
    np.testing.assert_allclose(design.sos[0], np.concatenate([b, a]), rtol=0, atol=1e-12)
    assert design.sections[0].pole_damping == pytest.approx(zeta_p, rel=1e-12)
    assert design.sections[0].width_hz == pytest.approx(f0 / Q, rel=1e-12)


def test_iirnotch_reference_values():
    # Computed from Orfanidis's formulas (Introduction to Signal Processing, 1996, section 11.3) for
    # f0 = 0.5 Hz, Q = 2, fs = 100 Hz: b = [0.99220706, -1.98343494, 0.99220706], a = [1, -1.98343494, 0.98441413].
    zeta_p = _iirnotch_pole_damping(0.5, 2.0, 100.0)
    sos = design_notches(0.5, 0.01, width_hz=0.5 / 2.0).sos[0]
    assert design_notches(0.5, 0.01, width_hz=0.25).sections[0].pole_damping == pytest.approx(zeta_p, rel=1e-12)
    np.testing.assert_allclose(sos, [0.99220706, -1.98343494, 0.99220706, 1.0, -1.98343494, 0.98441413], atol=5e-9)


@pytest.mark.parametrize("f0, zeta_p, zeta_z, T", [(0.2, 0.5, 0.0, 0.005), (0.38, 2.0, 0.1, 0.05),
                                                   (1.2, 0.3, 0.03, 0.01), (0.15, 12.0, 0.5, 0.004)])
def test_matches_python_control_tustin_prewarp(f0, zeta_p, zeta_z, T):
    # python-control >= 0.9.1: sample_system(sys, Ts, method='tustin', prewarp_frequency=w0) is Tustin
    # with s = (w0 / tan(w0 T / 2)) (z - 1)/(z + 1) (python-control documentation).
    import control

    w = 2 * math.pi * f0
    Hc = control.tf([1.0, 2 * zeta_z * w, w * w], [1.0, 2 * zeta_p * w, w * w])
    Hd = control.sample_system(Hc, T, method="tustin", prewarp_frequency=w)
    num = np.ravel(Hd.num[0][0])
    den = np.ravel(Hd.den[0][0])
    expected = np.concatenate([num, den]) / den[0]
    np.testing.assert_allclose(notch_section(f0, zeta_p, zeta_z, T), expected, rtol=0, atol=1e-12)


@pytest.mark.parametrize("f0, T", [(0.2, 0.005), (0.7, 0.05), (2.0, 0.1), (0.05, 0.001)])
def test_exact_null_at_notch_after_prewarping(f0, T):
    # Tustin with prewarping at w0 maps s = j w0 onto z = exp(j w0 T) exactly (Oppenheim & Schafer,
    # Discrete-Time Signal Processing, 3rd ed., 2010, section 7.2), so the zeros of s^2 + w0^2 land at f0.
    d = design_notches(f0, T, width_rule="tolerance")
    assert abs(d.frequency_response([f0])[0]) < 1e-9
    # and the response is not zero a little away from the notch
    assert abs(d.frequency_response([1.5 * f0])[0]) > 0.01


def test_finite_depth_at_centre():
    # |H(j w0)| = zeta_z / zeta_p for the continuous notch (direct evaluation of H(s)); prewarping keeps
    # it at f0 exactly (Oppenheim & Schafer 2010, section 7.2).
    for f0, depth in ((0.3, 30.0), (0.9, 45.0)):
        d = design_notches(f0, 0.01, depth_db=depth)
        assert abs(d.frequency_response([f0])[0]) == pytest.approx(10 ** (-depth / 20), rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(f0=st.floats(0.02, 3.0), ratio=st.floats(1.0, 4.0), T=st.sampled_from([0.001, 0.004, 0.005, 0.02, 0.1]),
       depth=st.one_of(st.none(), st.floats(27.0, 120.0)))
def test_unit_dc_gain_and_stable_poles(f0, ratio, T, depth):
    # A notch has H(1) = 1 and its poles inside the unit circle (Tustin maps the open left half plane
    # into the unit disc; Oppenheim & Schafer 2010, section 7.2). DC gain exact in rational arithmetic
    # of the stored doubles: sum b == sum a.
    if f0 * ratio >= 0.45 / T:
        return
    d = design_notches([f0, f0 * ratio], T, depth_db=depth)
    for row in d.sos:
        assert row[3] == 1.0
        assert sum(map(Fraction, row[:3])) == sum(map(Fraction, row[3:]))
        assert np.max(np.abs(np.roots(row[3:]))) < 1.0
    assert d.max_pole_radius < 1.0
    assert abs(d.frequency_response([0.0])[0] - 1.0) < 1e-9
    # |H| <= 1 everywhere because zeta_z < zeta_p (direct evaluation of H(s))
    f = np.linspace(0.0, 0.5 / T, 2001)
    assert np.max(np.abs(d.frequency_response(f))) <= 1.0 + 1e-9


def test_python_control_export_matches_cascade():
    import control

    d = design_notches([0.2, 0.45], 0.005, width_rule="tolerance")
    H = cascade_tf(d)
    assert H.dt == 0.005
    f = np.array([0.05, 0.2, 0.3, 0.45, 2.0])
    z = np.exp(2j * math.pi * f * 0.005)
    np.testing.assert_allclose(np.ravel(H(z)), d.frequency_response(f), atol=1e-8)
    # dcgain through python-control (independent evaluation of the same polynomials); the expanded
    # 4th-order polynomials sum to ~1e-10 at z = 1, so double rounding leaves ~1e-7 there (the SOS is exact)
    assert abs(float(control.dcgain(H)) - 1.0) < 1e-5
    assert np.max(np.abs(control.poles(H))) < 1.0


def test_band_derived_width_meets_tolerance_at_band_edges():
    # Width rule: |H| = tol at the worse edge, |H| <= tol inside (|H|^2 = (u + zz^2)/(u + zp^2) is monotone
    # in u = ((1 - r^2)/(2 r))^2; direct evaluation of H(s)). Checked on the digital filter, single notch.
    T, tol = 0.005, 0.05
    d = design_notches(0.3, T, bands_hz=[(0.22, 0.41)], tolerance=tol, width_rule="tolerance")
    h = np.abs(d.frequency_response(np.linspace(0.22, 0.41, 3001)))
    assert np.max(h) == pytest.approx(tol, rel=1e-6)
    assert d.sections[0].band_worst_residual == pytest.approx(tol, rel=1e-6)
    assert not d.warnings or all("q15" in w for w in d.warnings)


def test_pole_damping_formula_against_bisection():
    # Independent check of zeta_p = sqrt(u_e (1 - tol^2)/(tol^2 - d^2)): solve |H(j w_e)| = tol for zeta_p
    # by bisection on the continuous H(s) evaluated with python-control at the prewarped edge frequency.
    import control
    from scipy.optimize import brentq

    f0, T, tol, d = 0.5, 0.01, 0.05, 0.01
    lo, hi = 0.4, 0.6
    zp = pole_damping_for_band(f0, (lo, hi), T, tol, d)
    w0 = 2 * math.pi * f0
    K = w0 / math.tan(w0 * T / 2)
    w_edge = max(K * math.tan(math.pi * hi * T), w0**2 / (K * math.tan(math.pi * lo * T)))

    def excess(zeta_p):
        H = control.tf([1, 2 * d * zeta_p * w0, w0**2], [1, 2 * zeta_p * w0, w0**2])
        return abs(H(1j * w_edge)) - tol

    assert zp == pytest.approx(brentq(excess, 1e-3, 100.0, xtol=1e-14), rel=1e-9)


def test_width_cap_warns_with_worst_residual():
    d = design_notches(0.3, 0.01, bands_hz=[(0.05, 1.8)], max_pole_damping=3.0, width_rule="tolerance")
    assert d.sections[0].pole_damping == 3.0
    assert any("above the 5 % tolerance" in w and "capped" in w for w in d.warnings)
    assert d.sections[0].band_worst_residual > 0.05


def test_user_width_and_depth_are_used():
    d = design_notches([0.2, 0.5], 0.005, width_hz=[0.1, 0.4], depth_db=40.0)
    s0, s1 = d.sections
    assert s0.width_hz == pytest.approx(0.1) and s1.width_hz == pytest.approx(0.4)
    assert s0.pole_damping == pytest.approx(0.1 / (2 * 0.2), rel=1e-3)  # analog 2 zeta_p f0 = width, f << 1/T
    assert s0.zero_damping / s0.pole_damping == pytest.approx(0.01)
    assert s0.depth_db == 40.0


def test_centroid_delay_matches_scipy_group_delay():
    # Group delay at DC of the digital cascade, by scipy.signal.group_delay (independent numerics),
    # close to sum 2 (zeta_p - zeta_z) / w0 of the continuous notches (d/dw of the phase of H(s) at 0).
    # Group delays of a cascade add; scipy evaluates each section (the product polynomial loses precision).
    from scipy.signal import group_delay

    d = design_notches([0.2, 0.6], 0.005, width_hz=[0.3, 0.5], depth_db=[30.0, 60.0])
    gd = sum(group_delay((row[:3], row[3:]), w=[1e-5])[1][0] for row in d.sos)
    assert d.centroid_delay_s == pytest.approx(gd * d.cycle_s, rel=1e-4)
    expected = sum(2 * (s.pole_damping - s.zero_damping) / (2 * math.pi * s.frequency_hz) for s in d.sections)
    assert d.centroid_delay_s == pytest.approx(expected, rel=1e-3)


def test_apply_pads_and_keeps_distance():
    from stillhook.sim.profiles import trapezoid

    T = 0.01
    v = trapezoid(5.0, 0.5, 0.25, T)
    d = design_notches([0.2, 0.4], T)
    y = d.apply(v)
    assert len(y) == len(v) + d.ring_out_samples()
    # DC gain 1: the filtered command travels the same distance (trapezoid-rule integral, up to the tail)
    assert T * np.sum(y) == pytest.approx(5.0, abs=5e-3)
    assert abs(y[-1]) < 1e-3 * np.max(np.abs(v))


@pytest.mark.parametrize("kwargs, error", [
    ({"freqs_hz": 60.0, "cycle_s": 0.01}, DesignError),              # above Nyquist (50 Hz)
    ({"freqs_hz": 50.0, "cycle_s": 0.01}, DesignError),              # at Nyquist
    ({"freqs_hz": 0.3, "cycle_s": 0.01, "depth_db": 20.0, "width_rule": "tolerance"}, DesignError),  # 10 % > 5 %
    ({"freqs_hz": -0.3, "cycle_s": 0.01}, ConfigError),
    ({"freqs_hz": float("nan"), "cycle_s": 0.01}, ConfigError),
    ({"freqs_hz": 0.3, "cycle_s": 0.0}, ConfigError),
    ({"freqs_hz": 0.3, "cycle_s": 0.01, "width_hz": -1.0}, ConfigError),
    ({"freqs_hz": [0.3, 0.5], "cycle_s": 0.01, "width_hz": [0.1]}, ConfigError),
    ({"freqs_hz": 0.3, "cycle_s": 0.01, "tolerance": 1.5}, ConfigError),
    ({"freqs_hz": 0.3, "cycle_s": 0.01, "bands_hz": [(0.4, 0.2)]}, DesignError),
    ({"freqs_hz": 0.3, "cycle_s": 0.01, "bands_hz": [(0.2, 0.4), (0.5, 0.6)]}, ConfigError),
    ({"freqs_hz": [], "cycle_s": 0.01}, ConfigError),
])
def test_bad_input_gives_one_clear_error(kwargs, error):
    with pytest.raises(error) as info:
        design_notches(kwargs.pop("freqs_hz"), kwargs.pop("cycle_s"), **kwargs)
    assert isinstance(info.value, StillhookError)
    assert "allowed" in str(info.value)


def test_pole_on_unit_circle_is_an_error():
    # zeta_p so large at w T ~ 6e-8 that the slow pole rounds onto z = 1 in double precision
    with pytest.raises(DesignError, match="strictly inside the unit circle"):
        design_notches(1e-6, 1e-5, bands_hz=[(1e-7, 1000.0)], width_rule="tolerance", max_pole_damping=1e12)


def test_as_dict_is_json_ready_and_deterministic():
    import json

    a = json.dumps(design_notches([0.2, 0.5], 0.005).as_dict(), allow_nan=False, indent=2)
    b = json.dumps(design_notches([0.2, 0.5], 0.005).as_dict(), allow_nan=False, indent=2)
    assert a == b
    data = json.loads(a)
    assert len(data["sos"]) == 2 and all(len(r) == 6 for r in data["sos"])
    assert data["sections"][0]["depth_db"] is None  # infinite depth
    assert set(data["quantization"]) == {"q15", "q31"}


# -- issue 11: the stated width is the digital filter's -3 dB width; the default covers the band, no more ----
def _measured_edges(d, f0: float) -> tuple[float, float]:
    """Frequencies where the single section's |H| = 1/sqrt(2), found by brentq on the digital response."""
    from scipy.optimize import brentq

    nyq = 0.5 / d.cycle_s

    def g(f):
        return abs(d.frequency_response([f])[0]) - 1 / math.sqrt(2)

    return brentq(g, 1e-9 * f0, f0, xtol=1e-14), brentq(g, f0, nyq * (1 - 1e-12), xtol=1e-14)


@pytest.mark.parametrize("f0, width, depth, T", [(0.64, 0.3, None, 0.005), (20.0, 8.0, None, 0.01),
                                                 (35.0, 10.0, 40.0, 0.01), (0.2, 0.1, 40.0, 0.005)])
def test_stated_width_is_the_measured_digital_width(f0, width, depth, T):
    # -3 dB width measured on the discretized filter (bisection on |H(e^jwT)|, independent of the formula);
    # at 20 Hz of a 50 Hz Nyquist the analog 2 zeta_p f0 would be off by a large fraction
    d = design_notches(f0, T, width_hz=width, depth_db=depth)
    lo, hi = _measured_edges(d, f0)
    assert hi - lo == pytest.approx(width, rel=1e-9) and d.sections[0].width_hz == pytest.approx(width, rel=1e-12)


def test_default_width_puts_the_minus_3_db_edges_on_the_band_edges():
    band = (0.3222, 1.256)  # the demo's hook-mode band (stillhook modes demo)
    f0 = band_centre_hz(*band, 0.005)
    d = design_notches(f0, 0.005, bands_hz=[band])
    lo, hi = _measured_edges(d, f0)
    assert (lo, hi) == pytest.approx(band, rel=1e-9)
    assert d.sections[0].width_hz == pytest.approx(band[1] - band[0], rel=1e-9)
    assert d.sections[0].band_worst_residual == pytest.approx(1 / math.sqrt(2), rel=1e-6)
    assert any("above the 5 % tolerance" in w for w in d.warnings)  # said, not hidden
