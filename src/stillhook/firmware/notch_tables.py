"""Notch coefficients for the fixed-point runtime: the stored integers and the shift check.

The integers are those of the one rounding analysis, :func:`stillhook.notch.rounding.quantize_sos`
(nearest with ties toward +infinity, then exact DC gain; see that module), with the post shift
limited to what the C runtime accepts (:data:`stillhook.firmware.qformat.MAX_POST_SHIFT`), put in
CMSIS-DSP order and sign. Each section's notch frequency (angle of its zeros) is compared with the
exact design (:func:`stillhook.notch.rounding.quantized_notch_shift`). A shift beyond the tolerance,
a lost notch (real zeros) or a pole on or outside the unit circle fails the format.

Notes
-----
Zero-angle notch frequency and the coefficient sensitivity of low-frequency zeros: see
:mod:`stillhook.notch.rounding` (Oppenheim & Schafer, *Discrete-Time Signal Processing*, 3rd ed.,
2010, section 6.8). CMSIS-DSP layout and sign: Arm CMSIS-DSP documentation, DF1 biquads.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.errors import DesignError, EmitError
from stillhook.firmware.qformat import MAX_POST_SHIFT, MAX_STAGES, BiquadTable
from stillhook.notch.rounding import quantize_sos, quantized_notch_shift

__all__ = ["NotchCheck", "choose_notch_format", "dc_gain", "quantize_notch"]


@dataclass(frozen=True)
class NotchCheck:
    """Result of rounding one notch cascade to one format.

    Attributes
    ----------
    table : BiquadTable
        Integers in CMSIS-DSP order and sign.
    freqs_hz, quantized_freqs_hz : ndarray
        Zero-angle notch frequency of each section before and after rounding (Hz).
    relative_shifts : ndarray
        (quantized - exact) / exact per section (fraction; -1 when the notch is lost).
    lost : ndarray of bool
        Rounding made the zeros real: no notch left in that section.
    pole_radii : ndarray
        Largest pole radius of each rounded section.
    tolerance : float
        Largest allowed |relative shift| (fraction).
    """

    table: BiquadTable
    freqs_hz: np.ndarray
    quantized_freqs_hz: np.ndarray
    relative_shifts: np.ndarray
    lost: np.ndarray
    pole_radii: np.ndarray
    tolerance: float

    @property
    def ok(self) -> bool:
        return bool(np.all(np.abs(self.relative_shifts) <= self.tolerance) and not np.any(self.lost)
                    and np.all(self.pole_radii < 1.0))

    def problems(self) -> list[str]:
        """One phrase per failing section, with the numbers."""
        out = []
        for i, (f, fq, rel) in enumerate(zip(self.freqs_hz, self.quantized_freqs_hz, self.relative_shifts,
                                             strict=True)):
            if self.lost[i]:
                out.append(f"notch {i + 1} at {f:.6g} Hz is lost (its zeros become real)")
            elif abs(rel) > self.tolerance:
                out.append(f"notch {i + 1} moves from {f:.6g} Hz to {fq:.6g} Hz ({100 * rel:+.3g} %)")
            if self.pole_radii[i] >= 1.0:
                out.append(f"notch {i + 1} has a pole at radius {self.pole_radii[i]:.9g} (unstable)")
        return out

    def as_dict(self) -> dict:
        return {
            "format": self.table.fmt,
            "post_shift": self.table.post_shift,
            "sections": [
                {"frequency_hz": float(f), "quantized_frequency_hz": float(fq), "relative_shift": float(r),
                 "lost": bool(lost), "pole_radius": float(rad)}
                for f, fq, r, lost, rad in zip(self.freqs_hz, self.quantized_freqs_hz, self.relative_shifts,
                                               self.lost, self.pole_radii, strict=True)],
            "max_relative_shift": self.tolerance,
        }


def quantize_notch(sos, fmt: str, cycle_s: float, tolerance: float) -> NotchCheck:
    """Round a notch cascade to ``fmt`` with exact DC gain, and measure how far each notch moves.

    Parameters
    ----------
    sos : array_like (n, 6)
        Scipy layout, a0 = 1, DC gain 1 (e.g. ``NotchDesign.sos``).
    fmt : {'q15', 'q31'}
    cycle_s : float > 0
        Drive cycle (s).
    tolerance : float > 0
        Largest allowed |relative notch shift| (fraction), e.g. 0.01.

    Returns
    -------
    NotchCheck
        ``.ok`` False when a notch moves past the tolerance, is lost, or a pole leaves the unit circle;
        the caller escalates or refuses.
    """
    a = np.asarray(sos, dtype=float)
    if a.ndim != 2 or a.shape[1] != 6 or not 1 <= a.shape[0] <= MAX_STAGES:
        raise EmitError(f"notch sos has shape {a.shape}; allowed: (n, 6) with 1 <= n <= {MAX_STAGES}")
    try:
        _, stored, post_shift = quantize_sos(a, fmt, max_post_shift=MAX_POST_SHIFT[fmt])
    except DesignError as exc:
        raise EmitError(f"notch coefficients up to {np.max(np.abs(a)):g} do not fit {fmt} with a post shift "
                        f"of at most {MAX_POST_SHIFT[fmt]}") from exc
    cmsis = np.column_stack([stored[:, :3], -stored[:, 3:]])  # feedback added: negate a1, a2
    shifts = quantized_notch_shift(a, fmt, cycle_s, post_shift=post_shift)
    return NotchCheck(BiquadTable(fmt, cmsis.astype(np.int64), post_shift),
                      np.array([q.frequency_hz for q in shifts]), np.array([q.quantized_frequency_hz for q in shifts]),
                      np.array([q.relative_shift for q in shifts]), np.array([q.lost for q in shifts]),
                      np.array([q.pole_radius for q in shifts]), float(tolerance))


def choose_notch_format(sos, fmt: str, cycle_s: float, tolerance: float, *,
                        escalate: bool) -> tuple[NotchCheck, str | None]:
    """Round in ``fmt``; when Q15 fails, move to Q31 (``escalate``) or refuse with the numbers.

    Returns
    -------
    (NotchCheck, reason)
        ``reason`` is None when ``fmt`` was kept, else one sentence saying why Q31 was used.

    Raises
    ------
    EmitError
        The notch fails in the requested format and cannot (or may not) be escalated.
    """
    check = quantize_notch(sos, fmt, cycle_s, tolerance)
    if check.ok:
        return check, None
    why = "; ".join(check.problems())
    limit = f"the limit is {100 * tolerance:.3g} % ([firmware] max_notch_shift_pct)"
    if fmt == "q15" and escalate:
        wide = quantize_notch(sos, "q31", cycle_s, tolerance)
        if wide.ok:
            return wide, f"Q15 coefficients would move the notch: {why}; {limit}. Using Q31."
        raise EmitError(f"notch cannot be stored in fixed point: in Q15 {why}; in Q31 "
                        + "; ".join(wide.problems()) + f"; {limit}")
    hint = ("; allow Q31 ([firmware] escalate_to_q31 = true or --format q31)" if fmt == "q15"
            else "; widen the limit or use a longer drive cycle")
    raise EmitError(f"{fmt.upper()} notch coefficients fail: {why}; {limit}{hint}")


def dc_gain(table: BiquadTable) -> float:
    """DC gain of the rounded cascade (exactly 1 by construction; for reports and tests)."""
    g = 1.0
    for b0, b1, b2, _, a1, a2 in table.sos():
        g *= (b0 + b1 + b2) / (1.0 + a1 + a2)
    return g if math.isfinite(g) else math.inf
