"""The scatter-form shaper reference (stillhook.firmware.shaper_model) against its definition, the exact
impulse convolution, numpy.convolve of float shapers, and the exact-distance property."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from stillhook.errors import EmitError
from stillhook.firmware.qformat import quantize_amplitudes, sample_limits
from stillhook.firmware.shaper_model import SLOT_MAX, SLOT_SHIFT, ShaperModel, ShaperTable, abs_sum_limit

S = SLOT_SHIFT
FB = {"q15": 15, "q31": 31}


def definition(table: ShaperTable, x, rows) -> tuple[list[int], int, int]:
    """The runtime's equations (shk_shaper.h) step by step in exact Python integers.

    Rounding floor(v / 2^s + 1/2) and the remainder v - 2^s q: Graham, Knuth & Patashnik, "Concrete
    Mathematics", 2nd ed., 1994, sections 3.1 and 3.4. Returns (outputs, final remainder, clipped).
    """
    F = FB[table.fmt]
    lo, hi = sample_limits(table.fmt)
    N = table.ring_len
    ring, e, clipped, out = [0] * N, 0, 0, []
    for n, (xv, r) in enumerate(zip(x, rows, strict=True)):
        h = n % N
        for i in range(int(table.n_taps[r])):
            p = int(table.amplitudes[r, i]) * int(xv)
            q = math.floor(p / 2**S + 0.5) if abs(p) < 2**50 else (p + 2 ** (S - 1)) // 2**S
            ring[(h + int(table.delays[r, i])) % N] += q
            e += p - q * 2**S
        v = ring[h] * 2**S + e
        y = (v + 2 ** (F - 1)) // 2**F
        e = v - y * 2**F
        ring[h] = 0
        clipped += not lo <= y <= hi
        out.append(min(max(y, lo), hi))
    return out, e, clipped


def exact_scatter(table: ShaperTable, x, rows):
    """Exact impulse sum with each sample's row fixed at its arrival, numerator in units of 2^-F LSB
    (y[n] = sum A x[m] over m + d = n; impulse convolution: Singer & Seering, "Preshaping command inputs
    to reduce system vibration", ASME JDSMC 112(1), 1990). Also the counts the error bound uses."""
    L = len(x)
    num = [0] * L
    arriving = [0] * L  # delayed taps of the sample arriving at n
    due = [0] * L       # delayed parts due at n
    in_flight = [0] * L  # delayed parts arrived at or before n, due after n
    for m, (xv, r) in enumerate(zip(x, rows, strict=True)):
        for i in range(int(table.n_taps[r])):
            a, d = int(table.amplitudes[r, i]), int(table.delays[r, i])
            if m + d < L:
                num[m + d] += a * int(xv)
            if d > 0:
                arriving[m] += 1
                if m + d < L:
                    due[m + d] += 1
                for k in range(m, min(m + d, L)):
                    in_flight[k] += 1
    return num, arriving, due, in_flight


def _table(fmt, rows):
    return ShaperTable.from_rows([(quantize_amplitudes(a, fmt), np.array(d)) for a, d in rows], fmt)


MIXED = [([0.3, 0.45, 0.25], [0, 5, 11]), ([1.0, -1.0, 1.0], [0, 2, 4]), ([1.0], [0]),
         ([0.2, 0.5, 0.3], [1, 3, 12])]


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_model_is_the_definition_and_carries_state_across_calls(fmt):
    rng = np.random.default_rng(7)
    lo, hi = sample_limits(fmt)
    t = _table(fmt, MIXED)
    x = rng.integers(lo, hi, 400, endpoint=True)
    x[:50] = hi  # full-scale step
    x[50:80] = lo
    rows = np.repeat(rng.integers(0, len(MIXED), 80), 5)
    m = ShaperModel(t)
    whole = m.run(x, rows)
    want, e, clipped = definition(t, x, rows)
    assert whole.tolist() == want and m.remainder == e and m.clipped == clipped > 0
    m2 = ShaperModel(t)  # the same input in pieces split at odd points
    parts = [m2.run(x[a:b], rows[a:b]) for a, b in ((0, 1), (1, 38), (38, 201), (201, 400))]
    assert np.array_equal(np.concatenate(parts), whole) and m2.remainder == m.remainder


def test_constant_command_passes_unchanged_once_the_ring_is_full():
    # unity DC gain: every row sums to 2^F, so a held command comes out unchanged (and the remainder
    # stays where it is); Singer & Seering 1990: impulse amplitudes summing to 1
    t = _table("q15", [([1 / 3, 1 / 3, 1 / 3], [0, 3, 7])])
    y = ShaperModel(t).run(np.full(30, -12345), 0)
    assert np.all(y[7:] == -12345)


@st.composite
def tables_and_moves(draw):
    fmt = draw(st.sampled_from(["q15", "q31"]))
    F = FB[fmt]
    rows = []
    for _ in range(draw(st.integers(1, 4))):
        k = draw(st.integers(1, 6))
        w = np.array(draw(st.lists(st.integers(-3, 12), min_size=k, max_size=k)), dtype=float)
        assume(w.sum() > 0)
        a = w / w.sum()
        assume(np.all(np.abs(a) <= 1.0))
        d = sorted(draw(st.lists(st.integers(0, 40), min_size=k, max_size=k, unique=True)))
        rows.append((quantize_amplitudes(a, fmt), np.array(d)))
    table = ShaperTable.from_rows(rows, fmt)
    # |x| <= 2^(F-1) 2^F / W: any slot, whatever rows are in flight, stays within half of full scale
    xmax = max(1, (2 ** (F - 1) << F) // table.abs_sum)
    n = draw(st.integers(1, 150))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    x = rng.integers(-xmax, xmax, n, endpoint=True)
    # a new random row every 1 to 5 cycles
    rows_seq = np.repeat(rng.integers(0, table.n_rows, n), rng.integers(1, 6, n))[:n]
    return table, x, rows_seq


@settings(max_examples=120, deadline=None)
@given(tables_and_moves())
def test_outputs_add_up_exactly_to_the_inputs_whatever_the_row_switches(case):
    """The exact-distance property (proof in stillhook.firmware.shaper_model): sum y = sum x once drained."""
    table, x, rows = case
    m = ShaperModel(table)
    y = m.run(x, rows)
    drain = m.run(np.zeros(table.ring_len, dtype=np.int64), rows[-1])
    assert m.clipped == 0
    assert int(y.sum() + drain.sum()) == int(x.sum())
    assert m.remainder == 0 and not m.pending()


@settings(max_examples=60, deadline=None)
@given(tables_and_moves())
def test_each_output_is_within_the_stated_bound_of_the_exact_impulse_sum(case):
    """|y[n] - exact[n]| < 1 + (a + b) 2^(S-1-F) LSB and the running error within 1/2 + I 2^(S-1-F)
    (shk_shaper.h), against the exact impulse sum with each sample's row fixed at its arrival."""
    table, x, rows = case
    F = FB[table.fmt]
    y = ShaperModel(table).run(x, rows)
    num, a, b, inflight = exact_scatter(table, x, rows)
    running = 0
    for n in range(len(x)):
        err = int(y[n]) * 2**F - num[n]  # units 2^-F LSB, exact
        assert abs(err) < 2**F + (a[n] + b[n]) * 2 ** (S - 1)
        running += err
        assert abs(running) <= 2 ** (F - 1) + inflight[n] * 2 ** (S - 1)


def _grid_shapers():
    """Closed forms on a sample grid: damped ZVD [1, 2K, K^2] / (1 + K)^2 at 0, T/2, T (Singer & Seering,
    ASME JDSMC 112(1), 1990) with zeta = 0.05, and undamped EI [(1+V)/4, (1-V)/2, (1+V)/4] with V = 0.05
    (Singhose, Seering & Singer, J. Mech. Design 116(2), 1994) convolved with that ZVD's first two
    impulses' ZV [1, K] / (1 + K) at a higher mode. Half periods 37 and 11 cycles (our choice)."""
    K = math.exp(-0.05 * math.pi / math.sqrt(1 - 0.05**2))
    zvd = (np.array([1, 2 * K, K * K]) / (1 + K) ** 2, np.array([0, 37, 74]))
    V = 0.05
    ei = (np.array([(1 + V) / 4, (1 - V) / 2, (1 + V) / 4]), np.array([0, 41, 82]))
    zv = (np.array([1, K]) / (1 + K), np.array([0, 11]))
    amps = np.outer(ei[0], zv[0]).ravel()
    dels = np.add.outer(ei[1], zv[1]).ravel()
    return {"zvd_damped": zvd, "ei_x_zv": (amps, dels)}


@pytest.mark.parametrize("fmt", ["q15", "q31"])
@pytest.mark.parametrize("name", ["zvd_damped", "ei_x_zv"])
def test_fixed_row_matches_numpy_convolve_of_the_float_shaper(fmt, name):
    a_float, d = _grid_shapers()[name]
    order = np.argsort(d)
    a_float, d = a_float[order], d[order]
    F = FB[fmt]
    A = quantize_amplitudes(a_float, fmt)
    table = ShaperTable.from_rows([(A, d)], fmt)
    lo, hi = sample_limits(fmt)
    rng = np.random.default_rng(3)
    x = np.concatenate([np.full(60, hi // 2), rng.integers(lo // 2, hi // 2, 500), np.zeros(100, dtype=np.int64)])
    y = ShaperModel(table).run(x, 0)
    h = np.zeros(d.max() + 1)
    h[d] = a_float
    ref = np.convolve(x.astype(float), h)[: x.size]  # the float shaper, in output LSB
    K = d.size
    # runtime bound + amplitude rounding (|A/2^F - a| per tap times the largest |x|) + float round-off
    bound = 1 + (K - 1) * 2.0 ** (S - F) + np.abs(A / 2.0**F - a_float).sum() * np.abs(x).max() + 1e-6
    assert np.max(np.abs(y - ref)) < bound
    assert np.max(np.abs(y - ref)) > 0.3  # it is a real comparison, not identical arrays


def _gather_definition(table, x, rows):
    """The earlier runtime (before the scatter form): y[n] = round(sum_i A[r(n)][i] x[n - d] / 2^F) with
    the row selected NOW, for the comparison below."""
    F = FB[table.fmt]
    out = []
    for n, r in enumerate(rows):
        acc = sum(int(a) * int(x[n - dd]) for a, dd in zip(table.amplitudes[r], table.delays[r], strict=True)
                  if n - dd >= 0)
        out.append((acc + 2 ** (F - 1)) // 2**F)
    return np.array(out)


def test_a_switch_during_the_move_no_longer_changes_the_distance():
    """The field defect: a rope-length switch while the trolley moves. Trapezoid speed command (stillhook.
    profiles) in Q15; two rows, ZVD of 0.25 Hz and 0.35 Hz at a 5 ms cycle (Singer & Seering 1990)."""
    from stillhook.sim.profiles import trapezoid

    v = trapezoid(2.5, 0.5, 0.3, 0.005)  # m/s; full scale = 1 m/s
    x = np.floor(v * 2**15 + 0.5).astype(np.int64)
    rows_def = [([0.25, 0.5, 0.25], [0, 400, 800]), ([0.25, 0.5, 0.25], [0, 286, 571])]
    table = _table("q15", rows_def)
    x = np.concatenate([x, np.zeros(table.ring_len, dtype=np.int64)])
    rows = np.where(np.arange(x.size) < x.size // 3, 0, 1)  # one switch, mid-move at cruise speed
    y = ShaperModel(table).run(x, rows)
    assert int(y.sum()) == int(x.sum())  # exact, in LSB x cycles
    gather = _gather_definition(table, x, rows)
    lsb_cycle_m = 0.005 / 2**15  # metres per LSB per cycle at 1 m/s full scale
    # the old form under-weights the samples the new row's shorter delays skip (0.5 for 114 cycles and
    # 0.25 for 229 before the switch, partly still accelerating here): about 0.16 m short
    assert abs(int(gather.sum()) - int(x.sum())) * lsb_cycle_m > 0.1


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_ring_capacity_limit_is_exact_at_the_edge(fmt):
    # (W + 1) 2^(F-S) + ceil(stride / 2) <= SLOT_MAX holds at the limit and fails one unit above it
    F = FB[fmt]
    for stride in (1, 2, 15, 4095, 4096):
        W = abs_sum_limit(fmt, stride)
        assert (W + 1) * 2 ** (F - S) + (stride + 1) // 2 <= SLOT_MAX[fmt]
        assert (W + 2) * 2 ** (F - S) + (stride + 1) // 2 > SLOT_MAX[fmt]
    assert 255.9 < abs_sum_limit(fmt, 4096) / 2**F < 256


def test_tables_beyond_the_ring_capacity_are_refused_with_the_figures():
    # impulses of magnitude 2 are outside the stored range
    a = np.array([2.0 if i % 2 == 0 else -2.0 for i in range(128)] + [1.0])
    A = np.round(a * 2**15).astype(np.int64)
    with pytest.raises(EmitError, match="exceeds 32768"):  # |A| <= 2^F is checked first
        ShaperTable.from_rows([(A, np.arange(A.size))], "q15")
    # 300 rows of a single impulse each at its own delay: sum |A| = 300 x full scale
    rows = [(np.array([2**15]), np.array([r])) for r in range(300)]
    with pytest.raises(EmitError, match=r"sum \|A\| = 300 x full scale over 300 rows.*at most 255\.9\d* x"):
        ShaperTable.from_rows(rows, "q15")
    assert ShaperTable.from_rows(rows[:255], "q15").abs_sum == 255 * 2**15


def test_adversarial_switching_at_the_capacity_edge_saturates_but_stays_exact_in_the_ring():
    # 255 rows of one impulse each, row r delayed r cycles: selecting row (T - m) for sample m puts
    # every sample's full-scale part in slot T (the worst case the capacity check guards)
    rows = [(np.array([2**15]), np.array([r])) for r in range(255)]
    table = ShaperTable.from_rows(rows, "q15")
    x = np.full(255, -(2**15))
    sel = 254 - np.arange(255)
    m = ShaperModel(table)
    y = m.run(x, sel)
    assert y[-1] == -(2**15) and m.clipped == 1  # the pile-up saturates the output, once
    assert definition(table, x, sel)[0] == y.tolist()
