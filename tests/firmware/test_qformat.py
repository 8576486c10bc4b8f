"""Q-format arithmetic and the integer reference model (stillhook.firmware.qformat) against definitions."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stillhook.errors import EmitError
from stillhook.firmware.qformat import (
    BiquadModel,
    BiquadTable,
    ScheduleTable,
    quantize_amplitudes,
    round_shift,
    sample_limits,
    saturate,
    to_fixed,
)


# Round to nearest with ties up is floor(x + 1/2): Graham, Knuth & Patashnik, "Concrete Mathematics",
# 2nd ed., Addison-Wesley 1994, section 3.1. Evaluated here in exact rational arithmetic.
def textbook_round(v: int, s: int) -> int:
    return math.floor(Fraction(v, 2**s) + Fraction(1, 2))


@given(st.integers(-(2**62), 2**62), st.integers(1, 40))
def test_round_shift_matches_floor_x_plus_half(v, s):
    assert round_shift(v, s) == textbook_round(v, s)


def test_round_shift_ties_go_up_on_arrays():
    # exact ties: -1.5 -> -1, -0.5 -> 0, 0.5 -> 1, 1.5 -> 2 (floor(x + 1/2), Concrete Mathematics 3.1)
    v = np.array([-3, -1, 1, 3], dtype=np.int64)
    assert round_shift(v, 1).tolist() == [-1, 0, 1, 2]
    big = np.array([-(2**61) - 2**14, 2**61 + 2**14 - 1], dtype=np.int64)
    assert round_shift(big, 15).tolist() == [textbook_round(int(b), 15) for b in big]


@pytest.mark.parametrize("fmt, lo, hi", [("q15", -32768, 32767), ("q31", -(2**31), 2**31 - 1)])
def test_saturation_is_a_clamp_to_the_twos_complement_range(fmt, lo, hi):
    # Saturation overflow characteristic: Oppenheim & Schafer, "Discrete-Time Signal Processing",
    # 3rd ed., 2010, section 6.7 (from memory): values beyond the range take the nearest end value.
    assert sample_limits(fmt) == (lo, hi)
    v = np.array([lo - 10**6, lo - 1, lo, 0, hi, hi + 1, hi + 10**6], dtype=np.int64)
    assert saturate(v, fmt).tolist() == [lo, lo, lo, 0, hi, hi, hi]
    assert saturate(hi + 5, fmt) == hi and saturate(lo - 5, fmt) == lo


@given(st.floats(-2.0, 2.0, allow_nan=False))
def test_to_fixed_is_round_half_up_then_saturate(x):
    for fmt, F in (("q15", 15), ("q31", 31)):
        lo, hi = sample_limits(fmt)
        expect = min(max(math.floor(Fraction(x) * 2**F + Fraction(1, 2)), lo), hi)
        assert int(to_fixed([x], fmt)[0]) == expect


def test_one_is_not_representable_in_q15():
    # Q15 covers [-1, 1 - 2^-15] (common practice, no source): +1.0 saturates, -1.0 is exact
    assert to_fixed([1.0, -1.0, 0.5], "q15").tolist() == [32767, -32768, 16384]


# Largest-remainder (Hamilton) apportionment: Balinski & Young, "Fair Representation", 1982 (from memory):
# floor every quota, then give the leftover units to the largest fractional parts.
def hamilton(amplitudes, total: int) -> list[int]:
    quotas = [Fraction(a) * total for a in amplitudes]
    floors = [math.floor(q) for q in quotas]
    left = total - sum(floors)
    order = sorted(range(len(quotas)), key=lambda i: (-(quotas[i] - floors[i]), i))
    for i in order[:left]:
        floors[i] += 1
    return floors


@settings(max_examples=200)
@given(st.lists(st.integers(1, 10**6), min_size=1, max_size=40))
def test_amplitudes_sum_exactly_to_full_scale(weights):
    a = np.array(weights, dtype=float) / sum(weights)
    a[-1] = 1.0 - a[:-1].sum()  # make the float sum as close to 1 as a design's
    for fmt, F in (("q15", 15), ("q31", 31)):
        q = quantize_amplitudes(a, fmt)
        assert int(q.sum()) == 2**F
        assert np.all(np.abs(q - a * 2.0**F) < 1.0)
        assert q.tolist() == hamilton(a, 2**F)


def test_closed_form_shapers_quantize_exactly():
    # ZVD undamped [1/4, 1/2, 1/4]: Singer & Seering, ASME JDSMC 112(1), 1990 — exact in binary
    assert quantize_amplitudes([0.25, 0.5, 0.25], "q15").tolist() == [8192, 16384, 8192]
    # UM-ZV [1, -1, 1]: Singhose, Singer & Seering, ASME JDSMC 119(2), 1997 (from memory)
    assert quantize_amplitudes([1.0, -1.0, 1.0], "q31").tolist() == [2**31, -(2**31), 2**31]
    # thirds: one unit goes to the earliest of the tied remainders
    assert quantize_amplitudes([1 / 3, 1 / 3, 1 / 3], "q15").tolist() == [10923, 10923, 10922]


@pytest.mark.parametrize("amps, words", [([0.5, 0.4], "sum to"), ([2.0, -1.0], "exceeds 1"), ([], "non-empty")])
def test_bad_amplitudes_are_refused(amps, words):
    with pytest.raises(EmitError, match=words):
        quantize_amplitudes(amps, "q15")


def test_schedule_lookup_counts_thresholds_and_clamps():
    s = ScheduleTable(np.array([2000, 3000, 5000]), 1200, 9500, 0.001)
    rows, status = s.lookup([0, 1199, 1200, 1999, 2000, 2999, 3000, 5000, 9500, 9501, 2**32 - 1])
    assert rows.tolist() == [0, 0, 0, 0, 1, 1, 2, 3, 3, 3, 3]
    assert status.tolist() == [1, 1, 0, 0, 0, 0, 0, 0, 0, 2, 2]
    assert s.counts([1.2, 2.0004, 2.0005]).tolist() == [1200, 2000, 2001]


def _roundoff_bound(table: BiquadTable, n: int) -> float:
    """Worst-case output error (in LSB) of the rounded cascade vs the same coefficients in float.

    Each stage output is rounded once per sample (|e| <= 1/2 LSB); that error reaches the output
    through 1/A_k(z) and every later stage, so |error| <= 1/2 sum_k ||h_k||_1 (the L1-norm bound of
    rounding noise in fixed-point IIR filters: Oppenheim & Schafer, "Discrete-Time Signal Processing",
    3rd ed., 2010, section 6.9, from memory).
    """
    from scipy.signal import sosfilt

    sos = table.sos()
    bound = 0.0
    for k in range(len(sos)):
        imp = np.zeros(n)
        imp[0] = 1.0
        path = np.vstack([[1, 0, 0, *sos[k, 3:]], sos[k + 1:]])
        bound += 0.5 * np.abs(sosfilt(path, imp)).sum()
    return bound


@pytest.mark.parametrize("fmt, post_shift", [("q15", 1), ("q31", 1), ("q31", 3)])
def test_biquad_model_tracks_scipy_sosfilt_within_the_roundoff_bound(fmt, post_shift):
    from scipy.signal import iirnotch, sosfilt

    # a notch at 1/20 of the sample rate and a resonant low-pass: scipy designs (Orfanidis 1996, 11.3)
    b, a = iirnotch(5.0, 3.0, fs=100.0)
    sos = np.array([[*b, *a], [0.02, 0.04, 0.02, 1.0, -1.6, 0.68]])
    F = 15 if fmt == "q15" else 31
    scale = 2.0 ** (F - post_shift)
    cm = np.column_stack([sos[:, :3], -sos[:, 4:]])  # CMSIS order, feedback added
    table = BiquadTable(fmt, np.floor(cm * scale + 0.5).astype(np.int64), post_shift)
    rng = np.random.default_rng(3)
    lo, hi = sample_limits(fmt)
    x = (rng.uniform(-0.25, 0.25, 3000) * hi).astype(np.int64)  # small enough never to saturate
    y = BiquadModel(table).run(x)
    ref = sosfilt(table.sos(), x.astype(float))
    bound = _roundoff_bound(table, 3000)
    err = np.max(np.abs(y - ref))
    # sosfilt's own float error is below 1e-6 LSB here; the bound is about 26 LSB for these sections
    assert err <= bound + 1e-3
    assert bound < 50.0


def test_cmsis_layout_runs_the_scipy_filter_when_feedback_is_added():
    # Arm CMSIS-DSP DF1 biquads: y = b0 x + b1 x1 + b2 x2 + a1 y1 + a2 y2 (feedback ADDED), Q15 stage
    # {b0, 0, b1, b2, a1, a2}, Q31 {b0, b1, b2, a1, a2}, coefficient = stored * 2^postShift
    # (CMSIS-DSP documentation, "Biquad Cascade IIR Filters Using Direct Form I Structure").
    from scipy.signal import iirnotch, sosfilt

    b, a = iirnotch(2.0, 2.0, fs=50.0)
    sos = np.array([[*b, *a]])
    for fmt, per in (("q15", 6), ("q31", 5)):
        F = 15 if fmt == "q15" else 31
        cm = np.column_stack([sos[:, :3], -sos[:, 4:]])
        table = BiquadTable(fmt, np.floor(cm * 2.0 ** (F - 1) + 0.5).astype(np.int64), 1)
        lay = table.layout().astype(float) * 2.0 ** (1 - F)
        assert lay.size == per
        if fmt == "q15":
            assert lay[1] == 0.0
            b0, _, b1, b2, a1, a2 = lay
        else:
            b0, b1, b2, a1, a2 = lay
        x = np.random.default_rng(0).normal(size=200)
        y = np.zeros_like(x)
        for n in range(len(x)):  # the documented CMSIS difference equation, in float
            y[n] = (b0 * x[n] + b1 * (x[n - 1] if n > 0 else 0) + b2 * (x[n - 2] if n > 1 else 0)
                    + a1 * (y[n - 1] if n > 0 else 0) + a2 * (y[n - 2] if n > 1 else 0))
        assert np.allclose(y, sosfilt(table.sos(), x), atol=1e-12)
        assert np.allclose(table.sos(), sos, atol=2.0 ** (1 - F))  # and it is scipy's filter, rounded


def test_biquad_model_saturates_and_remembers_the_clamped_output():
    table = BiquadTable("q15", np.array([[32767, 0, 0, 0, 0]]), 1)  # y = ~2 x
    y = BiquadModel(table).run([20000, -20000, 100])
    assert y.tolist() == [32767, -32768, 200]
