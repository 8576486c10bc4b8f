"""The notch cascade FUNCTION_BLOCK in Structured Text (direct form I biquads, feedback added).

Per stage, with the C runtime's integers (codegen/shk_biquad.h)::

    acc  = b0 x[n] + b1 x[n-1] + b2 x[n-2] + a1 y[n-1] + a2 y[n-2]
    y[n] = sat(floor((acc + 2^(s-1)) / 2^s)),   s = F - post_shift

Q15: each product of two 16-bit values is exact in DINT (|.| <= 2^30), the sum of five in LINT.
Q31: a product of two 32-bit values is exact in LINT but five of them may not be, so (as the C
runtime does) each state value v is split v = 2^16 hi + lo, hi = floor(v / 2^16), 0 <= lo < 2^16,
and two LINT sums are kept (|each| < 5 2^47); then
m = acc_hi + floor((acc_lo + 2^(s-1)) / 2^16) and y = sat(floor(m / 2^(s-16))) (shk_finish_split).

Coefficients are stored {b0, b1, b2, a1, a2} per stage in both formats (the C Q15 table pads a 0
after b0 for CMSIS-DSP; the ST has no use for it). State per stage {x1, x2, y1, y2} as in C.

Notes
-----
Direct form I and saturation of fixed-point IIR filters: Oppenheim & Schafer, *Discrete-Time Signal
Processing*, 3rd ed., 2010, sections 6.3 and 6.7 (from memory).
"""

from __future__ import annotations

from stillhook.firmware.qformat import FRACTION_BITS
from stillhook.firmware.st_arith import FLOOR_DIV_COST, OpCount, floor_div_name
from stillhook.firmware.st_pou import StPou, StVar

__all__ = ["NOTCH_INPUTS", "NOTCH_OUTPUTS", "notch_cost", "notch_helpers", "notch_pou", "notch_pou_name"]

NOTCH_INPUTS = ("speed_in", "reset")
NOTCH_OUTPUTS = ("speed_out",)
_SAMPLE = {"q15": "INT", "q31": "DINT"}


def notch_pou_name(plan) -> str:
    return f"{plan.prefix.upper()}_NOTCH"


def notch_helpers(plan) -> tuple[str, ...]:
    return ("LINT",)


#: Both formats start the same way: a reset clears the cascade state and the output.
_RESET = """IF reset THEN
    FOR k := 0 TO 4 * STAGES - 1 DO
        state[k] := 0;
    END_FOR;
    speed_out := 0;
    RETURN;
END_IF;
"""

_Q15 = _RESET + """v := INT_TO_DINT(speed_in);
FOR n := 0 TO STAGES - 1 DO
    c := 5 * n; (* {b0, b1, b2, a1, a2} *)
    s := 4 * n; (* {x1, x2, y1, y2} *)
    (* each product of two 16-bit values is exact in DINT (|.| <= 2^30); five of them fit LINT *)
    acc := DINT_TO_LINT(COEFF[c] * v) + DINT_TO_LINT(COEFF[c + 1] * state[s])
         + DINT_TO_LINT(COEFF[c + 2] * state[s + 1]) + DINT_TO_LINT(COEFF[c + 3] * state[s + 2])
         + DINT_TO_LINT(COEFF[c + 4] * state[s + 3]);
    (* round half up: y = floor((acc + 2^(m-1)) / 2^m), m = 15 - POST_SHIFT = $SH *)
    y := $FLOOR(acc + $HALF, $DIV);
    IF y > 32767 THEN
        y := 32767;
    ELSIF y < -32768 THEN
        y := -32768;
    END_IF;
    state[s + 1] := state[s];
    state[s] := v;
    state[s + 3] := state[s + 2];
    state[s + 2] := LINT_TO_DINT(y); (* saturated: in the INT range *)
    v := LINT_TO_DINT(y);
END_FOR;
speed_out := DINT_TO_INT(v);
"""

_Q31 = _RESET + """v := DINT_TO_LINT(speed_in);
FOR n := 0 TO STAGES - 1 DO
    c := 5 * n; (* {b0, b1, b2, a1, a2} *)
    s := 4 * n; (* {x1, x2, y1, y2} *)
    (* v = 2^16 hi + lo with hi in [-2^15, 2^15), lo in [0, 2^16): |b hi| <= 2^46, |b lo| < 2^47,
       five of each stay below 2^50 (shk_split_hi / shk_split_lo) *)
    hi := $FLOOR16(v, 65536);
    acc_hi := COEFF[c] * hi;
    acc_lo := COEFF[c] * (v - hi * 65536);
    FOR t := 0 TO 3 DO
        w := state[s + t];
        hi := $FLOOR16(w, 65536);
        acc_hi := acc_hi + COEFF[c + t + 1] * hi;
        acc_lo := acc_lo + COEFF[c + t + 1] * (w - hi * 65536);
    END_FOR;
    (* y = floor((2^16 acc_hi + acc_lo + 2^(m-1)) / 2^m), m = 31 - POST_SHIFT = $SH (shk_finish_split) *)
    y := $FLOOR(acc_hi + $FLOOR16(acc_lo + $HALF, 65536), $DIV);
    IF y > 2147483647 THEN
        y := 2147483647;
    ELSIF y < -2147483648 THEN
        y := -2147483648;
    END_IF;
    state[s + 1] := state[s];
    state[s] := v;
    state[s + 3] := state[s + 2];
    state[s + 2] := y;
    v := y;
END_FOR;
speed_out := LINT_TO_DINT(v);
"""


def notch_pou(plan) -> StPou:
    """The notch FB of ``plan`` (whose ``notch`` is not None)."""
    t = plan.notch.table
    f = t.fmt
    F = FRACTION_BITS[f]
    sh = F - t.post_shift
    floor = floor_div_name(plan.prefix, "LINT")
    names = {"$FLOOR16": floor, "$FLOOR": floor, "$SH": str(sh), "$HALF": str(1 << (sh - 1)),
             "$DIV": str(1 << (sh - 16)) if f == "q31" else str(1 << sh)}
    body = _Q15 if f == "q15" else _Q31
    for key in sorted(names, key=len, reverse=True):
        body = body.replace(key, names[key])
    coeff_t = "DINT" if f == "q15" else "LINT"
    state_t = "DINT" if f == "q15" else "LINT"
    stages = ", ".join(f"{hz:.6g} Hz" for hz in plan.notch.freqs_hz)
    comment = (f"{notch_pou_name(plan)}: notch cascade, {t.n_stages} biquad stages ({stages}), {f.upper()}, "
               f"for a {plan.cycle_s:g} s cycle.",
               f"Project {plan.project_name}; input digest (SHA-256 of the project file): {plan.digest or '(none)'}.",
               "Call once per drive cycle, every cycle, after the shaper: speed_in := shaper speed_out.",
               "reset: TRUE zeroes the filter state and holds speed_out at 0.",
               "Bit-exact with the C runtime (shk_biquad.h) and stillhook's integer reference.")
    local = [StVar("state", state_t, 4 * t.n_stages, comment="{x1, x2, y1, y2} per stage"),
             StVar("v", state_t), StVar("y", "LINT"), StVar("acc", "LINT"),
             *([StVar("acc_hi", "LINT"), StVar("acc_lo", "LINT"), StVar("hi", "LINT"), StVar("w", "LINT"),
                StVar("t", "UDINT")] if f == "q31" else []),
             *[StVar(n, "UDINT") for n in ("n", "c", "s", "k")]]
    consts = (StVar("STAGES", "UDINT", init=t.n_stages),
              StVar("POST_SHIFT", "UDINT", init=t.post_shift, comment="real coefficient = stored 2^(POST_SHIFT - F)"),
              StVar("COEFF", coeff_t, 5 * t.n_stages, tuple(int(v) for v in t.coeffs.ravel()),
                    f"{{b0, b1, b2, a1, a2}} per stage, units 2^-{F}, feedback added (a = -scipy a)"))
    sections = (("VAR_INPUT", (StVar("speed_in", _SAMPLE[f], comment=f"{f.upper()} sample"),
                               StVar("reset", "BOOL", comment="TRUE: zero the state, output 0"))),
                ("VAR_OUTPUT", (StVar("speed_out", _SAMPLE[f], comment=f"{f.upper()} filtered sample"),)),
                ("VAR CONSTANT", consts), ("VAR", tuple(local)))
    return StPou(notch_pou_name(plan), "FUNCTION_BLOCK", comment, sections, body)


def notch_cost(plan) -> OpCount:
    """Operations of one cycle (reset FALSE), worst case; counted from ``_Q15`` / ``_Q31``."""
    t = plan.notch.table
    if t.fmt == "q15":
        # c, s (2 muls); five products, 7 index adds, 4 sums; rounding add + floor; 2 saturation compares;
        # state shift: 4 writes, 2 reads, 4 index adds
        stage = (OpCount(multiplies=2 + 5, adds=7 + 4 + 1 + 4, compares=2, array_reads=5 + 4 + 2, array_writes=4)
                 + FLOOR_DIV_COST)
    else:
        # per state value (4 passes): read (index add), split (floor, mul, sub), two products with their
        # index adds (2 each) and sums, the pass's own add and compare
        per_state = (OpCount(multiplies=3, adds=1 + 4 + 2 + 1 + 1, compares=1, array_reads=1 + 2)
                     + FLOOR_DIV_COST)
        # c, s (2 muls); split of v (floor, mul, sub) and its two products; rounding (2 adds, 2 floors);
        # 2 saturation compares; state shift: 4 writes, 2 reads, 4 index adds
        stage = (OpCount(multiplies=2 + 3, adds=1 + 2 + 4, compares=2, array_reads=2 + 2, array_writes=4)
                 + per_state * 4 + FLOOR_DIV_COST * 3)
    # the stage loop: bound once (1 add), then one add and one compare per stage
    return OpCount(adds=1) + (stage + OpCount(adds=1, compares=1)) * t.n_stages
