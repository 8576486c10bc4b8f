"""Fixed-point hazard of notch sections: where the notch lands after Q15 / Q31 rounding."""

from __future__ import annotations

import math

import numpy as np
import pytest

from stillhook.errors import ConfigError
from stillhook.notch.design import design_notches
from stillhook.notch.rounding import auto_post_shift, quantize_sos, quantized_notch_shift, section_notch_frequencies_hz


def _iirnotch_sos(f0, Q, fs):
    from scipy.signal import iirnotch

    b, a = iirnotch(f0, Q, fs)
    return np.concatenate([b, a])[None, :]


@pytest.mark.parametrize("fs, expected_hz", [(20.0, 0.38131), (50.0, 0.38046), (100.0, 0.37415)])
def test_q15_shift_reference_example(fs, expected_hz):
    # Computed example in the project's reference sheet, re-derived here independently below: a 0.38153 Hz,
    # Q = 2 notch (scipy.signal.iirnotch, Orfanidis 1996 section 11.3) stored in Q15 with post shift 1
    # (Arm CMSIS-DSP DF1 biquad convention, from memory) moves to these zero-angle frequencies.
    sos = _iirnotch_sos(0.38153, 2.0, fs)
    (shift,) = quantized_notch_shift(sos, "q15", 1.0 / fs)
    assert shift.quantized_frequency_hz == pytest.approx(expected_hz, abs=6e-6)
    assert shift.frequency_hz == pytest.approx(0.38153, abs=1e-9)
    assert shift.shift_hz == pytest.approx(shift.quantized_frequency_hz - 0.38153, abs=1e-9)
    # independent re-derivation: round c / 2 to 15 fractional bits (np.round), zeros by np.roots
    q = np.round(sos[0] / 2 * 2**15) / 2**15 * 2
    zeros = np.roots(q[:3])
    assert shift.quantized_frequency_hz == pytest.approx(np.max(np.angle(zeros)) * fs / (2 * math.pi), rel=1e-9)


def test_q31_keeps_the_reference_notch():
    # Same reference sheet: Q31 stays exact to 5 digits.
    for fs in (20.0, 50.0, 100.0):
        (shift,) = quantized_notch_shift(_iirnotch_sos(0.38153, 2.0, fs), "q31", 1.0 / fs)
        assert round(shift.quantized_frequency_hz, 5) == 0.38153
        assert abs(shift.relative_shift) < 1e-5


def test_zero_angle_is_the_null_of_the_rounded_section():
    # For b0 = b2 the zeros lie on the unit circle, so |H| of the rounded section is zero at the zero angle
    # (direct evaluation of the transfer function).
    sos = design_notches(0.4, 0.01).sos
    sos_q, _, _ = quantize_sos(sos, "q15")
    f = section_notch_frequencies_hz(sos_q, 0.01)[0]
    z = np.exp(-2j * math.pi * f * 0.01)
    b = sos_q[0, :3]
    assert abs(b[0] + b[1] * z + b[2] * z * z) < 1e-12


def test_post_shift_convention():
    # CMSIS-DSP DF1 biquads store coefficients in [-1, 1) and scale by 2^postShift (from memory);
    # a notch's a1 is near -2, so the shift is 1; stored integers times 2^(shift - bits) are the rounded values.
    sos = design_notches([0.2, 0.5], 0.005).sos
    for fmt, bits in (("q15", 15), ("q31", 31)):
        assert auto_post_shift(sos, fmt) == 1
        sos_q, stored, shift = quantize_sos(sos, fmt)
        assert shift == 1
        assert np.all(stored >= -(2**bits)) and np.all(stored <= 2**bits - 1)
        np.testing.assert_array_equal(sos_q[:, [0, 1, 2, 4, 5]], stored * 2.0 ** (shift - bits))
        # rounding to nearest is within half a unit; the exact-DC step moves b0, b2, a2 by at most
        # 1.5 units more, b1 and a1 not at all
        unit = 2.0 ** (shift - bits)
        assert np.max(np.abs(sos_q - sos)) <= 2.0 * unit
        assert np.max(np.abs(sos_q[:, [1, 4]] - sos[:, [1, 4]])) <= 0.5 * unit
        # and the rounded sections have DC gain exactly 1 (integers: B0 + B1 + B2 = N + A1 + A2)
        N = 2 ** (bits - shift)
        assert np.all(stored[:, :3].sum(axis=1) == N + stored[:, 3:].sum(axis=1))
    # small coefficients need no shift
    assert auto_post_shift([[0.5, 0.1, 0.2, 1.0, -0.3, 0.1]], "q15") == 0


def test_slow_notch_moves_in_q15_and_design_warns(capsys):
    # A 0.2 Hz notch at a 5 ms cycle: theta = 2 pi f T = 0.0063 rad, 1 - cos(theta) ~ 2e-5, below one Q15
    # step of b1 / 2 (3e-5), so Q15 cannot place it; Q31 can (steps of 5e-10).
    d = design_notches([0.2, 0.45], 0.005)
    q15 = d.quantization["q15"][0]
    assert abs(q15.relative_shift) > 0.01 or q15.lost
    assert abs(d.quantization["q31"][0].relative_shift) < 1e-4
    assert any(w.startswith("q15: notch 1") for w in d.warnings)
    assert not any(w.startswith("q31") for w in d.warnings)
    assert capsys.readouterr().out == ""  # warnings are data, not prints
    # only the chosen format warns
    assert not any("q15" in w for w in design_notches([0.2, 0.45], 0.005, warn_formats=("q31",)).warnings)


def test_lost_notch_is_flagged():
    # 0.05 Hz at 1 ms: 1 - cos(theta) ~ 5e-8, far below the Q15 step: the rounded zeros become real
    # (or sit at z = 1), so the section has no notch left.
    d = design_notches(0.05, 0.001, width_rule="tolerance")
    q = d.quantization["q15"][0]
    assert q.lost and q.quantized_frequency_hz == 0.0 and q.relative_shift == -1.0
    assert any("lost" in w for w in d.warnings)


def test_ties_round_toward_plus_infinity_as_the_firmware_does():
    # A coefficient exactly halfway between two Q15 steps rounds up (toward +infinity), the C runtime's
    # round_shift rule, also when negative: floor(x + 1/2) (Graham, Knuth & Patashnik, Concrete
    # Mathematics, 2nd ed., 1994, section 3.1). Section with DC gain 1, post shift 0, N = 2^15:
    # a1 = -(1000.5) / N is a tie; b1 = a1 so both move together, a2 = 0, b0 + b2 = 1.
    N = 2.0**15
    a1 = -1000.5 / N
    sos = [[0.5, a1, 0.5, 1.0, a1, 0.0]]
    _, stored, shift = quantize_sos(sos, "q15", post_shift=0)
    assert shift == 0 and stored[0, 1] == -1000 and stored[0, 3] == -1000  # not -1001 (away from zero)


def test_bad_format_and_sos():
    sos = design_notches(0.3, 0.01).sos
    with pytest.raises(ConfigError, match="allowed: 'q15', 'q31'"):
        quantized_notch_shift(sos, "q7", 0.01)
    with pytest.raises(ConfigError, match="shape"):
        quantized_notch_shift(sos[0], "q15", 0.01)
    with pytest.raises(ConfigError, match="a0 = 1"):
        quantized_notch_shift(sos * 2, "q15", 0.01)
    with pytest.raises(ConfigError, match="post_shift"):
        quantize_sos(sos, "q15", post_shift=-1)
