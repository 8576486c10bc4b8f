"""C text of the emitted host self-test (a pure function of an EmitPlan).

The program replays vectors from the integer reference (:mod:`stillhook.firmware.vectors`) through the
runtime, step by step and in blocks split at odd points, checks every lookup status, and checks the
exact-distance property on its own (a move with a row switch every 7 cycles must end exactly at the
commanded distance). It exits 0 only when everything matches.
"""

from __future__ import annotations

from stillhook.firmware.qformat import FRACTION_BITS, SAMPLE_C_TYPES, WIDE_C_TYPES
from stillhook.firmware.render_c import c_array, c_comment, c_lit, c_m
from stillhook.firmware.vectors import SEGMENT_CYCLES, selftest_vectors
from stillhook.version import __version__

__all__ = ["distance_check_amplitude", "render_selftest"]

_SHAPER_CHECK = """
static unsigned long check_shaper(int use_blocks)
{
    shk_shaper_$F_t sh;
    unsigned long bad = 0u;
    uint32_t g;
    if (shk_schedule_check(&$P_schedule) != SHK_OK ||
        shk_shaper_$F_init(&sh, &$P_shaper_table, ring, $M_RING_LEN) != SHK_OK) {
        printf("init failed\\n");
        return 1u;
    }
    for (g = 0u; g < N_SEG; ++g) {
        uint32_t row = 0u;
        uint32_t k;
        shk_status_t s = shk_schedule_lookup(&$P_schedule, seg_length[g], &row);
        if (s != seg_status[g] || row != seg_row[g]) {
            printf("segment %lu: status %lu row %lu, expected %lu %lu\\n", (unsigned long)g,
                   (unsigned long)s, (unsigned long)row, (unsigned long)seg_status[g], (unsigned long)seg_row[g]);
            ++bad;
        }
        (void)shk_shaper_$F_select(&sh, row);
        if (use_blocks) {
            /* split each segment at an odd point: state must carry across calls */
            uint32_t cut = 1u + 2u * (g % (SEG / 2u));
            shk_shaper_$F_block(&sh, &shaper_in[g * SEG], work, cut);
            shk_shaper_$F_block(&sh, &shaper_in[g * SEG + cut], &work[cut], SEG - cut);
        } else {
            for (k = 0u; k < SEG; ++k) {
                work[k] = shk_shaper_$F_step(&sh, shaper_in[g * SEG + k]);
            }
        }
        for (k = 0u; k < SEG; ++k) {
            if (work[k] != shaper_out[g * SEG + k]) {
                if (bad < 10u) {
                    printf("shaper sample %lu: got %ld expected %ld\\n", (unsigned long)(g * SEG + k),
                           (long)work[k], (long)shaper_out[g * SEG + k]);
                }
                ++bad;
            }
        }
    }
    return bad;
}
"""

_DISTANCE_CHECK = """
/* Exact distance across row switches (shk_shaper.h): pseudo-random commands in [-XMAX, XMAX] (small
 * enough that no output can saturate, whatever rows are in flight), the row changed every 7 cycles
 * through all rows, then $M_RING_LEN cycles of zero: the shaped outputs must add up EXACTLY to the
 * commands. Independent of the Python reference. */
#define XMAX $XMAXL
static unsigned long check_distance(void)
{
    shk_shaper_$F_t sh;
    uint32_t state = 12345u;
    int64_t sum_in = 0;
    int64_t sum_out = 0;
    uint32_t k;
    const uint32_t n_move = 4u * $M_RING_LEN;
    if (shk_shaper_$F_init(&sh, &$P_shaper_table, ring, $M_RING_LEN) != SHK_OK) {
        printf("init failed\\n");
        return 1u;
    }
    for (k = 0u; k < n_move + $M_RING_LEN; ++k) {
        $S x = 0;
        if (k < n_move) {
            state = state * 1664525u + 1013904223u; /* LCG constants: Numerical Recipes, 2nd ed., 7.1 */
            x = ($S)(((int64_t)(state >> 1) * (2 * XMAX + 1)) / INT64_C(2147483648) - XMAX);
        }
        (void)shk_shaper_$F_select(&sh, (k / 7u) % $M_ROWS);
        sum_in += x;
        sum_out += shk_shaper_$F_step(&sh, x);
    }
    if (sum_in != sum_out || sh.clipped != 0u || sh.remainder != 0) {
        printf("distance: outputs add up to %lld, commands to %lld (clipped %lu)\\n", (long long)sum_out,
               (long long)sum_in, (unsigned long)sh.clipped);
        return 1u;
    }
    return 0u;
}
"""

_NOTCH_CHECK = """
static unsigned long check_notch(void)
{
    shk_biquad_$N_t bq;
    unsigned long bad = 0u;
    uint32_t k;
    if (shk_biquad_$N_init(&bq, &$P_notch_table, notch_state, $M_NOTCH_STATE_LEN) != SHK_OK) {
        printf("notch init failed\\n");
        return 1u;
    }
    for (k = 0u; k < 101u; ++k) {
        notch_work[k] = shk_biquad_$N_step(&bq, notch_in[k]);
    }
    shk_biquad_$N_block(&bq, &notch_in[101], &notch_work[101], N_NOTCH - 101u);
    for (k = 0u; k < N_NOTCH; ++k) {
        if (notch_work[k] != notch_out[k]) {
            if (bad < 10u) {
                printf("notch sample %lu: got %ld expected %ld\\n", (unsigned long)k,
                       (long)notch_work[k], (long)notch_out[k]);
            }
            ++bad;
        }
    }
    return bad;
}
"""

_MAIN = """
int main(void)
{
    unsigned long bad = check_shaper(0) + check_shaper(1) + check_distance();$NOTCH_CALL
    if (bad != 0u) {
        printf("$P self-test FAILED: %lu mismatches\\n", bad);
        return 1;
    }
    printf("$P self-test passed: every output bit-exact with the Python reference; distance exact across "
           "row switches\\n");
    return 0;
}
"""


def _fill(template: str, **names: str) -> str:
    # longest names first so $M_... is not taken for $M
    for key in sorted(names, key=len, reverse=True):
        template = template.replace("$" + key, names[key])
    return template


def render_selftest(plan) -> str:
    """``<prefix>_selftest.c``: host program, exit 0 only when every output is bit-exact."""
    p, f = plan.prefix, plan.fmt
    st = SAMPLE_C_TYPES[f]
    v = selftest_vectors(plan)
    names = {"P": p, "F": f, "M": p.upper()}
    out = [c_comment([
        f"{p}_selftest.c - host self-test generated by stillhook {__version__}.",
        "Expected outputs come from the Python integer reference (stillhook.firmware.shaper_model); the program",
        "exits 0 only when the runtime reproduces every sample and every lookup status bit for bit, and a",
        "move with row switches every 7 cycles ends at exactly the commanded distance.",
        f"Build and run:  cc -std=c99 -O2 -o {p}_selftest {p}_selftest.c {p}_tables.c shk_*.c && ./{p}_selftest",
        "Not part of the firmware: leave this file out of the drive build."]),
        "#include <stdio.h>", "", f'#include "{p}_tables.h"', "",
        f"#define SEG {SEGMENT_CYCLES}u", f"#define N_SEG {v.segment_lengths.size}u", "",
        "static const uint32_t seg_length[N_SEG] = {", c_array(v.segment_lengths, "uint32_t"), "};",
        "static const uint32_t seg_status[N_SEG] = {", c_array(v.segment_status, "uint32_t"), "};",
        "static const uint32_t seg_row[N_SEG] = {", c_array(v.segment_rows, "uint32_t"), "};",
        f"static const {st} shaper_in[N_SEG * SEG] = {{", c_array(v.shaper_in, st), "};",
        f"static const {st} shaper_out[N_SEG * SEG] = {{", c_array(v.shaper_out, st), "};",
        f"static {WIDE_C_TYPES[f]} ring[{c_m(plan, 'RING_LEN')}];", f"static {st} work[SEG];",
        _fill(_SHAPER_CHECK, **names),
        _fill(_DISTANCE_CHECK, S=st, XMAXL=c_lit(distance_check_amplitude(plan), "int64_t"), **names)]
    notch_call = ""
    if plan.notch is not None:
        nst = SAMPLE_C_TYPES[plan.notch.table.fmt]
        out += [f"#define N_NOTCH {v.notch_in.size}u",
                f"static const {nst} notch_in[N_NOTCH] = {{", c_array(v.notch_in, nst), "};",
                f"static const {nst} notch_out[N_NOTCH] = {{", c_array(v.notch_out, nst), "};",
                f"static {nst} notch_state[{c_m(plan, 'NOTCH_STATE_LEN')}];",
                f"static {nst} notch_work[N_NOTCH];",
                _fill(_NOTCH_CHECK, N=plan.notch.table.fmt, **names)]
        notch_call = "\n    bad += check_notch();"
    out.append(_fill(_MAIN, NOTCH_CALL=notch_call, **names))
    return "\n".join(out)


def distance_check_amplitude(plan) -> int:
    """Largest |command| of the self-test's distance check: XMAX = floor(2^(F-1) 2^F / W).

    A slot collects at most W / 2^F times the largest |command| (W = sum |A| over all rows), so with
    |x| <= XMAX every exact output is within half of full scale, and the runtime's output within
    about one LSB of it: nothing can saturate, and the exact-sum property must hold.
    """
    F = FRACTION_BITS[plan.fmt]
    return max(1, ((1 << (F - 1)) << F) // plan.shaper.abs_sum)
