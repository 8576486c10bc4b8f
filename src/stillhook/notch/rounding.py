"""Where a biquad notch lands after its coefficients are rounded to Q15 or Q31: the one rounding analysis.

A notch far below the sample rate has zeros at angle theta = 2 pi f0 T very close to z = 1; the
zero angle is carried by the tiny difference between b1 and -2 b0, so rounding the coefficients to
a fixed-point grid moves the notch, and in Q15 at a fast drive cycle it can lose it altogether.
The notch design reports it (:attr:`NotchDesign.quantization`) and the code generator stores
exactly these integers (:mod:`stillhook.firmware.notch_tables`), so both say the same.

Storage convention (the layout of the Arm CMSIS-DSP direct-form-I biquads, open source): each
section's coefficients b0, b1, b2, a1, a2 (a0 = 1 is not stored) are stored as signed integers of
F = 15 (int16) or 31 (int32) fractional bits, N = 2^(F - post_shift) standing for 1.0, so the real
coefficient is ``q / N``. CMSIS stores the feedback terms added (-a1, -a2), so every one of
b0, b1, b2, -a1, -a2 must lie in [-2^F, 2^F - 1]. One post_shift serves the whole cascade; the
automatic choice is the smallest shift >= 0 that keeps them in range (1 for a notch, whose a1 is
close to -2).

Rounding, in two steps:

1. ``q = round_half_up(c N)`` for each coefficient: nearest, ties toward +infinity, the firmware's
   rule (:mod:`stillhook.fixed_point`).
2. Exact DC gain. A section's DC gain is (B0 + B1 + B2) / (N + A1 + A2), exactly 1 when
   B0 + B1 + B2 = N + A1 + A2. A speed filter with DC gain 1 + e makes the trolley travel (1 + e)
   times as far, so this is worth one integer of adjustment: B1 keeps its rounded value, B0 and B2
   share the remainder T = N + A1 + A2 - B1 around their rounded difference (B0 - B2), and when T
   has the wrong parity A2 moves by one unit toward its exact value. For the notches of
   :mod:`stillhook.notch.design` (b1 = a1, b0 + b2 = 1 + a2, b0 = b2 for a true null) this keeps the
   numerator symmetric, so the zeros stay on the unit circle and the notch stays infinitely deep.
   Every section must have DC gain 1 before rounding (as every notch has).

How the notch frequency of a (quantized) section is measured: the angle of its zeros. The zeros of
b0 z^2 + b1 z + b2 form the pair r e^(+-j theta) with cos(theta) = -b1 / (2 sqrt(b0 b2)); the notch
frequency is f = theta / (2 pi T). For an infinitely deep notch (b0 = b2, which rounding keeps) the
zeros stay on the unit circle and theta is exactly where the response is zero. When rounding makes
the zeros real (b1^2 >= 4 b0 b2) the section no longer has a notch: its frequency is reported as 0
and the section is flagged ``lost``.

Notes
-----
CMSIS-DSP biquad coefficient layout and postShift: Arm CMSIS-DSP library documentation,
``arm_biquad_cascade_df1_q15`` / ``_q31`` (open source, Apache-2.0), recalled from memory.
Coefficient sensitivity of low-frequency poles and zeros in direct form: Oppenheim & Schafer,
*Discrete-Time Signal Processing*, 3rd ed., Pearson, 2010, section 6.8. The exact-DC adjustment is
derived here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.checks import check_quantity
from stillhook.errors import ConfigError, DesignError
from stillhook.fixed_point import FRACTION_BITS, round_half_up

__all__ = [
    "MAX_ANALYSIS_POST_SHIFT", "NotchShift", "auto_post_shift", "quantize_sos", "quantized_notch_shift",
    "section_notch_frequencies_hz",
]

#: Largest post shift the analysis tries (the C runtime's own limits are in firmware.qformat).
MAX_ANALYSIS_POST_SHIFT = 15
#: A section's DC gain must be 1 to this relative tolerance before rounding (step 2 makes it exact).
DC_GAIN_RTOL = 1e-6


def _check_sos(sos) -> np.ndarray:
    a = np.asarray(sos, dtype=float)
    if a.ndim != 2 or a.shape[1] != 6 or a.shape[0] < 1:
        raise ConfigError(f"sos must have shape (n_sections, 6) in scipy layout [b0, b1, b2, a0, a1, a2], "
                          f"got shape {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ConfigError("sos contains NaN or infinite coefficients; allowed: finite numbers")
    if np.any(a[:, 3] != 1.0):
        raise ConfigError("sos must have a0 = 1 in every section (normalized scipy layout)")
    num, den = a[:, :3].sum(axis=1), a[:, 3:].sum(axis=1)
    if np.any(np.abs(num - den) > DC_GAIN_RTOL * np.abs(den)):
        raise ConfigError("every sos section must have DC gain 1 (a notch); got "
                          + ", ".join(f"{g:.9g}" for g in num / den))
    return a


def _bits(fmt: str) -> int:
    if fmt not in FRACTION_BITS:
        raise ConfigError(f"fixed-point format {fmt!r} is not allowed; allowed: 'q15', 'q31'")
    return FRACTION_BITS[fmt]


def _dc_exact(stored: np.ndarray, sos: np.ndarray, N: int) -> np.ndarray:
    """Step 2 of the module docstring on rounded [B0, B1, B2, A1, A2] rows (scipy sign)."""
    out = stored.copy()
    for i, row in enumerate(sos):
        b0, b1, b2, a1, a2 = (int(v) for v in out[i])
        T = N + a1 + a2 - b1
        d = b0 - b2
        if (T + d) % 2:
            a2 += 1 if row[5] * N > a2 else -1  # the unit toward the exact value
            T = N + a1 + a2 - b1
        out[i] = [(T + d) // 2, b1, (T - d) // 2, a1, a2]
    return out


def _rounded(a: np.ndarray, bits: int, post_shift: int) -> tuple[np.ndarray, bool]:
    """(stored [B0, B1, B2, A1, A2] int64 in scipy sign, whether b0, b1, b2, -a1, -a2 fit the format)."""
    N = 1 << (bits - post_shift)
    q = round_half_up(a[:, [0, 1, 2, 4, 5]] * float(N))
    if np.any(np.abs(q) > 2.0 ** 62):
        return q, False
    stored = _dc_exact(q.astype(np.int64), a, N)
    cmsis = np.column_stack([stored[:, :3], -stored[:, 3:]])
    return stored, bool(np.all(cmsis >= -(1 << bits)) and np.all(cmsis <= (1 << bits) - 1))


def auto_post_shift(sos, fmt: str, *, max_post_shift: int = MAX_ANALYSIS_POST_SHIFT) -> int:
    """Smallest post_shift >= 0 at which every rounded coefficient of ``sos`` fits (module docstring).

    Parameters
    ----------
    sos : array_like (n, 6)
        Scipy SOS layout with a0 = 1, each section of DC gain 1.
    fmt : {'q15', 'q31'}
    max_post_shift : int in [0, 15], default 15
        Largest shift to try (the C runtime allows 14 in Q15, 15 in Q31).

    Returns
    -------
    int
        1 for any notch from :mod:`stillhook.notch.design` (its |a1| is in [1, 2)).
    """
    a = _check_sos(sos)
    bits = _bits(fmt)
    for shift in range(0, max_post_shift + 1):
        if _rounded(a, bits, shift)[1]:
            return shift
    raise DesignError(f"sos coefficients up to {np.max(np.abs(a)):g} do not fit {fmt} with a post shift "
                      f"of at most {max_post_shift}")


def quantize_sos(sos, fmt: str, post_shift: int | None = None, *,
                 max_post_shift: int = MAX_ANALYSIS_POST_SHIFT) -> tuple[np.ndarray, np.ndarray, int]:
    """Round SOS coefficients to the fixed-point grid (module docstring: nearest ties up, exact DC gain).

    Parameters
    ----------
    sos : array_like (n, 6)
        Scipy SOS layout, a0 = 1, each section of DC gain 1.
    fmt : {'q15', 'q31'}
    post_shift : int in [0, 15], optional
        Default :func:`auto_post_shift`.
    max_post_shift : int, default 15
        Passed to :func:`auto_post_shift`.

    Returns
    -------
    (sos_q, stored, post_shift)
        ``sos_q`` (n, 6) float: the real coefficients the integers represent (a0 = 1);
        ``stored`` (n, 5) int64: the stored integers [b0, b1, b2, a1, a2] in scipy's sign
        convention (CMSIS stores -a1, -a2: negate those two for its layout).
    """
    a = _check_sos(sos)
    bits = _bits(fmt)
    if post_shift is None:
        post_shift = auto_post_shift(a, fmt, max_post_shift=max_post_shift)
    if not isinstance(post_shift, int) or isinstance(post_shift, bool) or not 0 <= post_shift <= 15:
        raise ConfigError(f"post_shift = {post_shift!r} is out of range; allowed: a whole number 0-15")
    stored, fits = _rounded(a, bits, post_shift)
    if not fits:
        raise DesignError(f"post_shift = {post_shift} leaves a coefficient outside the {fmt} range; "
                          f"allowed: post_shift >= {auto_post_shift(a, fmt)}")
    sos_q = a.copy()
    sos_q[:, [0, 1, 2, 4, 5]] = stored / 2.0 ** (bits - post_shift)
    return sos_q, stored, post_shift


def section_notch_frequencies_hz(sos, cycle_s: float) -> np.ndarray:
    """Notch frequency of each section, measured as the angle of its zeros (Hz).

    f = theta / (2 pi T), theta = atan2(sqrt(4 b0 b2 - b1^2), -b1); 0 where the zeros are real
    (the section has no notch). See the module docstring.

    Parameters
    ----------
    sos : array_like (n, 6)
    cycle_s : float > 0
        Sample period T (s).
    """
    a = _check_sos(sos)
    cycle_s = check_quantity("cycle_s", cycle_s)
    b0, b1, b2 = a[:, 0], a[:, 1], a[:, 2]
    disc = 4.0 * b0 * b2 - b1 * b1
    theta = np.where(disc > 0, np.arctan2(np.sqrt(np.maximum(disc, 0.0)), -b1), 0.0)
    return theta / (2.0 * math.pi * cycle_s)


@dataclass(frozen=True)
class NotchShift:
    """Effect of fixed-point rounding on one notch section.

    Attributes
    ----------
    section : int
        Index in the cascade.
    frequency_hz, quantized_frequency_hz : float
        Zero-angle notch frequency before and after rounding.
    shift_hz : float
        quantized minus exact (Hz).
    relative_shift : float
        shift_hz / frequency_hz (fraction; -1 when the notch is lost).
    lost : bool
        Rounding made the zeros real: no notch left.
    dc_gain : float
        DC gain of the rounded section (1 before rounding); a speed filter's DC gain error is
        a travel-distance error.
    pole_radius : float
        Largest pole radius of the rounded section (must stay < 1).
    """

    section: int
    frequency_hz: float
    quantized_frequency_hz: float
    shift_hz: float
    relative_shift: float
    lost: bool
    dc_gain: float
    pole_radius: float

    def as_dict(self) -> dict:
        """JSON-ready summary (dc_gain is None when the rounded section's DC gain is infinite)."""
        return {
            "section": self.section,
            "frequency_hz": self.frequency_hz,
            "quantized_frequency_hz": self.quantized_frequency_hz,
            "shift_hz": self.shift_hz,
            "relative_shift": self.relative_shift,
            "lost": self.lost,
            "dc_gain": self.dc_gain if math.isfinite(self.dc_gain) else None,
            "pole_radius": self.pole_radius,
        }


def quantized_notch_shift(sos, fmt: str, cycle_s: float, *, post_shift: int | None = None,
                          max_post_shift: int = MAX_ANALYSIS_POST_SHIFT) -> list[NotchShift]:
    """How far each section's notch moves when its coefficients are rounded to ``fmt``.

    Parameters
    ----------
    sos : array_like (n, 6)
        Scipy SOS layout, a0 = 1 (e.g. ``NotchDesign.sos``).
    fmt : {'q15', 'q31'}
    cycle_s : float > 0
        Sample period (s), to express the shift in Hz.
    post_shift : int, optional
        Default: the automatic choice of :func:`auto_post_shift` (1 for notches).
    max_post_shift : int, default 15
        Largest automatic post shift.

    Returns
    -------
    list of NotchShift, one per section.

    Notes
    -----
    Notch frequency = zero angle (module docstring). Computed example (0.38153 Hz, Q = 2 notch
    from scipy.signal.iirnotch, Q15, post_shift 1): 0.38131 Hz at 20 Hz sampling, 0.38046 Hz at
    50 Hz, 0.37415 Hz at 100 Hz.
    """
    a = _check_sos(sos)
    sos_q, _, _ = quantize_sos(a, fmt, post_shift, max_post_shift=max_post_shift)
    f = section_notch_frequencies_hz(a, cycle_s)
    fq = section_notch_frequencies_hz(sos_q, cycle_s)
    disc = 4.0 * sos_q[:, 0] * sos_q[:, 2] - sos_q[:, 1] ** 2
    out = []
    for i in range(len(a)):
        num = float(np.sum(sos_q[i, :3]))
        den = float(np.sum(sos_q[i, 3:]))
        dc = num / den if den != 0.0 else math.inf
        radius = float(np.max(np.abs(np.roots(sos_q[i, 3:]))))
        lost = bool(disc[i] <= 0)
        rel = -1.0 if lost else (fq[i] - f[i]) / f[i] if f[i] > 0 else 0.0
        out.append(NotchShift(i, float(f[i]), float(fq[i]), float(fq[i] - f[i]), float(rel), lost, dc, radius))
    return out
