"""Zero-phase decimation against scipy.signal.resample_poly (the reference library), and its filter's maths."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import firwin, resample_poly

from stillhook.commission.decimation import decimate_zero_phase, lowpass_taps
from stillhook.errors import ConfigError


@pytest.mark.parametrize("n, q", [(1, 3), (5, 3), (37, 40), (100, 7), (1000, 2), (1001, 10), (12345, 25),
                                  (250, 250), (4096, 64)])
def test_matches_scipy_resample_poly(n, q):
    # Reference: scipy.signal.resample_poly(x, 1, q) with its defaults (Kaiser beta 5, half length 10 q,
    # zero padding); scipy's polyphase sums run in another order, hence rounding-level differences.
    rng = np.random.default_rng(n * 1000 + q)
    x = rng.normal(size=n) * 10.0 ** rng.uniform(-3, 3) + rng.normal()
    ref = resample_poly(x, 1, q)
    y = decimate_zero_phase(x, q)
    assert y.shape == ref.shape
    np.testing.assert_allclose(y, ref, rtol=0, atol=1e-12 * max(1.0, np.max(np.abs(x))))


@pytest.mark.parametrize("q", [2, 5, 16, 50])
def test_taps_are_scipy_firwin_kaiser_design(q):
    # scipy.signal.firwin(2 H + 1, 1/q, window=("kaiser", 5.0)) is the filter resample_poly designs.
    np.testing.assert_allclose(lowpass_taps(q), firwin(20 * q + 1, 1.0 / q, window=("kaiser", 5.0)),
                               rtol=0, atol=1e-15)


def test_low_pass_passes_the_band_and_stops_aliases():
    # Kaiser window, beta = 5: ripple delta ~ 10^(-A/20) with A ~ 55 dB, transition width
    # dw = (A - 8) / (2.285 M) = 1.03 / q rad/sample for M = 20 q (Kaiser's formulas, Oppenheim & Schafer
    # 2010, eqs. 7.62-7.63, from memory). So |H| ~ 1 up to 0.8 x the new Nyquist frequency 0.5 / q
    # (cycles per input sample) and under -50 dB from 1.2 x it, on the filter's frequency response.
    q = 10
    h = lowpass_taps(q)
    j = np.arange(len(h)) - (len(h) - 1) // 2

    def gain(f):
        return abs(np.sum(h * np.exp(-2j * np.pi * f * j)))

    assert gain(0.0) == pytest.approx(1.0, abs=1e-14)
    assert max(abs(gain(f) - 1.0) for f in np.linspace(0.0, 0.4 / q, 100)) < 0.01
    assert max(gain(f) for f in np.linspace(0.6 / q, 0.5, 1000)) < 10 ** (-50 / 20)


def test_factor_one_is_a_copy_and_bad_input_is_refused():
    x = np.arange(4.0)
    y = decimate_zero_phase(x, 1)
    assert np.array_equal(y, x) and y is not x
    with pytest.raises(ConfigError, match="integer >= 1"):
        decimate_zero_phase(x, 0)
    with pytest.raises(ConfigError, match="integer >= 1"):
        decimate_zero_phase(x, 2.5)
    with pytest.raises(ConfigError, match="1-D"):
        decimate_zero_phase(np.ones((2, 2)), 2)
