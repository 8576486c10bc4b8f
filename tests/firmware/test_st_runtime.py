"""The emitted Structured Text, compiled by a real IEC 61131-3 compiler (matiec's iec2c) and run, is
bit-exact with the Python integer reference: every output, row, status and clip count, for Q15 and
Q31, with and without the notch, on the C self-test's vectors and on row switches at every cycle.

The translated C runs under UBSan without recovery, so a signed overflow in any ST operation fails
the run (the ST claims none can happen by construction)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from stillhook.firmware.plan import ShaperRow
from stillhook.firmware.qformat import BiquadModel, sample_limits
from stillhook.firmware.render_st import render_st_files, st_blocks, st_file_names
from stillhook.firmware.shaper_model import ShaperModel, ShaperTable
from stillhook.firmware.st_shaper import STATUS_VALUES
from stillhook.firmware.vectors import SEGMENT_CYCLES, selftest_vectors, stress_signal
from tests.firmware.st_tools import build_harness, require_iec2c, run_fb


def _extreme(plan, prefix: str):
    """``plan`` with two synthetic rows at the limits of the contract: 127 taps of full-scale magnitude with
    alternating signs (+2^F at even delays, -2^F at odd ones: each row sums to exactly 2^F), the second row
    with the delays reversed; W = 254 x full scale, just under the ring's limit of about 256 x. Products
    reach 2^(2F) and alternating full-scale input piles every tap of a slot up with one sign."""
    F = 15 if plan.fmt == "q15" else 31
    d = np.arange(127)
    a = np.where(d % 2 == 0, 1 << F, -(1 << F))
    pairs = [(a, d), (a[::-1], d[::-1])]
    table = ShaperTable.from_rows(pairs, plan.fmt)
    assert table.abs_sum == 254 << F
    rows = tuple(ShaperRow(L, tuple(int(v) for v in aa), tuple(int(v) for v in dd))
                 for L, (aa, dd) in zip((plan.rows[0].rope_length_m, plan.rows[-1].rope_length_m), pairs, strict=True))
    mid = (plan.schedule.length_min + plan.schedule.length_max) // 2
    sched = dataclasses.replace(plan.schedule, thresholds=np.array([mid], dtype=np.int64))
    return dataclasses.replace(plan, prefix=prefix, shaper=table, rows=rows, schedule=sched, notch=None)


def _corrupt(st: str) -> str:
    """The same ST with the first shaper amplitude one unit larger (row 0 no longer sums to 2^F)."""
    head, tail = st.split("AMPLITUDE : ARRAY", 1)
    first_line_end = tail.index("\n") + 1
    values = tail[first_line_end:]
    n = values.index(",")
    first = int(values[:n].strip())
    return head + "AMPLITUDE : ARRAY" + tail[:first_line_end] + values[:n].replace(str(first), str(first + 1)) + \
        values[n:]


@pytest.fixture(scope="session")
def iec2c_exe():
    """Checked first, so a machine without iec2c skips before any design work."""
    return require_iec2c()


@pytest.fixture(scope="module")
def st(tmp_path_factory, iec2c_exe, st_plans):
    """Every plan's ST in one file (prefixes keep the names apart), plus a corrupted copy of 'sa' renamed
    'bad'; compiled once. Returns (plans, blocks by prefix, harness, work folder)."""
    work = tmp_path_factory.mktemp("st_runtime")
    plans = dict(st_plans)
    plans["bad"] = dataclasses.replace(st_plans["sa"], prefix="bad")
    plans["xa"] = _extreme(st_plans["sa"], "xa")
    plans["xb"] = _extreme(st_plans["sd"], "xb")
    texts = []
    for p, plan in plans.items():
        text = render_st_files(plan)[st_file_names(plan)["st"]]
        texts.append(_corrupt(text) if p == "bad" else text)
    (work / "all.st").write_text("\n".join(texts))
    blocks = {p: {b.key: b for b in st_blocks(plan)} for p, plan in plans.items()}
    prog = build_harness(work / "all.st", [b for bs in blocks.values() for b in bs.values()], work)
    return plans, blocks, prog, work


def _settled(x, ring_len: int) -> np.ndarray:
    """The FB's ``settled``: the last ring_len commands (this one included, none before the first cycle)
    were all 0."""
    nonzero = np.flatnonzero(np.asarray(x) != 0)
    last = np.full(len(x), -ring_len - 1)  # index of the latest non-zero command at or before each cycle
    if nonzero.size:
        idx = np.searchsorted(nonzero, np.arange(len(x)), side="right") - 1
        last = np.where(idx >= 0, nonzero[np.maximum(idx, 0)], -ring_len - 1)
    return (np.arange(len(x)) - last >= ring_len).astype(np.int64)


def _reference(plan, x, lengths):
    """(speed_out, row, status, clipped, settled) per cycle from the Python reference, one cycle at a time;
    checks on the way that a settled cycle really left nothing in the ring and output 0."""
    rows, status = plan.schedule.lookup(lengths)
    model = ShaperModel(plan.shaper)
    y, clipped = np.empty(x.size, dtype=np.int64), np.empty(x.size, dtype=np.int64)
    settled = _settled(x, plan.shaper.ring_len)
    for n in range(x.size):
        y[n] = model.run(x[n:n + 1], rows[n:n + 1])[0]
        clipped[n] = model.clipped
        if settled[n]:
            assert y[n] == 0 and not model.pending()
    return np.column_stack([y, rows, status, clipped, settled])


@pytest.mark.parametrize("prefix", ["sa", "sb", "sc", "sd", "se", "xa", "xb"])
def test_shaper_fb_bit_exact_on_the_c_selftest_vectors(st, prefix):
    plans, blocks, prog, work = st
    plan = plans[prefix]
    v = selftest_vectors(plan)  # extremes, every threshold from both sides, outside the envelope
    lengths = np.repeat(v.segment_lengths, SEGMENT_CYCLES)
    got = run_fb(prog, blocks[prefix]["shaper"], np.column_stack([v.shaper_in, lengths, 0 * lengths]), work)
    assert np.array_equal(got[:, 0], v.shaper_out)
    assert np.array_equal(got, _reference(plan, v.shaper_in, lengths))
    assert set(got[:, 2]) == {STATUS_VALUES["OK"], STATUS_VALUES["CLAMPED_LOW"], STATUS_VALUES["CLAMPED_HIGH"]}


@pytest.mark.parametrize("prefix", ["sa", "sb", "sc", "sd", "xa", "xb"])
def test_shaper_fb_bit_exact_with_a_row_switch_at_every_cycle(st, prefix):
    plans, blocks, prog, work = st
    plan = plans[prefix]
    s = plan.schedule
    rng = np.random.default_rng(7)
    n = 3 * plan.shaper.ring_len
    lengths = rng.integers(max(0, s.length_min - 50), s.length_max + 50, n, endpoint=True)
    lengths[::97] = 2**32 - 1  # the largest UDINT, far outside
    x = stress_signal(n, plan.fmt, rng)
    got = run_fb(prog, blocks[prefix]["shaper"], np.column_stack([x, lengths, 0 * x]), work)
    ref = _reference(plan, x, lengths)
    assert np.array_equal(got, ref)
    assert len(set(ref[:, 1])) == plan.shaper.n_rows  # every row was used


@pytest.mark.parametrize("prefix", ["xa", "xb"])
def test_extreme_tables_pile_up_slots_near_their_bound(st, prefix):
    """Alternating full-scale input on the alternating-sign rows: every part in a slot has one sign, the
    output saturates nearly every cycle, the FB counts each one and stays bit-exact (and UBSan-clean)."""
    plans, blocks, prog, work = st
    plan = plans[prefix]
    lo, hi = sample_limits(plan.fmt)
    n = 4 * plan.shaper.ring_len
    x = np.where(np.arange(n) % 2 == 0, hi, lo)
    lengths = np.where((np.arange(n) // 5) % 2 == 0, plan.schedule.length_min, plan.schedule.length_max)
    got = run_fb(prog, blocks[prefix]["shaper"], np.column_stack([x, lengths, 0 * x]), work)
    ref = _reference(plan, x, lengths)
    assert np.array_equal(got, ref)
    assert ref[-1, 3] > n // 2


def test_negative_rows_saturate_and_the_fb_counts_them(st):
    """UM-ZV rows (negative impulses) with full-scale alternating input must clip: the count matches."""
    plans, blocks, prog, work = st
    plan = plans["sc"]
    lo, hi = sample_limits(plan.fmt)
    n = 2 * plan.shaper.ring_len
    x = np.where((np.arange(n) // 3) % 2 == 0, hi, lo)
    lengths = np.full(n, plan.schedule.thresholds[3])  # row 4: UM-ZV
    got = run_fb(prog, blocks["sc"]["shaper"], np.column_stack([x, lengths, 0 * x]), work)
    ref = _reference(plan, x, lengths)
    assert np.array_equal(got, ref) and ref[-1, 3] > 0


@pytest.mark.parametrize("prefix", ["sb", "sd"])
def test_reset_empties_the_ring_and_holds_the_output(st, prefix):
    plans, blocks, prog, work = st
    plan = plans[prefix]
    rng = np.random.default_rng(3)
    n1, n_hold, n2 = 200, 3, 300
    lo, hi = sample_limits(plan.fmt)
    x = rng.integers(lo, hi, n1 + n_hold + n2, endpoint=True)
    L = np.full(x.size, plan.schedule.length_max)
    reset = np.r_[np.zeros(n1), np.ones(n_hold), np.zeros(n2)].astype(np.int64)
    got = run_fb(prog, blocks[prefix]["shaper"], np.column_stack([x, L, reset]), work)
    before = _reference(plan, x[:n1], L[:n1])
    after = _reference(plan, x[n1 + n_hold:], L[n1 + n_hold:])  # a fresh instance
    assert np.array_equal(got[:n1], before)
    assert np.all(got[n1:n1 + n_hold, 0] == 0) and np.all(got[n1:n1 + n_hold, 3] == 0)
    assert np.all(got[n1:n1 + n_hold, 4] == 1)  # nothing in flight while held in reset
    assert np.array_equal(got[n1 + n_hold:], after)
    if "notch" in blocks[prefix]:
        nb = blocks[prefix]["notch"]
        y = run_fb(prog, nb, np.column_stack([x, reset]), work)[:, 0]
        assert np.array_equal(y[:n1], BiquadModel(plan.notch.table).run(x[:n1]))
        assert np.all(y[n1:n1 + n_hold] == 0)
        assert np.array_equal(y[n1 + n_hold:], BiquadModel(plan.notch.table).run(x[n1 + n_hold:]))


@pytest.mark.parametrize("prefix", ["sb", "sd"])
def test_notch_fb_bit_exact_on_the_c_selftest_vectors(st, prefix):
    plans, blocks, prog, work = st
    v = selftest_vectors(plans[prefix])
    got = run_fb(prog, blocks[prefix]["notch"], np.column_stack([v.notch_in, 0 * v.notch_in]), work)
    assert np.array_equal(got[:, 0], v.notch_out)


@pytest.mark.parametrize("prefix", ["sa", "sc"])
def test_distance_exact_across_row_switches(st, prefix):
    """Independent of the Python reference (shk_shaper.h: exact distance): commands small enough that no
    output saturates, the row changed every 7 cycles through all rows, then zeros for a whole ring: the
    shaped outputs add up exactly to the commands."""
    plans, blocks, prog, work = st
    plan = plans[prefix]
    s = plan.schedule
    row_lengths = np.r_[s.length_min, s.thresholds]  # the first count of each row
    n_move, n = 4 * plan.shaper.ring_len, 5 * plan.shaper.ring_len
    F = 15 if plan.fmt == "q15" else 31
    xmax = (1 << (2 * F - 1)) // plan.shaper.abs_sum  # |slot| <= W xmax / 2^F <= half of full scale
    x = np.where(np.arange(n) < n_move, np.random.default_rng(5).integers(-xmax, xmax, n, endpoint=True), 0)
    L = row_lengths[(np.arange(n) // 7) % row_lengths.size]
    got = run_fb(prog, blocks[prefix]["shaper"], np.column_stack([x, L, 0 * x]), work)
    assert int(got[:, 0].sum()) == int(x.sum()) and got[-1, 3] == 0
    last = int(np.flatnonzero(x)[-1])  # settled comes exactly RING_LEN cycles after the last command
    assert got[last + plan.shaper.ring_len - 1, 4] == 0 and np.all(got[last + plan.shaper.ring_len:, 4] == 1)


def test_edited_table_is_refused_with_err_table(st):
    plans, blocks, prog, work = st
    x = np.full(50, 1000)
    got = run_fb(prog, blocks["bad"]["shaper"], np.column_stack([x, 0 * x + plans["bad"].schedule.length_min,
                                                                 0 * x]), work)
    assert np.all(got[:, 0] == 0) and np.all(got[:, 2] == STATUS_VALUES["ERR_TABLE"]) and not np.any(got[:, 4])
