"""Notch coefficients for the runtime: exact DC gain, notch shift against published values, escalation."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import iirnotch

from stillhook.errors import EmitError
from stillhook.firmware.notch_tables import choose_notch_format, dc_gain, quantize_notch
from stillhook.notch.design import design_notches
from stillhook.notch.rounding import quantize_sos


def _iirnotch_sos(f0, Q, fs):
    # scipy.signal.iirnotch: Orfanidis, "Introduction to Signal Processing", 1996, section 11.3
    b, a = iirnotch(f0, Q, fs=fs)
    return np.array([[*b, *a]])


@pytest.mark.parametrize("fs, expect_hz", [(20.0, 0.38131), (50.0, 0.38046), (100.0, 0.37415)])
def test_q15_notch_shift_matches_the_computed_reference(fs, expect_hz):
    # Computed with scipy.signal.iirnotch (formulas of Orfanidis, Introduction to Signal Processing,
    # 1996, section 11.3), rounded as stated: a 0.38153 Hz, Q = 2 notch rounded to Q15 moves
    # to 0.38131 Hz at 20 Hz sampling, 0.38046 Hz at 50 Hz and 0.37415 Hz (-1.9 %) at 100 Hz.
    chk = quantize_notch(_iirnotch_sos(0.38153, 2.0, fs), "q15", 1.0 / fs, 0.01)
    assert chk.quantized_freqs_hz[0] == pytest.approx(expect_hz, abs=5e-6)
    assert chk.ok == (fs < 100.0)  # -1.9 % is past a 1 % tolerance


def test_q31_keeps_the_notch_to_five_digits():
    # Computed the same way: in Q31 the same notch stays exact to 5 digits
    for fs in (20.0, 50.0, 100.0, 200.0):
        chk = quantize_notch(_iirnotch_sos(0.38153, 2.0, fs), "q31", 1.0 / fs, 0.01)
        assert chk.ok and abs(chk.relative_shifts[0]) < 1e-5


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_dc_gain_is_exactly_one_and_the_null_stays_on_the_unit_circle(fmt):
    T = 0.005
    designs = [design_notches([0.2, 0.64], T, width_rule="tolerance").sos,
               design_notches([3.0, 7.0], T, width_rule="tolerance").sos,
               _iirnotch_sos(0.38153, 2.0, 100.0), _iirnotch_sos(4.0, 5.0, 200.0)]
    for sos in designs:
        chk = quantize_notch(sos, fmt, T, 0.5)
        # (B0 + B1 + B2) = N + A1 + A2 in integers, so the gain is exactly 1 (a speed filter then
        # moves the trolley exactly as far as the unfiltered command: common practice, no source)
        assert dc_gain(chk.table) == 1.0
        c = chk.table.coeffs
        assert np.array_equal(c[:, 0], c[:, 2])  # symmetric numerator: zeros on |z| = 1
        # every stored value is within two units of the plain rounding of the design
        F = 15 if fmt == "q15" else 31
        scale = 2.0 ** (F - chk.table.post_shift)
        cm = np.column_stack([sos[:, :3], -sos[:, 4:]]) * scale
        assert np.all(np.abs(c - cm) <= 2.0)


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_the_notch_design_reports_what_the_firmware_stores(fmt):
    # one rounding analysis: the design's quantization figures are those of the stored integers (wide notches:
    # the default band-wide notch at 0.2 Hz is lost in Q15, see test_escalation...)
    d = design_notches([0.2, 0.64], 0.005, width_rule="tolerance")
    chk = quantize_notch(d.sos, fmt, 0.005, 0.01)
    reported = d.quantization[fmt]
    assert d.post_shift[fmt] == chk.table.post_shift
    np.testing.assert_array_equal([q.quantized_frequency_hz for q in reported], chk.quantized_freqs_hz)
    np.testing.assert_array_equal([q.relative_shift for q in reported], chk.relative_shifts)
    assert all(q.dc_gain == 1.0 for q in reported) and dc_gain(chk.table) == 1.0
    np.testing.assert_array_equal(chk.table.sos(), quantize_sos(d.sos, fmt)[0])


def test_escalation_and_refusal_carry_the_numbers():
    sos = design_notches([0.2, 0.64], 0.005, width_rule="tolerance").sos  # wide notches: shifted, not lost
    chk, reason = choose_notch_format(sos, "q15", 0.005, 0.01, escalate=True)
    assert chk.table.fmt == "q31" and "Using Q31" in reason and "%" in reason
    with pytest.raises(EmitError, match=r"notch 1 moves from 0\.2 Hz to [\d.]+ Hz \([+-][\d.]+ %\).*1 %"):
        choose_notch_format(sos, "q15", 0.005, 0.01, escalate=False)
    ok, none = choose_notch_format(sos, "q31", 0.005, 0.01, escalate=False)
    assert none is None and ok.ok


def test_a_notch_lost_in_q15_is_reported_as_lost_and_unstable():
    # at 200 Hz the zero angle of a 0.02 Hz notch (6.3e-4 rad) is below what the Q15 grid can carry
    # (cos(theta) = 1 - 2e-7 vs a grid step of 6e-5): the zeros turn real and a pole reaches |z| >= 1
    chk = quantize_notch(_iirnotch_sos(0.02, 2.0, 200.0), "q15", 0.005, 0.01)
    assert not chk.ok and chk.lost[0]
    assert any("lost" in p for p in chk.problems()) and any("unstable" in p for p in chk.problems())
    assert quantize_notch(_iirnotch_sos(0.02, 2.0, 200.0), "q31", 0.005, 0.01).ok
