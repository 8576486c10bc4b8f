"""Zero-phase low-pass and decimation of a sway record by an integer factor (numpy only).

Decimation by q: a linear-phase FIR low-pass h of 2 H + 1 taps, H = 10 q, centred on each kept sample,
then every q-th sample (the first kept sample is x[0]'s):

    y[k] = sum_{j=-H..H} h[j] x[k q - j],   k = 0 .. ceil(n / q) - 1,   x = 0 outside 0 .. n - 1

    h[j] = w[j] f_c sinc(f_c j) / sum_i w[i] f_c sinc(f_c i),   f_c = 1 / q,   sinc(u) = sin(pi u) / (pi u)

the ideal low-pass cut at the new Nyquist frequency (f_c relative to the old one), tapered by a Kaiser
window w of shape beta = 5 and scaled to unit DC gain. These are the filter and the alignment that
``scipy.signal.resample_poly(x, 1, q)`` uses by default (firwin with ('kaiser', 5.0), half length 10 q,
zero padding); the sums run in another order, so the two agree to rounding (~1e-15 of the signal).
scipy.signal is not imported: it costs 0.5-1 s of start-up for one convolution.

Notes
-----
Windowed-sinc FIR design and the Kaiser window: A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal
Processing*, 3rd ed., Pearson, 2010, sections 7.5-7.6 (from memory); J. F. Kaiser, "Nonrecursive digital
filter design using the I0-sinh window function", Proc. IEEE ISCAS, 1974, pp. 20-23. Beta = 5 gives
about 55 dB of stop-band attenuation (Kaiser's formula, Oppenheim & Schafer eq. 7.62, from memory).
"""

from __future__ import annotations

import numpy as np

from stillhook.errors import ConfigError

__all__ = ["KAISER_BETA", "TAPS_PER_FACTOR", "decimate_zero_phase", "lowpass_taps"]

#: Kaiser window shape of the low-pass (scipy's resample_poly default).
KAISER_BETA = 5.0
#: Half length H of the low-pass = TAPS_PER_FACTOR x the decimation factor (scipy's resample_poly rule).
TAPS_PER_FACTOR = 10


def lowpass_taps(q: int) -> np.ndarray:
    """The 2 H + 1 taps h[-H .. H] of the decimation-by-``q`` low-pass (module docstring), unit DC gain."""
    half = TAPS_PER_FACTOR * q
    f_c = 1.0 / q
    j = np.arange(-half, half + 1, dtype=float)
    h = f_c * np.sinc(f_c * j) * np.kaiser(2 * half + 1, KAISER_BETA)
    return h / np.sum(h)


def decimate_zero_phase(x, q: int) -> np.ndarray:
    """Low-pass ``x`` with :func:`lowpass_taps` (zero phase, zeros beyond the ends) and keep every q-th sample.

    Parameters
    ----------
    x : array_like, 1-D, finite
        Samples at the original rate (any unit).
    q : int >= 1
        Decimation factor; 1 returns a copy.

    Returns
    -------
    ndarray, length ceil(len(x) / q)
        y[k] at the time of x[k q].
    """
    x = np.asarray(x, dtype=float)
    if x.ndim != 1:
        raise ConfigError(f"x has {x.ndim} dimensions; allowed: a 1-D record")
    if int(q) != q or q < 1:
        raise ConfigError(f"decimation factor q = {q!r}; allowed: an integer >= 1")
    q = int(q)
    if q == 1:
        return x.copy()
    h = lowpass_taps(q)
    half = (len(h) - 1) // 2
    padded = np.concatenate([np.zeros(half), x, np.zeros(half)])
    # row k of the view is padded[k q .. k q + 2H] = x[k q - H .. k q + H]; y[k] = that row . h reversed
    rows = np.lib.stride_tricks.sliding_window_view(padded, len(h))[::q]
    return rows @ h[::-1]
