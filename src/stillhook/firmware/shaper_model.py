"""Integer reference of the C shaper (codegen/shk_shaper.[ch]): scatter form, accumulator ring, remainder.

The shaper spreads each new command sample into a ring of future-output accumulators with the row
selected WHEN THE SAMPLE ARRIVES, and takes each cycle's output from its own slot. Per cycle n, with
row r, input x = x[n], amplitudes A[r, i] (units 2^-F, each row summing to exactly 2^F) and delays
d[r, i] (whole cycles, < N = ring_len)::

    scatter   p_i = A[r, i] * x                                    (exact)
              q_i = floor((p_i + 2^(S-1)) / 2^S),  rho_i = p_i - 2^S q_i   in [-2^(S-1), 2^(S-1))
              slot[(n + d[r, i]) mod N] += q_i                     (units 2^-(F-S) LSB)
              e += sum_i rho_i                                     (units 2^-F LSB, at once)
    output    v = 2^S slot[n mod N] + e
              y = floor((v + 2^(F-1)) / 2^F)                       (round half up)
              e = v - 2^F y                                        in [-2^(F-1), 2^(F-1))
              slot[n mod N] = 0;   output sat(y)

F = 15 (Q15) or 31 (Q31); S = SLOT_SHIFT = 7. A slot keeps each product to 2^-(F-S) of an output LSB
(2^-8 LSB in Q15, 2^-24 in Q31) so that it fits an int32_t (Q15) or int64_t (Q31) whatever the row
switches (see "Accumulator widths"); the few bits below that grid are not thrown away but go into
the same remainder e that carries the output rounding.

Exact distance (no saturation). Every product is split exactly: p_i = 2^S q_i + rho_i, and
sum_i p_i = x sum_i A[r, i] = 2^F x for ANY row r. So after cycle n, with every slot still holding
undelivered parts::

    2^F sum_{k<=n} y[k] + e_n + 2^S sum(slots) = 2^F sum_{k<=n} x[k]            (e_{-1} = 0)

(induction: the scatter adds 2^F x[n] to the right and the same to (2^S slots + e) on the left; the
output moves 2^S slot[n] + e into 2^F y[n] + e_n). Once the command has been zero for N cycles
every slot is empty, so e_n = 2^F (sum x - sum y) is a multiple of 2^F; as -2^(F-1) <= e_n < 2^(F-1)
it is 0, and sum y = sum x EXACTLY, whatever rows were selected when: a move ends at exactly the
commanded position, to the LSB. Saturation breaks this by exactly the amount clipped (``clipped``
counts the clamped outputs); e keeps only the rounding remainder of the unclamped value.

Accuracy. Let exact[n] = sum over samples m, taps i with m + d[r(m), i] = n of A x[m] / 2^F (the
scatter convolution; with the row held fixed it is the ordinary shaper sum_i A_i x[n - d_i] / 2^F).
Then, in LSB (a = taps of the arriving sample with d > 0, b = delayed contributions due at n)::

    |y[n] - exact[n]| < 1 + (a + b) 2^(S-1-F)        fixed row of K taps: < 1 + (K - 1) 2^(S-F)

(Q15: 1 + (K-1)/256, 0.055 LSB above 1 for 15 taps; Q31: 1 + (K-1) 2^-24). Plain per-sample
rounding (the earlier gather runtime) was within 1/2 LSB per sample but let the rounding errors
add up along the move; here each output may be off by up to about one LSB, but the running sum of
the errors (the position error, in LSB x cycles) stays within 1/2 + I 2^(S-1-F), I = delayed
contributions still in flight (at most sum_i d_i for a fixed row), and is zero at rest.

Saturation can happen when the delivered value leaves the sample range: with rows that have
negative amplitudes (sum |A| > 2^F), around row switches (one slot can collect parts of several
rows: up to sum_d max_r |A[r](d)| / 2^F times full scale, 7.5 for the demo design), and with a
fixed row of non-negative amplitudes only when |exact| is within 1 + (K-1) 2^(S-F) LSB of full scale.

Accumulator widths (checked by the generator and by init). A slot receives at most one part of
each tap of each sample in flight, and |q_i| <= |A| 2^(F-S) because |x| <= 2^F; under arbitrary
row switching one slot can gather a tap of every row, so with W = sum over ALL rows and taps of
|A| (units 2^-F) every slot, and the output's slot + floor((e + 2^(F-1)) / 2^S), stay within::

    (W + 1) 2^(F-S) + ceil(stride / 2)  <=  2^31 - 1 (Q15, int32_t)   or   2^63 - 1 (Q31, int64_t)

i.e. W below about 256 x full scale. (A bound on one row's sum |A| is not enough: slots collect
parts of the rows selected before AND after a switch.) The remainder e fits int32_t in both formats.

Notes
-----
Rounding as floor(x + 1/2) and the remainder of integer division: Graham, Knuth & Patashnik,
*Concrete Mathematics*, 2nd ed., Addison-Wesley, 1994, sections 3.1 and 3.4. Carrying the rounding
remainder into the next output is error feedback (noise shaping): Spang & Schultheiss, "Reduction of
quantizing noise by use of feedback", IRE Trans. Communications Systems 10(4):373-380, 1962 (from
memory). Shaper as impulse convolution: Singer & Seering, ASME JDSMC 112(1):76-82, 1990.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from stillhook.errors import ConfigError, EmitError
from stillhook.firmware.qformat import FRACTION_BITS, MAX_TAPS, fraction_bits, sample_limits

__all__ = [
    "AMPLITUDE_BYTES", "MAX_RING_LEN", "SLOT_BYTES", "SLOT_MAX", "SLOT_SHIFT", "ShaperModel", "ShaperTable",
    "abs_sum_limit", "switch_transient",
]

#: S: bits of each product below the slot grid; they go to the remainder at once (shk_shaper.h).
SLOT_SHIFT = 7
#: Bytes per ring slot (int32_t for Q15, int64_t for Q31).
SLOT_BYTES = {"q15": 4, "q31": 8}
#: Largest slot value (int32_t / int64_t).
SLOT_MAX = {"q15": 2**31 - 1, "q31": 2**63 - 1}
#: Bytes per stored shaper amplitude (one width up, so 1.0 = 2^F fits).
AMPLITUDE_BYTES = {"q15": 4, "q31": 8}
#: Largest ring the runtime accepts (head + delay must fit a uint32_t).
MAX_RING_LEN = 2**31


def abs_sum_limit(fmt: str, stride: int) -> int:
    """Largest W = sum of |A| over all rows (units 2^-F) whose ring cannot overflow.

    (W + 1) 2^(F-S) + ceil(stride / 2) <= SLOT_MAX  <=>  W <= floor((SLOT_MAX - ceil(stride/2)) / 2^(F-S)) - 1.
    Same integer formula as SHK_SHAPER_Q15/Q31_ABS_SUM_LIMIT in shk_shaper.h.
    """
    F = fraction_bits(fmt)
    return (SLOT_MAX[fmt] - (stride + 1) // 2) // (1 << (F - SLOT_SHIFT)) - 1


@dataclass(frozen=True)
class ShaperTable:
    """Integer shaper rows as the C runtime stores them (padded to a common stride).

    Attributes
    ----------
    fmt : {'q15', 'q31'}
    amplitudes : ndarray int64 (n_rows, stride)
        Units 2^-F; each row sums to exactly 2^F; padding taps are 0.
    delays : ndarray int64 (n_rows, stride)
        Whole cycles; padding taps are 0.
    n_taps : ndarray int64 (n_rows,)
    ring_len : int
        N = max delay + 1: accumulator slots the caller provides.
    """

    fmt: str
    amplitudes: np.ndarray
    delays: np.ndarray
    n_taps: np.ndarray
    ring_len: int

    @classmethod
    def from_rows(cls, rows: list[tuple[np.ndarray, np.ndarray]], fmt: str) -> ShaperTable:
        """Build from ``[(amplitude ints, delay ints), ...]``, one pair per row.

        Raises
        ------
        EmitError
            Unequal lengths, negative delays, a row not summing to 2^F, |A| > 2^F, too many taps,
            or amplitudes too large in total for the accumulator ring (:func:`abs_sum_limit`).
        """
        F = fraction_bits(fmt)
        if not rows:
            raise EmitError("a shaper table needs at least one row")
        stride = max(len(a) for a, _ in rows)
        if stride > MAX_TAPS:
            raise EmitError(f"a shaper row has {stride} impulses; allowed: at most {MAX_TAPS}")
        amps = np.zeros((len(rows), stride), dtype=np.int64)
        dels = np.zeros((len(rows), stride), dtype=np.int64)
        n_taps = np.zeros(len(rows), dtype=np.int64)
        for r, (a, d) in enumerate(rows):
            a, d = np.asarray(a, dtype=np.int64), np.asarray(d, dtype=np.int64)
            if a.shape != d.shape or a.ndim != 1 or a.size == 0 or np.any(d < 0):
                raise EmitError(f"shaper row {r}: amplitudes and delays must be equal-length, delays >= 0")
            if int(a.sum()) != 1 << F:
                raise EmitError(f"shaper row {r}: amplitudes sum to {int(a.sum())}; allowed: exactly {1 << F}")
            if np.any(np.abs(a) > 1 << F):
                raise EmitError(f"shaper row {r}: an amplitude of {int(np.abs(a).max())} exceeds {1 << F}")
            amps[r, : a.size], dels[r, : d.size], n_taps[r] = a, d, a.size
        ring_len = int(dels.max()) + 1
        if ring_len > MAX_RING_LEN:
            raise EmitError(f"a shaper delay of {ring_len - 1} cycles is too long; allowed: < {MAX_RING_LEN}")
        table = cls(fmt, amps, dels, n_taps, ring_len)
        W, limit = table.abs_sum, abs_sum_limit(fmt, stride)
        if W > limit:
            row_sums = np.abs(amps).sum(axis=1)
            worst = int(np.argmax(row_sums))
            raise EmitError(
                f"the shaper rows' amplitudes add up to sum |A| = {W / 2**F:.6g} x full scale over {len(rows)} "
                f"rows (largest: row {worst}, {row_sums[worst] / 2**F:.6g}); the {fmt.upper()} accumulator ring "
                f"({SLOT_BYTES[fmt] * 8}-bit slots) holds at most {limit / 2**F:.8g} x full scale whatever the row "
                "switches; allowed: fewer rows ([design] max_schedule_rows) or rows with smaller negative impulses")
        return table

    @property
    def n_rows(self) -> int:
        return int(self.amplitudes.shape[0])

    @property
    def stride(self) -> int:
        return int(self.amplitudes.shape[1])

    @property
    def abs_sum(self) -> int:
        """W: sum of |A| over every row and tap (units 2^-F)."""
        return int(np.abs(self.amplitudes).sum())

    def flash_bytes(self) -> int:
        """Bytes of the const arrays: amplitudes, delays (uint32) and tap counts (uint32)."""
        n = self.n_rows * self.stride
        return n * AMPLITUDE_BYTES[self.fmt] + n * 4 + self.n_rows * 4

    def ring_bytes(self) -> int:
        """Bytes of the caller's accumulator ring (ring_len slots)."""
        return self.ring_len * SLOT_BYTES[self.fmt]


@dataclass
class ShaperModel:
    """Integer model of shk_shaper_q15/q31: accumulator ring, row at arrival, remainder e.

    ``run(x, rows)`` processes a block; state (ring, head, remainder, clipped count) carries over
    between calls exactly as the C instance's does. Vectorized: the scatter is one ``np.add.at``
    and the remainder recursion is solved in closed form (e_n is the value of
    e_{-1} + sum_{k<=n} (2^S slot_k + sum rho) reduced into [-2^(F-1), 2^(F-1)) modulo 2^F).
    """

    table: ShaperTable
    ring: np.ndarray = field(init=False)
    head: int = field(init=False)
    remainder: int = field(init=False)
    clipped: int = field(init=False)

    def __post_init__(self) -> None:
        self.reset()

    def reset(self) -> None:
        """Empty ring, remainder 0 (as init does)."""
        self.ring = np.zeros(self.table.ring_len, dtype=np.int64)
        self.head, self.remainder, self.clipped = 0, 0, 0

    def pending(self) -> bool:
        """True while parts of past samples are still waiting in the ring (or e != 0)."""
        return bool(np.any(self.ring != 0) or self.remainder != 0)

    def run(self, x, rows) -> np.ndarray:
        """Shape samples ``x`` (ints in the sample range) with row ``rows[k]`` selected at sample k.

        Parameters
        ----------
        x : array_like of int
        rows : int or array_like of int, same length as x

        Returns
        -------
        ndarray of int64: the saturated outputs.
        """
        t = self.table
        F, S = FRACTION_BITS[t.fmt], SLOT_SHIFT
        lo, hi = sample_limits(t.fmt)
        xs = np.asarray(x, dtype=np.int64)
        if xs.ndim != 1 or np.any(xs < lo) or np.any(xs > hi):
            raise ConfigError(f"shaper input must be a 1-D array of {t.fmt} integers in [{lo}, {hi}]")
        r = np.broadcast_to(np.asarray(rows, dtype=np.int64), xs.shape)
        if np.any(r < 0) or np.any(r >= t.n_rows):
            raise ConfigError(f"row numbers must be in [0, {t.n_rows - 1}]")
        L, N = xs.size, t.ring_len
        if L == 0:
            return np.zeros(0, dtype=np.int64)
        # scatter: p = A x exact (|p| <= 2^62), q = round half up (p / 2^S), rho = p - 2^S q
        p = t.amplitudes[r] * xs[:, None]
        q = (p + (1 << (S - 1))) >> S
        rho_sum = (p - q * (1 << S)).sum(axis=1)
        timeline = np.zeros(L + N, dtype=np.int64)
        timeline[:N] = np.roll(self.ring, -self.head)  # timeline[j] = slot of cycle (now + j)
        np.add.at(timeline, np.arange(L)[:, None] + t.delays[r], q)
        slot = timeline[:L]
        # remainder: e_k = wrap(e_{k-1} + rho_sum_k + 2^S slot_k), wrap(v) = v mod 2^F into [-2^(F-1), 2^(F-1))
        full, half = 1 << F, 1 << (F - 1)
        c = (rho_sum + (slot % (1 << (F - S))) * (1 << S)) % full  # each term's residue mod 2^F
        e = (self.remainder + np.cumsum(c) + half) % full - half
        e_prev = np.concatenate([[self.remainder], e[:-1]])
        # y = floor((2^S slot + e_prev + rho_sum + 2^(F-1)) / 2^F), in the C order of operations
        y = (slot + ((e_prev + rho_sum + half) >> S)) >> (F - S)
        out = np.clip(y, lo, hi)
        self.clipped = min(self.clipped + int(np.count_nonzero(out != y)), 2**32 - 1)
        self.remainder = int(e[-1])
        self.head = (self.head + L) % N
        self.ring = np.roll(timeline[L:], self.head)
        return out


def switch_transient(table: ShaperTable) -> float:
    """Largest change of a steady command caused by switching to a neighbouring row (fraction of it).

    With the command held at v and a switch from row a to row b at cycle s, the output k >= 0 cycles
    later is v (1 - C_a(k) + C_b(k)) (older samples keep row a, newer ones use row b), where
    C_r(k) = sum_{d_i <= k} A[r, i] / 2^F is row r's step response. So the shaped command moves by
    v (C_b(k) - C_a(k)) for at most max delay cycles: faster when row b has the shorter delays (the
    trolley makes up the shorter lag of the new row), slower otherwise; the areas cancel exactly with
    the change of mean delay, which is what keeps the distance exact.

    Returns
    -------
    float: max over adjacent rows (both directions) and k of |C_b(k) - C_a(k)|; 0 for one row.
    """
    F = FRACTION_BITS[table.fmt]
    if table.n_rows < 2:
        return 0.0
    steps = np.zeros((table.n_rows, table.ring_len), dtype=np.int64)
    for r in range(table.n_rows):
        k = int(table.n_taps[r])
        np.add.at(steps[r], table.delays[r, :k], table.amplitudes[r, :k])
    C = np.cumsum(steps, axis=1)
    return float(np.abs(np.diff(C, axis=0)).max()) / 2.0**F
