"""The fixed-point number rules every stage shares: fraction bits per format and the one rounding rule.

The emitted C runtime (``codegen/``) rounds to nearest with ties toward +infinity wherever a value is
narrowed; the notch's coefficient analysis (:mod:`stillhook.notch.rounding`) and the firmware's
integer reference (:mod:`stillhook.firmware.qformat`) round with the same rule, from here::

    round_half_up(x)  = floor(x + 1/2)                     (real x)
    round_shift(v, s) = floor((v + 2^(s-1)) / 2^s)         (integer v, s >= 1; the C runtime's shift)

so round_shift(v, s) = round_half_up(v / 2^s) for every integer v.

Notes
-----
Round-to-nearest as floor(x + 1/2): Graham, Knuth & Patashnik, *Concrete Mathematics*, 2nd ed.,
Addison-Wesley, 1994, section 3.1.
"""

from __future__ import annotations

import numpy as np

__all__ = ["FRACTION_BITS", "round_half_up", "round_shift"]

#: Fractional bits F of each fixed-point format (Q15: int16 n / 2^15, Q31: int32 n / 2^31).
FRACTION_BITS = {"q15": 15, "q31": 31}


def round_half_up(x) -> np.ndarray:
    """Nearest integer to real ``x`` (as floats), ties toward +infinity: floor(x + 1/2)."""
    return np.floor(np.asarray(x, dtype=float) + 0.5)


def round_shift(v, s: int):
    """round(v / 2^s), ties toward +infinity: floor((v + 2^(s-1)) / 2^s), s >= 1 (ints or int64 arrays)."""
    return (v + (1 << (s - 1))) >> s
