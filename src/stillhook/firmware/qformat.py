"""Fixed-point arithmetic of the C runtime, and its integer reference model in numpy.

Everything here mirrors ``codegen/`` bit for bit: the emitted self-test and the cffi tests
check the C against these functions.

Q formats: Q15 samples are int16 values n / 2^15, Q31 samples int32 values n / 2^31.

Rounding, wherever a result is narrowed (round to nearest, ties toward +infinity; the one rule of
:mod:`stillhook.fixed_point`, re-exported here)::

    round_shift(v, s) = floor((v + 2^(s-1)) / 2^s)

Saturation: clamp to [-2^F, 2^F - 1] (F = 15 or 31); nothing wraps.

Shaper: scatter form with an accumulator ring and a carried rounding remainder, in
:mod:`stillhook.firmware.shaper_model` (amplitudes one width up, each row summing to exactly 2^F).

Biquad stage (direct form I, feedback ADDED, CMSIS-DSP sign convention)::

    y[n] = sat(round_shift(b0 x[n] + b1 x[n-1] + b2 x[n-2] + a1 y[n-1] + a2 y[n-2], F - post_shift))

Schedule: ``row = #{k : thresholds[k] <= L}`` after clamping L to [length_min, length_max].

Notes
-----
Round-to-nearest as floor(x + 1/2): Graham, Knuth & Patashnik, *Concrete Mathematics*, 2nd ed.,
Addison-Wesley, 1994, section 3.1. Saturation arithmetic as the overflow characteristic of
fixed-point filters: Oppenheim & Schafer, *Discrete-Time Signal Processing*, 3rd ed., 2010,
section 6.7 (from memory). Largest-remainder apportionment (Hamilton's method): Balinski &
Young, *Fair Representation*, Yale University Press, 1982 (from memory). Biquad layout: Arm
CMSIS-DSP documentation, "Biquad Cascade IIR Filters Using Direct Form I Structure".
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from stillhook.errors import ConfigError, EmitError
from stillhook.fixed_point import FRACTION_BITS, round_half_up, round_shift
from stillhook.model.lookup import rope_length_counts, rows_for_counts

__all__ = [
    "BiquadModel", "BiquadTable", "FRACTION_BITS", "MAX_POST_SHIFT", "MAX_STAGES", "MAX_TAPS", "SAMPLE_BYTES",
    "SAMPLE_C_TYPES", "STATUS_CLAMPED_HIGH", "STATUS_CLAMPED_LOW", "STATUS_OK", "ScheduleTable", "WIDE_C_TYPES",
    "fraction_bits", "quantize_amplitudes", "round_shift", "sample_limits", "saturate", "to_fixed", "to_float",
]

#: Bytes per sample of each format.
SAMPLE_BYTES = {"q15": 2, "q31": 4}
#: C type of a sample of each format (the emitted tables and the cffi builds alike).
SAMPLE_C_TYPES = {"q15": "int16_t", "q31": "int32_t"}
#: C type one width up: shaper amplitudes and accumulator ring slots.
WIDE_C_TYPES = {"q15": "int32_t", "q31": "int64_t"}
#: C limits mirrored from codegen/ (shk_shaper.h, shk_biquad.h).
MAX_TAPS = 4096
MAX_STAGES = 64
MAX_POST_SHIFT = {"q15": 14, "q31": 15}

# status flags, as in shk_fixed.h
STATUS_OK = 0
STATUS_CLAMPED_LOW = 1
STATUS_CLAMPED_HIGH = 2


def fraction_bits(fmt: str) -> int:
    """F for ``fmt`` ('q15' -> 15, 'q31' -> 31); ConfigError otherwise."""
    if fmt not in FRACTION_BITS:
        raise ConfigError(f"fixed-point format {fmt!r} is not allowed; allowed: 'q15', 'q31'")
    return FRACTION_BITS[fmt]


def sample_limits(fmt: str) -> tuple[int, int]:
    """(min, max) of a sample: (-2^F, 2^F - 1)."""
    f = fraction_bits(fmt)
    return -(1 << f), (1 << f) - 1


# -- scalar/array arithmetic ------------------------------------------------------------------
def saturate(v, fmt: str):
    """Clamp v to the sample range of ``fmt`` (ints or int64 arrays)."""
    lo, hi = sample_limits(fmt)
    if isinstance(v, np.ndarray):
        return np.clip(v, lo, hi)
    return min(max(v, lo), hi)


def to_fixed(x, fmt: str) -> np.ndarray:
    """Float values (fractions of full scale) to Q integers: round half up, then saturate.

    Parameters
    ----------
    x : array_like of float
        Values in units of full scale; out-of-range values saturate.
    fmt : {'q15', 'q31'}

    Returns
    -------
    ndarray of int64
    """
    f = fraction_bits(fmt)
    a = np.asarray(x, dtype=float)
    if not np.all(np.isfinite(a)):
        raise ConfigError("values to quantize must be finite")
    lo, hi = sample_limits(fmt)
    # floor(x 2^F + 1/2): x * 2^F is exact in binary floating point
    q = round_half_up(np.clip(a * 2.0**f, lo - 1.0, hi + 1.0))
    return np.clip(q, lo, hi).astype(np.int64)


def to_float(q, fmt: str) -> np.ndarray:
    """Q integers to floats (fractions of full scale)."""
    return np.asarray(q, dtype=float) / 2.0 ** fraction_bits(fmt)


def quantize_amplitudes(amplitudes, fmt: str) -> np.ndarray:
    """Impulse amplitudes (summing to 1) to integers summing to exactly 2^F.

    Largest-remainder rounding: every value is floored, then the missing units go one each to the
    largest remainders (ties to the earlier impulse). Each integer is within 1 of a * 2^F.

    Parameters
    ----------
    amplitudes : array_like of float, sum 1 (to within 1e-9)
    fmt : {'q15', 'q31'}

    Returns
    -------
    ndarray of int64, sum exactly 2^F, each |A| <= 2^F
    """
    f = fraction_bits(fmt)
    a = np.asarray(amplitudes, dtype=float)
    if a.ndim != 1 or a.size == 0 or not np.all(np.isfinite(a)):
        raise EmitError(f"shaper amplitudes {a!r} must be a non-empty list of finite numbers")
    if abs(a.sum() - 1.0) > 1e-9:
        raise EmitError(f"shaper amplitudes sum to {a.sum():.12g}; allowed: a sum of 1 (unity gain)")
    if np.any(np.abs(a) > 1.0 + 1e-12):
        raise EmitError(f"a shaper amplitude of {np.max(np.abs(a)):.6g} exceeds 1 in magnitude; "
                        f"allowed: |amplitude| <= 1 for the {fmt} runtime")
    full = 1 << f
    scaled = a * float(full)  # exact: multiplying by a power of two
    floors = np.floor(scaled)
    remainders = scaled - floors
    q = floors.astype(np.int64)
    deficit = full - int(q.sum())
    if not 0 <= deficit <= a.size:  # cannot happen when the sum is 1 to within 1e-9
        raise EmitError(f"amplitude rounding left {deficit} units to place among {a.size} impulses")
    order = np.lexsort((np.arange(a.size), -remainders))  # largest remainder first, then index
    q[order[:deficit]] += 1
    if np.any(np.abs(q) > full):
        raise EmitError(f"a quantized amplitude exceeds full scale ({full}); allowed: |A| <= {full}")
    return q


# -- schedule ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class ScheduleTable:
    """Rope-length lookup as the C runtime does it (shk_schedule.h).

    Attributes
    ----------
    thresholds : ndarray int64 (n_rows - 1,)
        Strictly ascending counts; row = number of thresholds <= L.
    length_min, length_max : int
        Envelope in counts; outside it L is clamped and a status flag set.
    lsb_m : float
        Metres per count.
    """

    thresholds: np.ndarray
    length_min: int
    length_max: int
    lsb_m: float

    @property
    def n_rows(self) -> int:
        return int(self.thresholds.size) + 1

    def lookup(self, lengths) -> tuple[np.ndarray, np.ndarray]:
        """Rows and status flags for rope lengths in counts (uint32 values).

        Returns
        -------
        (rows, status) : ndarrays of int64
        """
        L = np.asarray(lengths, dtype=np.int64)
        status = np.where(L < self.length_min, STATUS_CLAMPED_LOW,
                          np.where(L > self.length_max, STATUS_CLAMPED_HIGH, STATUS_OK))
        Lc = np.clip(L, self.length_min, self.length_max)
        rows = rows_for_counts(self.thresholds, Lc)
        return rows, status.astype(np.int64)

    def counts(self, rope_length_m) -> np.ndarray:
        """Rope lengths (m) to input counts: round half up, clipped to uint32."""
        c = rope_length_counts(rope_length_m, self.lsb_m)
        return np.clip(c, 0, 2**32 - 1).astype(np.int64)

    def flash_bytes(self) -> int:
        return 4 * int(self.thresholds.size)


# -- biquad cascade ----------------------------------------------------------------------------
@dataclass(frozen=True)
class BiquadTable:
    """Integer biquad cascade in CMSIS-DSP order and sign: rows {b0, b1, b2, a1, a2}.

    a1, a2 here are ADDED feedback terms (the negatives of scipy's). Real coefficient =
    stored * 2^(post_shift - F).
    """

    fmt: str
    coeffs: np.ndarray  # int64 (n_stages, 5)
    post_shift: int

    @property
    def n_stages(self) -> int:
        return int(self.coeffs.shape[0])

    def layout(self) -> np.ndarray:
        """Flat coefficient array as stored: Q15 {b0, 0, b1, b2, a1, a2}, Q31 {b0, b1, b2, a1, a2}."""
        if self.fmt == "q15":
            c = self.coeffs
            return np.column_stack([c[:, 0], np.zeros(len(c), dtype=np.int64), c[:, 1:]]).ravel()
        return self.coeffs.ravel().copy()

    def sos(self) -> np.ndarray:
        """The real coefficients the integers stand for, scipy layout (n, 6), a0 = 1."""
        scale = 2.0 ** (self.post_shift - FRACTION_BITS[self.fmt])
        c = self.coeffs.astype(float) * scale
        return np.column_stack([c[:, 0], c[:, 1], c[:, 2], np.ones(len(c)), -c[:, 3], -c[:, 4]])

    def flash_bytes(self) -> int:
        return self.layout().size * SAMPLE_BYTES[self.fmt]

    def state_bytes(self) -> int:
        return 4 * self.n_stages * SAMPLE_BYTES[self.fmt]


@dataclass
class BiquadModel:
    """Integer model of shk_biquad_q15/q31 (DF1, state {x1, x2, y1, y2} per stage)."""

    table: BiquadTable
    state: list = field(init=False)

    def __post_init__(self) -> None:
        self.reset()

    def reset(self) -> None:
        self.state = [[0, 0, 0, 0] for _ in range(self.table.n_stages)]

    def run(self, x) -> np.ndarray:
        """Filter integer samples ``x``; state carries over between calls."""
        t = self.table
        lo, hi = sample_limits(t.fmt)
        xs = [int(v) for v in np.asarray(x, dtype=np.int64)]
        if any(v < lo or v > hi for v in xs):
            raise ConfigError(f"biquad input must be {t.fmt} integers in [{lo}, {hi}]")
        s = FRACTION_BITS[t.fmt] - t.post_shift
        coeffs = [[int(c) for c in row] for row in t.coeffs]
        out = np.empty(len(xs), dtype=np.int64)
        for n, v in enumerate(xs):
            for (b0, b1, b2, a1, a2), st in zip(coeffs, self.state, strict=True):
                # Python ints are exact, so this equals the C split accumulator for Q31
                acc = b0 * v + b1 * st[0] + b2 * st[1] + a1 * st[2] + a2 * st[3]
                y = saturate(round_shift(acc, s), t.fmt)
                st[1], st[0], st[3], st[2] = st[0], v, st[2], y
                v = y
            out[n] = v
        return out
