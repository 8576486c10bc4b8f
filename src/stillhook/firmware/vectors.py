"""Test vectors for the emitted self-test, computed with the integer reference model.

The shaper input mixes the cases that break fixed-point code: a full-scale step, a slow ramp through
zero, uniform random samples over the whole range and a full-scale alternating sequence (+max, min,
...), with the rope length held for segments of an odd number of cycles and stepped through every
switching threshold (both sides of each), plus lengths below and above the envelope (clamped). The
notch gets a step, random samples and the alternating sequence. A fixed seed makes the vectors, and
so the emitted files, identical on every run.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from stillhook.firmware.qformat import BiquadModel, sample_limits
from stillhook.firmware.shaper_model import ShaperModel

__all__ = [
    "NOTCH_SAMPLES", "SEED", "SEGMENT_CYCLES", "SelftestVectors", "segment_lengths", "selftest_vectors",
    "stress_signal",
]

#: Cycles the rope length is held in the shaper vectors (odd, so blocks split at odd points).
SEGMENT_CYCLES = 37
#: Fixed seed of the random part (any constant: determinism, not a tuned value).
SEED = 20240615
#: Notch vector length.
NOTCH_SAMPLES = 1200


@dataclass(frozen=True)
class SelftestVectors:
    """Inputs and expected outputs for one emitted self-test."""

    shaper_in: np.ndarray       # samples
    segment_lengths: np.ndarray  # rope length counts, one per segment of SEGMENT_CYCLES samples
    segment_status: np.ndarray   # expected lookup status per segment
    segment_rows: np.ndarray     # expected row per segment
    shaper_out: np.ndarray
    notch_in: np.ndarray | None = None
    notch_out: np.ndarray | None = None


def stress_signal(n: int, fmt: str, rng: np.random.Generator) -> np.ndarray:
    """Step to full scale, ramp through zero to the minimum, random, alternating +max/min: n samples."""
    lo, hi = sample_limits(fmt)
    q = max(1, n // 4)
    step = np.full(q, hi, dtype=np.int64)
    ramp = np.round(np.linspace(hi, lo, q)).astype(np.int64)
    noise = rng.integers(lo, hi, size=q, endpoint=True, dtype=np.int64)
    alt = np.where(np.arange(n - 3 * q) % 2 == 0, hi, lo).astype(np.int64)
    return np.concatenate([step, ramp, noise, alt])


def segment_lengths(plan) -> np.ndarray:
    """Rope length counts visiting every row: below the envelope, both sides of each threshold,
    the envelope ends, above the envelope."""
    s = plan.schedule
    pts = [max(0, s.length_min - 1), s.length_min]
    for t in s.thresholds:
        pts += [int(t) - 1, int(t)]
    pts += [s.length_max, s.length_max + 1, 2**32 - 1, s.length_min]
    return np.array(pts, dtype=np.int64)


def selftest_vectors(plan) -> SelftestVectors:
    """Vectors for ``plan`` (an EmitPlan), expected values from the reference model."""
    rng = np.random.default_rng(SEED)
    lengths = segment_lengths(plan)
    rows, status = plan.schedule.lookup(lengths)
    n = lengths.size * SEGMENT_CYCLES
    x = stress_signal(n, plan.fmt, rng)
    y = ShaperModel(plan.shaper).run(x, np.repeat(rows, SEGMENT_CYCLES))
    notch_in = notch_out = None
    if plan.notch is not None:
        notch_in = stress_signal(NOTCH_SAMPLES, plan.notch.table.fmt, rng)
        notch_out = BiquadModel(plan.notch.table).run(notch_in)
    return SelftestVectors(x, lengths, status, rows, y, notch_in, notch_out)
