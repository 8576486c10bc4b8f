"""The C runtime, compiled with cffi, is bit-exact with the Python integer reference."""

from __future__ import annotations

import numpy as np
import pytest

from stillhook.firmware.build import load_emitted
from stillhook.firmware.plan import plan_for_project, render_files
from stillhook.firmware.qformat import BiquadModel, BiquadTable, quantize_amplitudes, sample_limits
from stillhook.firmware.shaper_model import ShaperModel, ShaperTable, abs_sum_limit
from stillhook.outputs import write_files
from tests.firmware.test_plan import two_mode_schedule

SHK_ERR_ARGUMENT, SHK_ERR_TABLE = 4, 8


@pytest.fixture(scope="module")
def c(tmp_path_factory, demo_project):
    """Two emitted folders (Q15 with a Q15-friendly notch, Q31 with UM-ZV rows and the project notch)
    compiled into one cffi module; returns {prefix: (plan, CRuntime)}."""
    from scipy.signal import iirnotch

    root = tmp_path_factory.mktemp("c_runtime")
    # a notch at 4 Hz and one at 9 Hz with a 200 Hz rate keep Q15 within the shift tolerance
    b1, a1 = iirnotch(4.0, 2.0, fs=200.0)
    b2, a2 = iirnotch(9.0, 3.0, fs=200.0)
    plans = {
        "ca": plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 9), fmt="q15",
                               prefix="ca", notch_sos=np.array([[*b1, *a1], [*b2, *a2]])),
        "cb": plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 17, negative_rows=(3, 4)),
                               fmt="q31", prefix="cb", include_notch=True),
    }
    for p, plan in plans.items():
        write_files(root / p, render_files(plan))
    rts = load_emitted([root / "ca", root / "cb"], root / "build")
    return {p: (plans[p], rts[p]) for p in plans}


def stress_inputs(fmt: str, n: int = 1500) -> dict[str, np.ndarray]:
    lo, hi = sample_limits(fmt)
    rng = np.random.default_rng(11)
    k = np.arange(n)
    return {
        "step": np.where(k >= 5, hi, 0),
        "negative_step": np.where(k >= 3, lo, 0),
        "ramp": np.round(np.linspace(lo, hi, n)).astype(np.int64),
        "random": rng.integers(lo, hi, n, endpoint=True),
        "full_scale_alternating": np.where(k % 2 == 0, hi, lo),
        "full_scale_square": np.where((k // 97) % 2 == 0, hi, lo),
    }


@pytest.mark.parametrize("prefix", ["ca", "cb"])
@pytest.mark.parametrize("kind", list(stress_inputs("q15")))
def test_shaper_bit_exact_on_stress_inputs(c, prefix, kind):
    plan, rt = c[prefix]
    x = stress_inputs(plan.fmt)[kind]
    for row in (0, plan.shaper.n_rows // 2, plan.shaper.n_rows - 1):
        rt.reset()
        assert np.array_equal(rt.shaper_run(x, row), ShaperModel(plan.shaper).run(x, row))


@pytest.mark.parametrize("prefix", ["ca", "cb"])
def test_state_carries_over_calls_split_at_odd_points(c, prefix):
    plan, rt = c[prefix]
    x = stress_inputs(plan.fmt)["random"]
    rt.reset()
    whole = rt.shaper_run(x, 1)
    rt.reset()
    rt.select(1)
    cuts = [0, 1, 4, 37, 38, 511, 1003, x.size]
    parts = np.concatenate([rt.shaper_block(x[a:b]) for a, b in zip(cuts[:-1], cuts[1:], strict=True)])
    assert np.array_equal(parts, whole)


@pytest.mark.parametrize("prefix", ["ca", "cb"])
def test_schedule_switches_while_hoisting(c, prefix):
    plan, rt = c[prefix]
    lo, hi = sample_limits(plan.fmt)
    n = 4000
    # rope paid out from below the envelope to above it and back, crossing every threshold twice
    s = plan.schedule
    up = np.linspace(s.length_min - 50, s.length_max + 50, n // 2)
    counts = np.round(np.concatenate([up, up[::-1]])).astype(np.int64)
    rows_c, status_c = rt.lookup(counts)
    rows_r, status_r = s.lookup(counts)
    assert np.array_equal(rows_c, rows_r) and np.array_equal(status_c, status_r)
    assert set(status_c.tolist()) == {0, 1, 2} and len(set(rows_c.tolist())) == plan.shaper.n_rows
    x = np.random.default_rng(5).integers(lo, hi, n, endpoint=True)
    rt.reset()
    model = ShaperModel(plan.shaper)
    assert np.array_equal(rt.shaper_run(x, rows_c), model.run(x, rows_r))
    assert rt.clipped == model.clipped and rt.remainder == model.remainder


@pytest.mark.parametrize("prefix", ["ca", "cb"])
@pytest.mark.parametrize("seed", [1, 2])
def test_compiled_shaper_ends_at_the_commanded_distance_through_row_switches(c, prefix, seed):
    """sum of outputs == sum of inputs, exactly, once the ring has drained (proof: shk_shaper.h), with a
    random row every 1 to 40 cycles during a random move; checked on the C, not only the reference."""
    plan, rt = c[prefix]
    F = 15 if plan.fmt == "q15" else 31
    rng = np.random.default_rng(seed)
    xmax = (2 ** (F - 1) << F) // plan.shaper.abs_sum  # no output can saturate (see fixedpoint_shaper)
    n = 3000
    x = np.concatenate([rng.integers(-xmax, xmax, n, endpoint=True), np.zeros(plan.shaper.ring_len, dtype=np.int64)])
    rows = np.repeat(rng.integers(0, plan.shaper.n_rows, x.size), rng.integers(1, 41, x.size))[: x.size]
    assert np.count_nonzero(np.diff(rows[:n])) > 100
    rt.reset()
    y = rt.shaper_run(x, rows)
    assert int(y.sum()) == int(x.sum())
    assert rt.clipped == 0 and rt.remainder == 0
    assert np.array_equal(y, ShaperModel(plan.shaper).run(x, rows))


@pytest.mark.parametrize("prefix", ["ca", "cb"])
def test_lookup_over_every_count_of_the_envelope(c, prefix):
    plan, rt = c[prefix]
    s = plan.schedule
    counts = np.concatenate([[0, 1, 2**32 - 1, 2**31], np.arange(s.length_min - 2, s.length_max + 3)])
    rows, status = rt.lookup(counts)
    ref_rows, ref_status = s.lookup(counts)
    assert np.array_equal(rows, ref_rows) and np.array_equal(status, ref_status)
    # the 'nearest' rule from its definition: the row whose rope length is closest (ties: the longer)
    inside = (counts >= s.length_min) & (counts <= s.length_max)
    L = counts[inside] * s.lsb_m
    r = np.array([row.rope_length_m for row in plan.rows])
    dist = np.abs(L[:, None] - r[None, :])
    best = np.array([np.flatnonzero(np.isclose(d, d.min(), rtol=0, atol=1e-12))[-1] for d in dist])
    assert np.array_equal(rows[inside], best)


@pytest.mark.parametrize("prefix", ["ca", "cb"])
@pytest.mark.parametrize("kind", ["step", "random", "full_scale_alternating", "full_scale_square"])
def test_notch_bit_exact(c, prefix, kind):
    plan, rt = c[prefix]
    x = stress_inputs(plan.notch.table.fmt)[kind]
    rt.reset()
    first = rt.notch_block(x[:333])
    rest = rt.notch_block(x[333:])
    assert np.array_equal(np.concatenate([first, rest]), BiquadModel(plan.notch.table).run(x))


# -- tables built here, straight into the runtime ------------------------------------------------
def _c_shaper(ffi, lib, table: ShaperTable, ring_len=None):
    f = table.fmt
    keep = {
        "n_taps": ffi.new("uint32_t[]", table.n_taps.tolist()),
        "amps": ffi.new("int32_t[]" if f == "q15" else "int64_t[]", table.amplitudes.ravel().tolist()),
        "delays": ffi.new("uint32_t[]", table.delays.ravel().tolist()),
        "ring": ffi.new("int32_t[]" if f == "q15" else "int64_t[]", table.ring_len),
    }
    t = ffi.new(f"shk_shaper_{f}_table_t *", [table.n_rows, table.stride, table.ring_len, keep["n_taps"],
                                               keep["amps"], keep["delays"]])
    inst = ffi.new(f"shk_shaper_{f}_t *")
    status = getattr(lib, f"shk_shaper_{f}_init")(inst, t, keep["ring"],
                                                   table.ring_len if ring_len is None else ring_len)
    return status, inst, (t, keep)


def _c_steps(lib, fmt, inst, x, rows):
    step, sel = getattr(lib, f"shk_shaper_{fmt}_step"), getattr(lib, f"shk_shaper_{fmt}_select")
    y = []
    for xi, ri in zip(x, rows, strict=True):
        assert sel(inst, int(ri)) == 0
        y.append(step(inst, int(xi)))
    return np.array(y, dtype=np.int64)


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_random_tables_with_negative_amplitudes_and_saturation(c, fmt):
    _, rt = c["ca"]
    ffi, lib = rt.ffi, rt.lib
    rng = np.random.default_rng(23)
    lo, hi = sample_limits(fmt)
    a40 = rng.uniform(-0.2, 0.25, 40)
    a40[-1] = 0.0
    a40[-1] = 1.0 - a40.sum()
    assert abs(a40[-1]) <= 1.0
    designs = [([1.0], [0]), ([1.0, -1.0, 1.0], [0, 3, 6]), ([0.9, -0.8, 0.9], [0, 1, 299]),
               (a40, np.sort(rng.choice(300, 40, replace=False)))]
    rows = [(quantize_amplitudes(a, fmt), np.asarray(d)) for a, d in designs]
    table = ShaperTable.from_rows(rows, fmt)
    status, inst, keep = _c_shaper(ffi, lib, table)
    assert status == 0
    x = rng.integers(lo, hi, 2000, endpoint=True)
    r = np.repeat(rng.integers(0, len(rows), 200), 10)
    model = ShaperModel(table)
    assert np.array_equal(_c_steps(lib, fmt, inst, x, r), model.run(x, r))
    assert inst.clipped == model.clipped > 0  # saturation was exercised, and counted alike
    assert inst.remainder == model.remainder


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_ring_at_its_capacity_edge_under_adversarial_switching(c, fmt):
    """255 one-impulse rows, row r delayed r cycles, sum |A| = 255 x full scale (the limit is 255.99):
    selecting row T - m for sample m piles every full-scale sample into one slot. The C must agree with
    the reference (exact Python-width integers) bit for bit, remainder and clip count included."""
    _, rt = c["ca"]
    F = 15 if fmt == "q15" else 31
    lo, _ = sample_limits(fmt)
    table = ShaperTable.from_rows([(np.array([2**F]), np.array([r])) for r in range(255)], fmt)
    assert table.abs_sum <= abs_sum_limit(fmt, table.stride)
    status, inst, keep = _c_shaper(rt.ffi, rt.lib, table)
    assert status == 0
    x = np.concatenate([np.full(255, lo), np.full(300, lo), np.full(255, -lo - 1)])
    rows = np.concatenate([254 - np.arange(255), np.arange(300) % 255, 254 - np.arange(255)])
    model = ShaperModel(table)
    assert np.array_equal(_c_steps(rt.lib, fmt, inst, x, rows), model.run(x, rows))
    assert inst.clipped == model.clipped > 0 and inst.remainder == model.remainder


def test_bad_tables_and_arguments_are_refused(c):
    _, rt = c["ca"]
    ffi, lib = rt.ffi, rt.lib
    good = ShaperTable.from_rows([(np.array([16384, 16384]), np.array([0, 9]))], "q15")
    assert _c_shaper(ffi, lib, good)[0] == 0
    assert _c_shaper(ffi, lib, good, ring_len=good.ring_len - 1)[0] == SHK_ERR_ARGUMENT
    off_by_one = ShaperTable("q15", np.array([[16384, 16383]]), np.array([[0, 9]]), np.array([2]), 10)
    assert _c_shaper(ffi, lib, off_by_one)[0] == SHK_ERR_TABLE  # not unity gain
    late = ShaperTable("q15", good.amplitudes, np.array([[0, 10]]), np.array([2]), 10)
    assert _c_shaper(ffi, lib, late)[0] == SHK_ERR_TABLE  # delay beyond the ring
    for fmt in ("q15", "q31"):
        # sum |A| over all rows exactly at the ring's capacity, and one step above it (2 units: sum |A|
        # has the parity of sum A), built by hand because the generator refuses the second
        F = 15 if fmt == "q15" else 31
        limit = abs_sum_limit(fmt, 3)
        assert limit == 256 * 2**F - 2
        for c, want in ((2 ** (F - 1) - 1, 0), (2 ** (F - 1), SHK_ERR_TABLE)):
            amps = np.array([[2**F, 0, 0]] * 254 + [[2**F, c, -c]], dtype=np.int64)
            t = ShaperTable(fmt, amps, np.tile([0, 1, 2], (255, 1)), np.full(255, 3), 3)
            assert t.abs_sum == limit + (2 if want else 0)
            assert _c_shaper(ffi, lib, t)[0] == want
    status, inst, keep = _c_shaper(ffi, lib, good)
    assert lib.shk_shaper_q15_select(inst, 1) == SHK_ERR_ARGUMENT and inst.row == 0
    th = ffi.new("uint32_t[]", [3000, 3000])
    sched = ffi.new("shk_schedule_t *", [3, 1000, 9000, th])
    assert lib.shk_schedule_check(sched) == SHK_ERR_TABLE  # thresholds not strictly ascending
    row = ffi.new("uint32_t *", 77)
    assert lib.shk_schedule_lookup(ffi.NULL, 5, row) == SHK_ERR_ARGUMENT and row[0] == 77


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_biquads_at_every_post_shift(c, fmt):
    _, rt = c["ca"]
    ffi, lib = rt.ffi, rt.lib
    rng = np.random.default_rng(31)
    lo, hi = sample_limits(fmt)
    F = 15 if fmt == "q15" else 31
    ctype = "int16_t" if fmt == "q15" else "int32_t"
    for post_shift in range(0, (14 if fmt == "q15" else 15) + 1):
        # random stable sections (pole radius 0.3 .. 0.99) with gains up to 2^post_shift
        secs = []
        for _ in range(3):
            r, th = rng.uniform(0.3, 0.99), rng.uniform(0.05, 3.0)
            g = 2.0**post_shift * 0.99
            b = rng.uniform(-0.33, 0.33, 3) * g
            secs.append([*b, 2 * r * np.cos(th), -r * r])  # CMSIS sign: feedback added
        real = np.array(secs) / 2.0**post_shift
        coeffs = np.clip(np.floor(real * 2.0**F + 0.5), lo, hi).astype(np.int64)
        table = BiquadTable(fmt, coeffs, post_shift)
        keep = ffi.new(f"{ctype}[]", table.layout().tolist())
        t = ffi.new(f"shk_biquad_{fmt}_table_t *", [3, post_shift, keep])
        state = ffi.new(f"{ctype}[]", 12)
        inst = ffi.new(f"shk_biquad_{fmt}_t *")
        assert getattr(lib, f"shk_biquad_{fmt}_init")(inst, t, state, 12) == 0
        x = np.ascontiguousarray(rng.integers(lo, hi, 400, endpoint=True), dtype=np.int16 if fmt == "q15" else np.int32)
        y = np.empty_like(x)
        getattr(lib, f"shk_biquad_{fmt}_block")(inst, ffi.from_buffer(f"{ctype}[]", x),
                                                ffi.from_buffer(f"{ctype}[]", y), x.size)
        assert np.array_equal(y.astype(np.int64), BiquadModel(table).run(x)), post_shift
    bad = ffi.new(f"shk_biquad_{fmt}_table_t *", [1, 16, keep])
    assert getattr(lib, f"shk_biquad_{fmt}_init")(inst, bad, state, 12) == SHK_ERR_TABLE
