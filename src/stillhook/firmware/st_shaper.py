"""The shaper FUNCTION_BLOCK in Structured Text: rope-length schedule + scatter-form shaper.

One call per PLC cycle does what the C caller does with the runtime (shk_schedule_lookup,
shk_shaper_*_select, shk_shaper_*_step), with the same integers::

    row, status = lookup(rope_length)                  thresholds, clamped to the envelope
    scatter  p_i = A[row, i] x,  q_i = floor((p_i + 2^(S-1)) / 2^S),  ring[head + d_i] += q_i
    output   e = remainder + sum_i (p_i - 2^S q_i)
             y = floor((slot + floor((e + 2^(F-1)) / 2^S)) / 2^(F-S)),   slot = ring[head]
             remainder = 2^S (slot - 2^(F-S) y) + e;   ring[head] = 0;   speed_out = sat(y)

(contract and proofs: codegen/shk_shaper.h and :mod:`stillhook.firmware.shaper_model`). Every
floor is the floor-division helper of :mod:`stillhook.firmware.st_arith`, never a shift.

Types: Q15 samples INT with DINT amplitudes, products and ring slots; Q31 samples DINT with LINT
amplitudes, products and slots (the C runtime's int16/int32 and int32/int64). The Q15 shaper needs no
64-bit type at all, so it also runs on PLCs without LINT. Tables are VAR
CONSTANT arrays checked on the first call (as shk_shaper_*_init checks them); a table that fails
gives status ERR_TABLE and output 0 for good.

Notes
-----
Scatter form, remainder carrying, ring bounds: :mod:`stillhook.firmware.shaper_model` (sources there).
"""

from __future__ import annotations

import math

from stillhook.firmware.qformat import FRACTION_BITS, MAX_TAPS
from stillhook.firmware.shaper_model import SLOT_SHIFT, abs_sum_limit
from stillhook.firmware.st_arith import FLOOR_DIV_COST, OpCount, floor_div_name
from stillhook.firmware.st_pou import StPou, StVar

__all__ = ["SHAPER_INPUTS", "SHAPER_OUTPUTS", "STATUS_VALUES", "shaper_cost", "shaper_helpers", "shaper_pou",
           "shaper_pou_name"]

#: Status values of the FB, the same numbers as SHK_* in codegen/shk_fixed.h.
STATUS_VALUES = {"OK": 0, "CLAMPED_LOW": 1, "CLAMPED_HIGH": 2, "ERR_TABLE": 8}
#: FB interface (names the harness and README use).
SHAPER_INPUTS = ("speed_in", "rope_length", "reset")
SHAPER_OUTPUTS = ("speed_out", "row", "status", "clipped", "settled")
#: ST types per format: sample, wide (amplitudes, products, ring slots).
_SAMPLE = {"q15": "INT", "q31": "DINT"}
_WIDE = {"q15": "DINT", "q31": "LINT"}


def shaper_pou_name(plan) -> str:
    return f"{plan.prefix.upper()}_SHAPER"


def shaper_helpers(plan) -> tuple[str, ...]:
    """Integer types of the floor-division helpers the shaper calls."""
    return (_WIDE[plan.fmt],)


_CHECK = """IF NOT checked OR (reset AND NOT reset_prev) THEN
    (* first call, or reset going TRUE: check the tables and empty the ring (shk_shaper_$fmt_init).
       Runs once, not every cycle; its cost is not part of the per-cycle count. *)
    table_ok := TRUE;
    total := 0;
    FOR r := 0 TO ROWS - 1 DO
        IF N_TAPS[r] < 1 OR N_TAPS[r] > STRIDE THEN
            table_ok := FALSE;
        ELSE
            sum := 0;
            FOR i := 0 TO N_TAPS[r] - 1 DO
                j := r * STRIDE + i; (* < ROWS * STRIDE: the array length *)
                IF DELAY[j] >= RING_LEN OR AMPLITUDE[j] > FULL OR AMPLITUDE[j] < -FULL THEN
                    table_ok := FALSE;
                ELSIF table_ok THEN
                    (* |A| <= 2^$F: a row sum stays within STRIDE 2^$F <= 2^$SUMBITS, and total stops
                       growing once past ABS_SUM_LIMIT, so it stays below ABS_SUM_LIMIT + 2^$F: both fit $WIDE *)
                    sum := sum + AMPLITUDE[j];
                    total := total + ABS(AMPLITUDE[j]);
                    IF total > ABS_SUM_LIMIT THEN
                        table_ok := FALSE; (* the ring could overflow under some sequence of rows *)
                    END_IF;
                END_IF;
            END_FOR;
            IF sum <> FULL THEN
                table_ok := FALSE; (* every row must sum to exactly 2^$F: unity gain, exact distance *)
            END_IF;
        END_IF;
    END_FOR;
$THRESHOLD_CHECK    FOR k := 0 TO RING_LEN - 1 DO
        ring[k] := 0;
    END_FOR;
    head := 0;
    remainder := 0;
    clipped := 0;
    zero_run := RING_LEN; (* the ring is empty: as after RING_LEN zero commands *)
    checked := TRUE;
END_IF;
reset_prev := reset;
IF NOT table_ok THEN
    speed_out := 0;
    row := 0;
    status := ERR_TABLE;
    settled := FALSE; (* a fault is never reported as settled *)
    RETURN;
END_IF;
"""

_THRESHOLD_CHECK = """    FOR r := 0 TO ROWS - 2 DO
        IF THRESHOLD[r] <= LEN_MIN OR THRESHOLD[r] > LEN_MAX THEN
            table_ok := FALSE;
        END_IF;
    END_FOR;
    FOR r := 1 TO ROWS - 2 DO
        IF THRESHOLD[r] <= THRESHOLD[r - 1] THEN
            table_ok := FALSE; (* thresholds must be strictly ascending *)
        END_IF;
    END_FOR;
"""

_LOOKUP = """(* 1. schedule row for the rope length (shk_schedule_lookup): clamp to the envelope, say so in status *)
IF rope_length < LEN_MIN THEN
    length := LEN_MIN;
    status := CLAMPED_LOW;
ELSIF rope_length > LEN_MAX THEN
    length := LEN_MAX;
    status := CLAMPED_HIGH;
ELSE
    length := rope_length;
    status := OK;
END_IF;
$SEARCH"""

_SEARCH = """(* row = number of thresholds <= length; binary search, at most $ITER passes *)
lo := 0;
hi := ROWS - 1;
WHILE lo < hi DO
    middle := lo + (hi - lo) / 2; (* lo <= middle < hi <= ROWS - 1: no overflow, index in range *)
    IF THRESHOLD[middle] <= length THEN
        lo := middle + 1;
    ELSE
        hi := middle;
    END_IF;
END_WHILE;
row := lo;
"""

_STEP = """IF reset THEN
    speed_out := 0; (* held in reset: nothing enters the ring *)
    settled := TRUE;
    RETURN;
END_IF;
(* settled: the command has been 0 for the last RING_LEN cycles (this one included). Every part in the
   ring then came from a zero sample, so the ring is empty, this output and every later one is 0 while
   the command stays 0, and the remainder is 0 (shk_shaper.h, exact distance) *)
IF speed_in <> 0 THEN
    zero_run := 0;
ELSIF zero_run < RING_LEN THEN
    zero_run := zero_run + 1; (* stops at RING_LEN: cannot wrap *)
END_IF;
settled := zero_run >= RING_LEN;
(* 2. scatter the new sample with the row selected now (shk_shaper_$fmt_step) *)
x := $WIDEN(speed_in);
base := row * STRIDE; (* < ROWS * STRIDE *)
rho_sum := 0;
FOR i := 0 TO N_TAPS[row] - 1 DO
    j := base + i;
    k := head + DELAY[j]; (* head, delay < RING_LEN <= 2^31: the UDINT sum cannot wrap *)
    IF k >= RING_LEN THEN
        k := k - RING_LEN;
    END_IF;
    p := AMPLITUDE[j] * x; (* exact: |A| <= 2^$F and |x| <= 2^$F, so |p| <= 2^$P2F < 2^$WBITS *)
    q := $FLOOR(p + $SHALF, $SFULL); (* q = floor((p + 2^(S-1)) / 2^S), S = $S; p + $SHALF cannot overflow *)
    (* a slot gathers at most one part of every tap of every row: |slot| <= (W + 1) 2^$FS + STRIDE / 2,
       W = sum |A| over all rows = $W <= ABS_SUM_LIMIT, which the generator and the check above ensure *)
    ring[k] := ring[k] + q;
    rho_sum := rho_sum + (p - q * $SFULL); (* each p - 2^S q in [-2^(S-1), 2^(S-1)): |rho_sum| <= STRIDE 2^$SM1 *)
END_FOR;
(* 3. output of this cycle: round half up, the remainder carried to the next cycle *)
e := $E_EXPR; (* |e| < 2^$FM1 + STRIDE 2^$SM1 *)
slot := ring[head];
(* y = floor((2^S slot + e + 2^(F-1)) / 2^F) = floor((slot + floor((e + 2^(F-1)) / 2^S)) / 2^(F-S));
   the inner sum is within the slot bound above *)
y := $FLOOR(slot + $FLOOR(e + $FHALF, $SFULL), $FSFULL);
(* new remainder = 2^S (slot - 2^(F-S) y) + e, in [-2^(F-1), 2^(F-1)): fits DINT. 2^(F-S) y lies within
   2^(F-S) - 1 below the inner sum above, so it is inside the slot bound too *)
remainder := $NARROW((slot - y * $FSFULL) * $SFULL + e);
ring[head] := 0;
head := head + 1;
IF head >= RING_LEN THEN
    head := 0;
END_IF;
(* 4. saturate to the sample range and count it: a clipped output breaks the exact distance *)
IF y > SAMPLE_MAX THEN
    speed_out := $TOSAMPLE(SAMPLE_MAX);
    IF clipped < CLIPPED_MAX THEN
        clipped := clipped + 1;
    END_IF;
ELSIF y < SAMPLE_MIN THEN
    speed_out := $TOSAMPLE(SAMPLE_MIN);
    IF clipped < CLIPPED_MAX THEN
        clipped := clipped + 1;
    END_IF;
ELSE
    speed_out := $TOSAMPLE(y);
END_IF;
"""


def _fill(template: str, names: dict[str, str]) -> str:
    for key in sorted(names, key=len, reverse=True):  # longest first: $SFULL before $S
        template = template.replace("$" + key, names[key])
    return template


def _names(plan) -> dict[str, str]:
    f, F, S = plan.fmt, FRACTION_BITS[plan.fmt], SLOT_SHIFT
    wide = _WIDE[f]
    floor = floor_div_name(plan.prefix, wide)
    return {
        "fmt": f, "F": str(F), "S": str(S), "P2F": str(2 * F), "WBITS": "31" if f == "q15" else "63",
        "FS": str(F - S), "SM1": str(S - 1), "FM1": str(F - 1), "W": str(plan.shaper.abs_sum),
        "SHALF": str(1 << (S - 1)), "SFULL": str(1 << S), "FHALF": str(1 << (F - 1)), "FSFULL": str(1 << (F - S)),
        "FLOOR": floor,
        "WIDEN": "INT_TO_DINT" if f == "q15" else "DINT_TO_LINT",
        "TOSAMPLE": "DINT_TO_INT" if f == "q15" else "LINT_TO_DINT",
        "SUMBITS": str(F + (MAX_TAPS - 1).bit_length()), "WIDE": wide,  # STRIDE <= MAX_TAPS
        "E_EXPR": "remainder + rho_sum" if f == "q15" else "DINT_TO_LINT(remainder) + rho_sum",
        "NARROW": "" if f == "q15" else "LINT_TO_DINT",
        "ITER": str(max(1, math.ceil(math.log2(plan.shaper.n_rows))) if plan.shaper.n_rows > 1 else 0),
    }


def _body(plan) -> str:
    n = _names(plan)
    many = plan.shaper.n_rows > 1
    check = _CHECK.replace("$THRESHOLD_CHECK", _THRESHOLD_CHECK if plan.shaper.n_rows > 2 else
                           (_THRESHOLD_CHECK.split("    FOR r := 1")[0] if many else ""))
    search = _SEARCH if many else "row := 0; (* one row: nothing to look up *)\n"
    return _fill(check + _LOOKUP.replace("$SEARCH", search) + _STEP, n)


def shaper_pou(plan) -> StPou:
    """The shaper FB of ``plan`` (an EmitPlan): tables, schedule, interface, body."""
    f, sh, sc = plan.fmt, plan.shaper, plan.schedule
    F = FRACTION_BITS[f]
    sample, wide = _SAMPLE[f], _WIDE[f]
    lo, hi = -(1 << F), (1 << F) - 1
    rows_note = "; ".join(f"row {r}: {row.rope_length_m:.6g} m" for r, row in enumerate(plan.rows))
    consts = [
        StVar("ROWS", "UDINT", init=sh.n_rows, comment="schedule rows"),
        StVar("STRIDE", "UDINT", init=sh.stride, comment="taps reserved per row"),
        StVar("RING_LEN", "UDINT", init=sh.ring_len, comment="ring slots: longest delay + 1 cycles"),
        StVar("FULL", wide, init=1 << F, comment=f"2^{F}: every row's amplitudes sum to exactly this"),
        StVar("ABS_SUM_LIMIT", wide, init=abs_sum_limit(f, sh.stride),
              comment="largest sum |A| over all rows whose ring cannot overflow"),
        StVar("LEN_MIN", "UDINT", init=sc.length_min, comment="envelope, shortest rope, counts"),
        StVar("LEN_MAX", "UDINT", init=sc.length_max, comment="envelope, longest rope, counts"),
        StVar("SAMPLE_MIN", wide, init=lo), StVar("SAMPLE_MAX", wide, init=hi),
        StVar("CLIPPED_MAX", "UDINT", init=2**32 - 1),
        *[StVar(k, "UDINT", init=v) for k, v in STATUS_VALUES.items()],
        StVar("N_TAPS", "UDINT", sh.n_rows, tuple(int(v) for v in sh.n_taps), "taps used per row"),
        StVar("AMPLITUDE", wide, sh.n_rows * sh.stride, tuple(int(v) for v in sh.amplitudes.ravel()),
              f"units 2^-{F}, row after row ({rows_note})"),
        StVar("DELAY", "UDINT", sh.n_rows * sh.stride, tuple(int(v) for v in sh.delays.ravel()),
              "whole drive cycles, row after row"),
    ]
    if sh.n_rows > 1:
        consts.append(StVar("THRESHOLD", "UDINT", sh.n_rows - 1, tuple(int(v) for v in sc.thresholds),
                            "row = number of thresholds <= rope length (counts)"))
    local = [StVar("ring", wide, sh.ring_len, comment=f"accumulators of future outputs, units 2^-{F - SLOT_SHIFT} LSB"),
             StVar("head", "UDINT", comment="slot of the current cycle"),
             StVar("remainder", "DINT", comment=f"rounding remainder e, units 2^-{F} LSB"),
             StVar("checked", "BOOL", init=False), StVar("table_ok", "BOOL", init=False),
             StVar("reset_prev", "BOOL", init=False),
             StVar("zero_run", "UDINT", init=sh.ring_len, comment="consecutive zero commands, up to RING_LEN"),
             *[StVar(v, "UDINT") for v in ("length", "lo", "hi", "middle", "base", "i", "j", "k", "r")],
             *[StVar(v, wide) for v in ("x", "p", "q", "rho_sum", "e", "slot", "y")],
             StVar("sum", wide), StVar("total", wide)]
    comment = (
        f"{shaper_pou_name(plan)}: command shaper with rope-length schedule, {f.upper()}, "
        f"for a {plan.cycle_s:g} s cycle.",
        f"Project {plan.project_name}; input digest (SHA-256 of the project file): {plan.digest or '(none)'}.",
        "Call once per drive cycle, every cycle, in the task whose period is the drive cycle.",
        f"speed_in: speed command as a {f.upper()} fraction of full-scale speed ({sample}).",
        f"rope_length: rope length in counts of {sc.lsb_m:g} m (UDINT).",
        "reset: TRUE empties the ring (motion in flight is dropped) and holds speed_out at 0.",
        "speed_out: shaped speed command, same scaling as speed_in; row: schedule row used;",
        "status: 0 OK, 1 rope below the envelope (first row used), 2 above it (last row used),",
        "8 table check failed (output held at 0); clipped: outputs saturated since reset;",
        "settled: the command has been 0 for RING_LEN cycles, so this and every later output is 0 (the shaper",
        "has delivered the whole move; it says nothing about the crane's own motion).",
        "Bit-exact with the C runtime (shk_shaper.h, shk_schedule.h) and stillhook's integer reference.",
    )
    sections = (
        ("VAR_INPUT", (StVar("speed_in", sample, comment=f"{f.upper()} speed command"),
                       StVar("rope_length", "UDINT", comment=f"counts of {sc.lsb_m:g} m"),
                       StVar("reset", "BOOL", comment="TRUE: empty the ring, output 0"))),
        ("VAR_OUTPUT", (StVar("speed_out", sample, comment=f"{f.upper()} shaped speed command"),
                        StVar("row", "UDINT", comment="schedule row in use"),
                        StVar("status", "UDINT", comment="0 OK, 1 CLAMPED_LOW, 2 CLAMPED_HIGH, 8 ERR_TABLE"),
                        StVar("clipped", "UDINT", comment="saturated outputs since reset"),
                        StVar("settled", "BOOL", comment="command 0 for RING_LEN cycles: no motion left in the ring"))),
        ("VAR CONSTANT", tuple(consts)),
        ("VAR", tuple(local)),
    )
    return StPou(shaper_pou_name(plan), "FUNCTION_BLOCK", comment, sections, _body(plan))


def shaper_cost(plan, n_taps: int) -> OpCount:
    """Operations of one cycle (reset FALSE, table checked) for a row of ``n_taps`` taps, worst case.

    Counted from the text of ``_LOOKUP``/``_SEARCH``/``_STEP`` (the FOR loop's own increment and
    test count as one add and one compare per pass); the tests recount them from the emitted ST.
    """
    rows = plan.shaper.n_rows
    passes = math.ceil(math.log2(rows)) if rows > 1 else 0
    lookup = OpCount(compares=2)  # the two envelope compares
    if rows > 1:
        # per pass: while test, middle (sub, div, add), threshold compare and read, lo/hi update (add)
        lookup += OpCount(divisions=1, adds=3, compares=2, array_reads=1) * passes + OpCount(adds=1, compares=1)
    per_tap = (OpCount(adds=1 + 1 + 1 + 1 + 1 + 2 + 1, compares=1 + 1, multiplies=2, array_reads=3,
                       array_writes=1) + FLOOR_DIV_COST)
    # fixed: base (mul), loop bound (sub, N_TAPS read), e (add), slot read, y (2 adds, 2 floors),
    # remainder (2 muls, 2 adds), ring[head] := 0, head (add, compare), saturation (2 compares, clip compare, add)
    # settled: two compares and an add for the zero run, one compare for the flag
    fixed = (OpCount(multiplies=1 + 2, adds=1 + 1 + 2 + 2 + 1 + 1 + 1, compares=1 + 2 + 1 + 3, array_reads=2,
                     array_writes=1) + FLOOR_DIV_COST * 2)
    return lookup + fixed + per_tap * n_taps
