"""Notch filters at the sway modes, discretized for the drive cycle.

Each sway mode gets one continuous notch

    H(s) = (s^2 + 2 zeta_z w s + w^2) / (s^2 + 2 zeta_p w s + w^2),      w = 2 pi f0,

with DC gain 1, |H| <= 1 everywhere (zeta_z < zeta_p), and |H(j w)| = zeta_z / zeta_p at the centre:
the depth is ``depth_db = 20 log10(zeta_p / zeta_z)`` (infinite for zeta_z = 0, the default: a true
null). The width is ``width_hz = 2 zeta_p f0``, which is the -3 dB width of the infinitely deep notch
for any zeta_p. The sections of all modes are cascaded.

Width rule (when ``width_hz`` is not given): cover the mode's band at the tolerance. For an undamped
mode the residual sway left by a filtered command, as a fraction of the unfiltered one, is exactly
|H| at the mode's frequency, so the notch is made just wide enough that |H| <= tolerance at both
band edges. With r = f/f0 and u = ((1 - r^2) / (2 r))^2,

    |H|^2 = (u + zeta_z^2) / (u + zeta_p^2)     (increasing in u, so the band edges are the worst),

and |H(r_e)| = tol with zeta_z = d zeta_p (d = 10^(-depth/20)) gives

    zeta_p = sqrt(u_e (1 - tol^2) / (tol^2 - d^2)),     feasible only when d < tol.

The edges are taken in the prewarped (Tustin) frequency scale, r = tan(pi f T) / tan(pi f0 T), so the
digital filter meets the tolerance at the edges exactly. A band is never taken narrower than +-10 %
around the notch (r_e >= 1.1, room for model error; our choice), which is also the default band when
only frequencies are given. ``notch_for_project`` centres each notch in its band (geometric mean in
the prewarped scale, where |H| is symmetric). Wide bands make wide notches: beyond
``max_pole_damping`` (default 20, an over-damped pole pair whose slow pole has a time constant of
about 2 zeta_p / w, several sway periods) the width is capped and a warning gives the band's worst
residual. An infinite depth always needs the least width, hence the default.

Discretization: Tustin with prewarping at each notch's own frequency,
s = K (z - 1)/(z + 1), K = w / tan(w T / 2), so the null sits exactly at f0. Coefficients of a section,
D = K^2 + 2 zeta_p w K + w^2:

    b = [K^2 + 2 zeta_z w K + w^2,  2 (w^2 - K^2),  K^2 - 2 zeta_z w K + w^2] / D
    a = [1,                          2 (w^2 - K^2) / D,  (K^2 - 2 zeta_p w K + w^2) / D]

so b1 = a1 and b0 + b2 = 1 + a2. The stored doubles are snapped to multiples of 2^-53 (a change
below 1.2e-16) so both identities hold exactly and the DC gain (b0 + b1 + b2)/(1 + a1 + a2) is
exactly 1 for the stored values: the filtered speed command travels the same distance.

Notes
-----
Notch prototype and Tustin with prewarping: Oppenheim & Schafer, *Discrete-Time Signal
Processing*, 3rd ed., Pearson, 2010, section 7.2; the digital notch of Orfanidis, *Introduction to
Signal Processing*, Prentice Hall, 1996, section 11.3 (scipy.signal.iirnotch) is the special case
zeta_z = 0. Residual vibration of a filtered command equals |H| at the mode: the residue of
H(s) U(s) P(s) at the plant pole s_p is H(s_p) times the unfiltered one (derived).
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.errors import ConfigError, DesignError
from stillhook.notch_filter import TAIL_DECAY, NotchDesign, NotchSection
from stillhook.notch_quant import FORMAT_BITS, NotchShift, auto_post_shift, quantized_notch_shift

__all__ = ["NotchDesign", "NotchSection", "design_notches", "notch_for_project", "quantized_notch_shift",
           "NotchShift", "band_centre_hz", "pole_damping_for_band", "notch_section", "TAIL_DECAY"]

#: Narrowest band (ratio to the notch frequency) a derived width covers; also the default band.
MIN_EDGE_RATIO = 1.1
#: Default cap on the pole damping ratio zeta_p of a derived width.
MAX_POLE_DAMPING = 20.0
#: Default relative notch shift under fixed-point rounding that raises a warning (our choice).
SHIFT_TOLERANCE = 0.01


def _snap(x: float, quantum: float = 2.0**-53) -> float:
    # multiples of 2^-53 below 2 in magnitude are exact doubles, so sums of them below 2 are exact
    return math.floor(x / quantum + 0.5) * quantum


def notch_section(freq_hz: float, pole_damping: float, zero_damping: float, cycle_s: float) -> np.ndarray:
    """One prewarped-Tustin notch section [b0, b1, b2, 1, a1, a2] (see module docstring).

    Parameters
    ----------
    freq_hz : float, 0 < freq_hz < 1 / (2 cycle_s)
    pole_damping : float > 0
        zeta_p.
    zero_damping : float, 0 <= zero_damping < pole_damping
        zeta_z.
    cycle_s : float > 0
    """
    w = 2.0 * math.pi * freq_hz
    # K = w / tan(w T / 2): s = K (z - 1)/(z + 1) maps s = j w onto z = e^(j w T) exactly
    K = w / math.tan(0.5 * w * cycle_s)
    D = K * K + 2.0 * pole_damping * w * K + w * w
    a1 = 2.0 * (w * w - K * K) / D
    # a2 = (K^2 - 2 zeta_p w K + w^2)/D, snapped so that S = 1 + a2 is exact
    a2 = _snap(1.0 - 4.0 * pole_damping * w * K / D)
    S = 1.0 + a2
    # b0 = S/2 + e, b2 = S/2 - e with e = 2 zeta_z w K / D, so b0 + b2 = 1 + a2 exactly
    e = _snap(2.0 * zero_damping * w * K / D)
    return np.array([0.5 * S + e, a1, 0.5 * S - e, 1.0, a1, a2])


def band_centre_hz(lo_hz: float, hi_hz: float, cycle_s: float) -> float:
    """Centre of a band in the prewarped scale: tan(pi f0 T) = sqrt(tan(pi lo T) tan(pi hi T)).

    The digital notch's |H| is symmetric about f0 in log tan(pi f T); for f << 1/T this is the
    geometric mean sqrt(lo hi).
    """
    t = math.sqrt(math.tan(math.pi * lo_hz * cycle_s) * math.tan(math.pi * hi_hz * cycle_s))
    return math.atan(t) / (math.pi * cycle_s)


def pole_damping_for_band(freq_hz: float, band_hz: tuple[float, float], cycle_s: float, tolerance: float,
                          depth_ratio: float = 0.0) -> float:
    """zeta_p that makes |H| equal the tolerance at the worse band edge (module docstring).

    Parameters
    ----------
    freq_hz : float
        Notch frequency f0 (Hz).
    band_hz : (lo, hi)
        Band to cover (Hz), widened to at least f0 / 1.1 .. 1.1 f0 in the prewarped scale.
    cycle_s : float > 0
    tolerance : float in (0, 1)
        Largest allowed |H| (fraction) over the band.
    depth_ratio : float in [0, tolerance)
        d = zeta_z / zeta_p = |H(f0)|.

    Returns
    -------
    float
        zeta_p = sqrt(u_e (1 - tol^2) / (tol^2 - d^2)), sqrt(u_e) = (r_e - 1/r_e) / 2.
    """
    if not depth_ratio < tolerance:
        raise DesignError(f"a notch depth of {-20 * math.log10(depth_ratio):.3g} dB leaves "
                          f"{100 * depth_ratio:.3g} % at the notch centre, above the {100 * tolerance:.3g} % "
                          f"tolerance; allowed: depth_db > {-20 * math.log10(tolerance):.3g} or no depth (a true null)")
    tan0 = math.tan(math.pi * freq_hz * cycle_s)
    lo, hi = band_hz
    r_e = max(math.tan(math.pi * hi * cycle_s) / tan0, tan0 / math.tan(math.pi * lo * cycle_s), MIN_EDGE_RATIO)
    sqrt_u = 0.5 * (r_e - 1.0 / r_e)
    return sqrt_u * math.sqrt((1.0 - tolerance**2) / (tolerance**2 - depth_ratio**2))


