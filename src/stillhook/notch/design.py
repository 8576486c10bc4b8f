"""Notch filters at the sway modes, discretized for the drive cycle.

Each sway mode gets one continuous notch

    H(s) = (s^2 + 2 zeta_z w s + w^2) / (s^2 + 2 zeta_p w s + w^2),      w = 2 pi f0,

with DC gain 1, |H| <= 1 everywhere (zeta_z < zeta_p), and |H(j w)| = zeta_z / zeta_p at the centre:
the depth is ``depth_db = 20 log10(zeta_p / zeta_z)`` (infinite for zeta_z = 0, the default: a true
null). The sections of all modes are cascaded.

Width: ``width_hz`` is the -3 dB width of the DIGITAL filter (hi - lo of the two frequencies where
|H| = 1/sqrt 2), stated and taken in that meaning, so it equals what the discretized filter has. With
t0 = tan(pi f0 T) and the edges at t0 r and t0 / r in the prewarped scale, |H|^2 = 1/2 at
sqrt(u) = (r - 1/r)/2 = zeta_p sqrt(1 - 2 d^2) (d = zeta_z / zeta_p, below), and

    tan(pi T width_hz) = (t0 r - t0 / r) / (1 + t0^2) = 2 sqrt(u) t0 / (1 + t0^2)

(tan of a difference). For f << 1/T this is the analog width 2 zeta_p f0 sqrt(1 - 2 d^2). It matches
scipy.signal.iirnotch, whose Q is f0 over the same digital -3 dB width (Orfanidis 1996, section 11.3).

Default width rules (``width_rule``):

- ``"band"`` (default): the -3 dB edges sit on the mode's band edges: the notch covers the band over the
  envelope and no more. Inside a wide band the residual sway can reach 71 % at the edges; the design says
  so (``band_worst_residual`` and a warning when above the tolerance). A notch that must hold the
  tolerance over a wide band becomes a slow low-pass filter; a band shaper does that job better.
- ``"tolerance"``: cover the mode's band at the tolerance. For an undamped
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
the prewarped scale, where |H| is symmetric). With ``"tolerance"``, wide bands make wide notches: beyond
``max_pole_damping`` (default 20, an over-damped pole pair whose slow pole has a time constant of
about 2 zeta_p / w, several sway periods) the width is capped and a warning gives the band's worst
residual. An infinite depth always needs the least width, hence the default.

Discretization: Tustin with prewarping at each notch's own frequency,
s = K (z - 1)/(z + 1), K = w / tan(w T / 2), so the null sits exactly at f0. Coefficients of a section,
D = K^2 + 2 zeta_p w K + w^2:

    b = [K^2 + 2 zeta_z w K + w^2,  2 (w^2 - K^2),  K^2 - 2 zeta_z w K + w^2] / D
    a = [1,                          2 (w^2 - K^2) / D,  (K^2 - 2 zeta_p w K + w^2) / D]

so b1 = a1 and b0 + b2 = 1 + a2. The stored a2 is snapped to a multiple of 2^-52 and b0, b2 to
multiples of 2^-53 (changes below 2.3e-16, all exact doubles) so both identities hold exactly and
the DC gain (b0 + b1 + b2)/(1 + a1 + a2) is exactly 1 for the stored values: the filtered speed
command travels the same distance.

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

from stillhook.checks import check_quantity, finite_number
from stillhook.errors import ConfigError, DesignError
from stillhook.fixed_point import FRACTION_BITS
from stillhook.model.envelope import MIN_BAND_EDGE_RATIO
from stillhook.notch.cascade import TAIL_DECAY, NotchDesign, NotchSection, sos_response
from stillhook.notch.rounding import NotchShift, auto_post_shift, quantized_notch_shift
from stillhook.sim.drive_rate import check_below_half_rate

__all__ = ["NotchDesign", "NotchSection", "design_notches", "notch_for_project", "quantized_notch_shift",
           "NotchShift", "band_centre_hz", "pole_damping_for_band", "notch_section", "TAIL_DECAY", "WIDTH_RULES",
           "digital_width_hz", "pole_damping_for_width"]

#: Narrowest band (ratio to the notch frequency) a derived width covers; also the default band
#: (the same ratio as the envelope's narrowest design band, stillhook.model.envelope.MIN_BAND_EDGE_RATIO).
MIN_EDGE_RATIO = MIN_BAND_EDGE_RATIO
#: Default width rules (module docstring).
WIDTH_RULES = ("band", "tolerance")
#: |H| at the -3 dB edges.
HALF_POWER = 1.0 / math.sqrt(2.0)
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
    a2 = _snap(1.0 - 4.0 * pole_damping * w * K / D, 2.0**-52)
    S = 1.0 + a2
    # b0 = S/2 + e, b2 = S/2 - e with e = 2 zeta_z w K / D, so b0 + b2 = 1 + a2 exactly
    e = _snap(2.0 * zero_damping * w * K / D)
    return np.array([0.5 * S + e, a1, 0.5 * S - e, 1.0, a1, a2])


def digital_width_hz(freq_hz: float, pole_damping: float, zero_damping: float, cycle_s: float) -> float:
    """-3 dB width (Hz) of the digital notch: atan(2 sqrt(u) t0 / (1 + t0^2)) / (pi T) (module docstring)."""
    d = zero_damping / pole_damping
    t0 = math.tan(math.pi * freq_hz * cycle_s)
    sqrt_u = pole_damping * math.sqrt(1.0 - 2.0 * d * d)
    return math.atan(2.0 * sqrt_u * t0 / (1.0 + t0 * t0)) / (math.pi * cycle_s)


def pole_damping_for_width(freq_hz: float, width_hz: float, cycle_s: float, depth_ratio: float = 0.0) -> float:
    """zeta_p whose digital -3 dB width is ``width_hz``: the inverse of :func:`digital_width_hz`."""
    if not width_hz < 0.5 / cycle_s:
        raise DesignError(f"notch width {width_hz:g} Hz is not below half the drive rate ({0.5 / cycle_s:g} Hz); "
                          "allowed: a narrower width")
    if not 2.0 * depth_ratio**2 < 1.0:
        raise DesignError(f"a notch of {-20 * math.log10(depth_ratio):.3g} dB depth never reaches -3 dB, so it has "
                          "no -3 dB width; allowed: depth_db > 3.02 or no depth (a true null)")
    t0 = math.tan(math.pi * freq_hz * cycle_s)
    sqrt_u = math.tan(math.pi * cycle_s * width_hz) * (1.0 + t0 * t0) / (2.0 * t0)
    return sqrt_u / math.sqrt(1.0 - 2.0 * depth_ratio**2)


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


def _positive(name: str, value, *, hi: float | None = None) -> float:
    return finite_number(name, value, allowed="a finite number > 0" + (f" and < {hi:g}" if hi else ""),
                         lo=0.0, lo_ok=False, hi=hi, hi_ok=False)


def _per_notch(quantity: str, value, n: int) -> list:
    """None, one number for every notch, or one per notch (each checked against LIMITS[quantity])."""
    if value is None:
        return [None] * n
    if np.ndim(value) == 0:
        return [check_quantity(quantity, value)] * n
    values = list(value)
    if len(values) != n:
        raise ConfigError(f"{quantity} has {len(values)} values for {n} notches; allowed: one number or one per "
                          "notch")
    return [None if v is None else check_quantity(quantity, v) for v in values]


def _warped_band(f0: float, band, T: float) -> tuple[float, float]:
    """The band to cover: the given band joined with +-10 % around f0 in the prewarped scale."""
    t0 = math.tan(math.pi * f0 * T)
    lo = math.atan(t0 / MIN_EDGE_RATIO) / (math.pi * T)
    hi = math.atan(t0 * MIN_EDGE_RATIO) / (math.pi * T)
    if band is None:
        return lo, hi
    return min(lo, band[0]), max(hi, band[1])


def _band_grid(band: tuple[float, float], T: float, n: int = 201) -> np.ndarray:
    t = np.geomspace(math.tan(math.pi * band[0] * T), math.tan(math.pi * band[1] * T), n)
    return np.arctan(t) / (math.pi * T)


def design_notches(freqs_hz, cycle_s: float, *, width_hz=None, depth_db=None, bands_hz=None,
                   tolerance: float = 0.05, max_pole_damping: float = MAX_POLE_DAMPING,
                   shift_tolerance: float = SHIFT_TOLERANCE, warn_formats=("q15", "q31"),
                   width_rule: str = "band") -> NotchDesign:
    """Design a cascade of prewarped-Tustin notches, one per frequency.

    Parameters
    ----------
    freqs_hz : float or sequence of float, each 0 < f < 1 / (2 cycle_s)
        Notch frequencies (Hz), usually the low then the high sway mode.
    cycle_s : float > 0
        Drive cycle = filter sample period (s).
    width_hz : float > 0 or sequence (one per notch, None entries allowed), optional
        The digital filter's -3 dB width (Hz). Default: from ``width_rule`` (module docstring).
    depth_db : float > 0 or sequence, optional
        20 log10(zeta_p / zeta_z). Default: infinite (zeta_z = 0, a true null).
    bands_hz : sequence of (lo, hi), optional
        Band each notch must cover (Hz), 0 < lo <= hi < 1 / (2 cycle_s). Default +-10 % (prewarped).
    tolerance : float in (0, 1), default 0.05
        Largest |H| (residual-sway fraction) allowed over each band.
    max_pole_damping : float > 0, default 20
        Cap on zeta_p of a derived width; past it the width is capped and a warning given.
    width_rule : {'band', 'tolerance'}, default 'band'
        Derived width: -3 dB at the band edges, or |H| <= tolerance over the band.
    shift_tolerance : float > 0, default 0.01
        Relative notch shift under fixed-point rounding that raises a warning.
    warn_formats : sequence of {'q15', 'q31'}
        Formats whose rounding is checked for warnings (both are always reported).

    Returns
    -------
    NotchDesign

    Raises
    ------
    ConfigError
        Malformed or out-of-range arguments.
    DesignError
        A frequency or band edge at or above half the drive rate; a depth too shallow for the
        tolerance with a derived width; poles not strictly inside the unit circle.
    """
    T = check_quantity("cycle_s", cycle_s)
    freqs = [freqs_hz] if np.ndim(freqs_hz) == 0 else list(freqs_hz)
    if not 1 <= len(freqs) <= 16:
        raise ConfigError(f"{len(freqs)} notch frequencies given; allowed: 1 to 16")
    freqs = [check_quantity("frequency_hz", f, name="notch frequency_hz") for f in freqs]
    check_below_half_rate(freqs, T, what="notch frequency", strict=True)
    n = len(freqs)
    tol = _positive("tolerance", tolerance, hi=1.0)
    zeta_cap = _positive("max_pole_damping", max_pole_damping)
    shift_tol = _positive("shift_tolerance", shift_tolerance)
    widths = _per_notch("width_hz", width_hz, n)
    depths = _per_notch("depth_db", depth_db, n)
    if width_rule not in WIDTH_RULES:
        raise ConfigError(f"width_rule = {width_rule!r} is not allowed; allowed: " + ", ".join(map(repr, WIDTH_RULES)))
    for fmt in warn_formats:
        if fmt not in FRACTION_BITS:
            raise ConfigError(f"warn_formats entry {fmt!r} is not allowed; allowed: 'q15', 'q31'")
    bands = _bands(bands_hz, n, T)
    cover = tol if width_rule == "tolerance" else max(tol, HALF_POWER)  # |H| at the band edges
    sos, params, capped = _sections(freqs, widths, depths, bands, T, cover, zeta_cap)
    sections, warnings = _band_residuals(sos, params, T, tol, capped)
    quantization, post_shift = {}, {}
    for fmt in FRACTION_BITS:
        post_shift[fmt] = auto_post_shift(sos, fmt)
        quantization[fmt] = tuple(quantized_notch_shift(sos, fmt, T, post_shift=post_shift[fmt]))
        if fmt in warn_formats:
            warnings.extend(_quantization_warnings(fmt, quantization[fmt], shift_tol))
    return NotchDesign(sos, T, tuple(sections), tol, quantization, post_shift, tuple(warnings))


def _bands(bands_hz, n: int, T: float) -> list:
    """The band each of ``n`` notches must cover: None each, or checked (lo, hi) pairs below half the rate."""
    if bands_hz is None:
        return [None] * n
    try:
        bands = [tuple(b) for b in bands_hz]
    except TypeError:
        bands = []
    if len(bands) != n or any(len(b) != 2 for b in bands):
        raise ConfigError(f"bands_hz = {bands_hz!r} is not allowed; allowed: one (lo, hi) pair per notch ({n})")
    bands = [(check_quantity("band_edge_hz", lo, name="band lower edge (Hz)"),
              check_quantity("band_edge_hz", hi, name="band upper edge (Hz)")) for lo, hi in bands]
    for lo, hi in bands:
        if lo > hi:
            raise DesignError(f"band [{lo:g}, {hi:g}] Hz is not allowed; allowed: 0 < lo <= hi")
        check_below_half_rate([hi], T, what=f"the upper edge of band [{lo:g}, {hi:g}],", strict=True)
    return bands


def _sections(freqs, widths, depths, bands, T: float, cover: float, zeta_cap: float):
    """(sos, params, capped): one prewarped section per notch, its (f0, zeta_p, zeta_z, depth, band),
    and {notch index: why its derived width was capped}. A derived width leaves |H| = ``cover`` at the
    band's worse edge; a given width is the digital -3 dB width."""
    rows, params, notes = [], [], []
    for i, (f0, width, depth, band) in enumerate(zip(freqs, widths, depths, bands, strict=True)):
        d = 0.0 if depth is None else 10.0 ** (-depth / 20.0)
        eff_band = _warped_band(f0, band, T)
        if width is not None:
            zeta_p = pole_damping_for_width(f0, width, T, d)
        else:
            zeta_p = pole_damping_for_band(f0, eff_band, T, cover, d)
            if zeta_p > zeta_cap:
                notes.append((i, f"its derived pole damping {zeta_p:.3g} was capped at {zeta_cap:g}"))
                zeta_p = zeta_cap
        zeta_z = d * zeta_p
        row = notch_section(f0, zeta_p, zeta_z, T)
        radius = float(np.max(np.abs(np.roots(row[3:]))))
        if not radius < 1.0:
            raise DesignError(f"notch {i + 1} at {f0:g} Hz has a pole at radius {radius:.17g} at cycle_s = {T:g} s; "
                              "allowed: poles strictly inside the unit circle (use a narrower width or a "
                              "slower filter rate)")
        rows.append(row)
        params.append((f0, zeta_p, zeta_z, depth, eff_band))
    return np.array(rows), params, dict(notes)


def _band_residuals(sos: np.ndarray, params, T: float, tol: float, capped: dict):
    """(sections, warnings): each notch with the whole cascade's worst |H| over its band."""
    sections, warnings = [], []
    for i, (f0, zeta_p, zeta_z, depth, eff_band) in enumerate(params):
        grid = _band_grid(eff_band, T)
        worst = float(np.max(np.abs(_response(sos, grid, T))))
        sections.append(NotchSection(f0, zeta_p, zeta_z, digital_width_hz(f0, zeta_p, zeta_z, T),
                                     math.inf if depth is None else depth, eff_band, worst))
        if worst > tol * (1.0 + 1e-9):
            why = f" ({capped[i]})" if i in capped else ""
            warnings.append(f"notch {i + 1} at {f0:.4g} Hz leaves up to {100 * worst:.3g} % residual sway over "
                            f"its band [{eff_band[0]:.4g}, {eff_band[1]:.4g}] Hz, above the "
                            f"{100 * tol:.3g} % tolerance{why}")
    return sections, warnings


def _response(sos: np.ndarray, freqs_hz: np.ndarray, T: float) -> np.ndarray:
    return sos_response(sos, np.exp(2j * math.pi * freqs_hz * T))


def _quantization_warnings(fmt: str, shifts, shift_tol: float) -> list[str]:
    out = []
    for q in shifts:
        label = f"{fmt}: notch {q.section + 1} ({q.frequency_hz:.4g} Hz)"
        if q.lost:
            out.append(f"{label} is lost when the coefficients are rounded (its zeros become real); "
                       "use q31 or run the filter at a slower rate")
        elif abs(q.relative_shift) > shift_tol:
            out.append(f"{label} moves to {q.quantized_frequency_hz:.4g} Hz ({100 * q.relative_shift:+.3g} %) "
                       f"when the coefficients are rounded, beyond the {100 * shift_tol:.3g} % limit")
        if not q.pole_radius < 1.0:
            out.append(f"{label}: rounded poles reach radius {q.pole_radius:.6g}, the filter would not decay")
    return out


def notch_for_project(project, *, width_hz=None, depth_db=None, tolerance=None) -> NotchDesign:
    """Notches for a project: one per sway mode, each centred in and covering the mode's band.

    Parameters
    ----------
    project : stillhook.project.Project
        Uses the envelope's design bands (``Envelope.design_bands_hz``), ``[drive] cycle_s``,
        ``[design] tolerance_pct``, ``[notch] width_hz`` / ``depth_db`` / ``width_rule``, ``[firmware] format``
        (the format checked for warnings; both are reported) and ``[firmware] max_notch_shift_pct`` (the shift
        that warns).
    width_hz, depth_db : float or sequence, optional
        Override the project's ``[notch]`` values.
    tolerance : float in (0, 1), optional
        Overrides ``[design] tolerance_pct`` / 100.

    Returns
    -------
    NotchDesign
        Low mode first. Centre: :func:`band_centre_hz`; width: covers the band at the tolerance
        unless ``width_hz`` is set (module docstring).
    """
    T = project.drive["cycle_s"]
    bands = project.envelope.design_bands_hz()
    for i, (_lo, hi) in enumerate(bands):
        check_below_half_rate([hi], T, what=f"sway mode {i + 1}'s highest frequency", strict=True)
    freqs = [band_centre_hz(lo, hi, T) for lo, hi in bands]
    width = project.notch["width_hz"] if width_hz is None else width_hz
    depth = project.notch["depth_db"] if depth_db is None else depth_db
    return design_notches(freqs, T, width_hz=width, depth_db=depth, bands_hz=bands,
                          tolerance=project.design["tolerance_pct"] / 100.0 if tolerance is None else tolerance,
                          shift_tolerance=project.firmware.get("max_notch_shift_pct", 100 * SHIFT_TOLERANCE) / 100.0,
                          warn_formats=(project.firmware["format"],),
                          width_rule=project.notch.get("width_rule", "band"))
