"""Structured Text helpers that make IEC integer arithmetic give the C runtime's integers.

IEC 61131-3 integer division truncates toward zero, and SHL/SHR act on bit strings (WORD, DWORD,
LWORD), not on signed integers. The C runtime rounds with floor(v / 2^s) (``shk_floor_shift64``,
``shk_floor_shift32`` in shk_fixed.h). So the ST never shifts a signed value: it calls a floor
division helper, one per integer width::

    q = trunc(v / d);  if v < q d then q = q - 1        (d > 0)   =>  q = floor(v / d)

(v < q d exactly when v < 0 and d does not divide v). Cost: one division, one multiply, one
compare, at most one subtraction. The helper is also right where a compiler floors instead of
truncating (then v >= q d and nothing is corrected).

Notes
-----
floor, trunc and the remainder of integer division: Graham, Knuth & Patashnik, *Concrete
Mathematics*, 2nd ed., Addison-Wesley, 1994, section 3.4. IEC 61131-3:2013 table of arithmetic
functions: DIV of integers truncates toward zero (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

from stillhook.firmware.st_pou import StPou, StVar

__all__ = ["OpCount", "FLOOR_DIV_COST", "floor_div_name", "floor_div_pou"]


@dataclass(frozen=True)
class OpCount:
    """Operations of one piece of ST, worst case over its branches (calls to helpers included)."""

    multiplies: int = 0
    divisions: int = 0
    adds: int = 0          # additions and subtractions
    compares: int = 0
    array_reads: int = 0
    array_writes: int = 0

    def __add__(self, other: OpCount) -> OpCount:
        return OpCount(*(a + b for a, b in zip(self.as_tuple(), other.as_tuple(), strict=True)))

    def __mul__(self, k: int) -> OpCount:
        return OpCount(*(a * int(k) for a in self.as_tuple()))

    __rmul__ = __mul__

    def as_tuple(self) -> tuple[int, ...]:
        return (self.multiplies, self.divisions, self.adds, self.compares, self.array_reads, self.array_writes)

    def as_dict(self) -> dict[str, int]:
        keys = ("multiplies", "divisions", "adds", "compares", "array_reads", "array_writes")
        return dict(zip(keys, self.as_tuple(), strict=True))


#: One call of a floor-division helper: q := v / d; IF v < q * d THEN q := q - 1.
FLOOR_DIV_COST = OpCount(multiplies=1, divisions=1, adds=1, compares=1)


def floor_div_name(prefix: str, int_type: str) -> str:
    """POU name of the floor-division helper for DINT or LINT."""
    return f"{prefix.upper()}_FLOOR_DIV_{int_type}"


_BODY = """q := v / d; (* IEC DIV truncates toward zero; |q * d| <= |v|, so the product below cannot overflow *)
IF v < q * d THEN
    q := q - 1; (* v < 0 and d does not divide v: truncation went up, the floor is one lower *)
END_IF;
$NAME := q;
"""


def floor_div_pou(prefix: str, int_type: str) -> StPou:
    """FUNCTION <PREFIX>_FLOOR_DIV_<T>(v, d) = floor(v / d) for d > 0, never overflowing."""
    name = floor_div_name(prefix, int_type)
    comment = (f"{name}(v, d) = floor(v / d) for d > 0, exact for every {int_type} v.",
               "Stands in for the C runtime's arithmetic right shift of a signed value",
               "(shk_floor_shift32 / shk_floor_shift64 in shk_fixed.h) with d = 2^s:",
               "IEC DIV truncates toward zero, and SHR is defined on bit strings only.")
    return StPou(name, "FUNCTION", comment,
                 (("VAR_INPUT", (StVar("v", int_type, comment="dividend"),
                                 StVar("d", int_type, comment="divisor, > 0"))),
                  ("VAR", (StVar("q", int_type),))),
                 _BODY.replace("$NAME", name), return_type=int_type)
