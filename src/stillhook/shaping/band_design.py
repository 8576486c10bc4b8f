"""Band (specified-insensitivity) and two-mode shapers: the shortest shaper that keeps V within a
tolerance over whole frequency bands.

:func:`band_shaper` covers one band, :func:`multi_band_shaper` several at once (direct design) and
:func:`two_mode_shapers` reports both the convolution of single-band shapers and the direct design.
The optimum on the time grid is found by linear programming with cutting planes
(:mod:`stillhook.shaping.lp_grid`). The search starts from the shortest closed-form shaper (or
convolution of closed forms over sub-bands) that covers the bands, and that closed form is
returned if the optimum is not shorter, so a band shaper is never longer than the closed form that
also covers the band. A direct two-mode shaper is never longer than the convolution of the two
single-band shapers: the convolution is itself a candidate.

Notes
-----
Specified-insensitivity shapers: Singhose, Derezinski & Singer, "Extra-insensitive input shapers
for controlling flexible spacecraft", J. Guidance Control Dyn. 19(2):385-391, 1996 (from memory).
Convolved versus directly solved multi-mode shapers: Singhose, Crain & Seering, IEE Proc. Control
Theory Appl. 144(6):515-520, 1997.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.errors import DesignError
from stillhook.shaping.closed_forms import CLOSED_FORMS
from stillhook.shaping.cycle_grid import to_cycle_grid
from stillhook.shaping.design_cache import DESIGN_CACHE
from stillhook.shaping.lp_grid import MAX_BASIS_ENTRIES, ProblemTooLarge, optimize_on_grid
from stillhook.shaping.shaper import (
    Shaper,
    check_cycle,
    check_damping,
    check_frequency,
    check_tolerance,
    insensitive_band_hz,
    worst_vibration,
)
from stillhook.sim.drive_rate import check_below_half_rate

__all__ = [
    "MAX_COVER_IMPULSES", "TwoModeShapers", "band_shaper", "closed_form_cover", "family_region", "multi_band_shaper",
    "scaled_form", "two_mode_shapers", "worst_over_bands",
]

#: Closed forms (positive amplitudes) tried when covering a band.
_COVER_FAMILIES = ("zv", "zvd", "ei", "zvdd", "ei2", "ei3")


def _check_bands(bands_hz) -> list[tuple[float, float]]:
    out = []
    for band in bands_hz:
        lo, hi = (check_frequency(v) for v in band)
        if not lo < hi:
            raise DesignError(f"band [{lo:g}, {hi:g}] Hz has lo >= hi; allowed: 0 < lo < hi")
        out.append((lo, hi))
    if not out:
        raise DesignError("no frequency band given; allowed: one or more [lo, hi] bands in Hz")
    return out


def _check_cycle(cycle_s, bands) -> float | None:
    if cycle_s is None:
        return None
    c = check_cycle(cycle_s)
    check_below_half_rate([max(hi for _, hi in bands)], c)
    return c


def worst_over_bands(shaper: Shaper, bands_hz, damping_ratio: float = 0.0) -> float:
    """Largest V of ``shaper`` over all the bands (Hz); 0 for no band."""
    return max((worst_vibration(shaper, lo, hi, damping_ratio)[0] for lo, hi in bands_hz), default=0.0)


def _outside(bands, covers) -> list[tuple[float, float]]:
    """The bands not inside any of ``covers`` (each (lo, hi) in Hz)."""
    return [(lo, hi) for lo, hi in bands if not any(c_lo <= lo and hi <= c_hi for c_lo, c_hi in covers)]


# -- closed-form covers -----------------------------------------------------------------------
def _unit_form(family: str, tolerance: float, zeta: float) -> Shaper:
    """The closed form designed for 1 Hz (times scale as 1/f0 at a fixed damping ratio), cached."""
    return DESIGN_CACHE.get("unit_form", (family, tolerance, zeta),
                            lambda: CLOSED_FORMS[family](1.0, zeta, tolerance))


def scaled_form(family: str, freq_hz: float, tolerance: float, zeta: float) -> Shaper:
    """Closed form ``family`` at ``freq_hz``, scaled from the cached 1 Hz design."""
    u = _unit_form(family, float(tolerance), float(zeta))
    return Shaper(u.times_s / freq_hz, u.amplitudes, f"{family}@{freq_hz:.6g}Hz")


def family_region(family: str, tolerance: float, zeta: float) -> tuple[float, float, float]:
    """(r_lo, r_hi, duration at 1 Hz) of a closed form's insensitive region, normalized to f0 = 1 Hz."""
    def make() -> tuple[float, float, float]:
        s = _unit_form(family, tolerance, zeta)
        lo, hi = insensitive_band_hz(s, 1.0, tolerance, zeta)
        return lo, hi, s.duration_s

    return DESIGN_CACHE.get("family_region", (family, tolerance, zeta), make)


def _cover_one(lo: float, hi: float, tol: float, zeta: float) -> tuple[float, list[tuple[str, float]]]:
    """Shortest split of [lo, hi] into k geometric sub-bands, each covered by one closed form."""
    best: tuple[float, list[tuple[str, float]]] = (math.inf, [])
    for k in range(1, 7):
        edges = lo * (hi / lo) ** (np.arange(k + 1) / k)
        total, parts = 0.0, []
        for a, b in zip(edges[:-1], edges[1:], strict=True):
            choice = None
            for fam in _COVER_FAMILIES:
                r_lo, r_hi, d1 = family_region(fam, tol, zeta)
                # f0 covers [a, b] when f0 r_lo <= a and f0 r_hi >= b; the highest such f0 is shortest
                if r_lo > 0.0 and b / r_hi <= a / r_lo:
                    f0 = a / r_lo
                    if choice is None or d1 / f0 < choice[0]:
                        choice = (d1 / f0, fam, f0)
            if choice is None:
                total = math.inf
                break
            total += choice[0]
            parts.append((choice[1], choice[2]))
        if total < best[0]:
            best = (total, parts)
    return best


#: A cover with more impulses than this is not used: firmware rows that long are impractical, and
#: convolving sub-band forms grows the impulse count geometrically (millions for wide, tight bands).
MAX_COVER_IMPULSES = 1024


def closed_form_cover(bands_hz, tolerance: float = 0.05, damping_ratio: float = 0.0, *,
                      max_impulses: int = MAX_COVER_IMPULSES) -> Shaper | None:
    """Shortest closed form (or convolution of closed forms over sub-bands) with V <= tolerance
    on every band; None when no combination of up to six sub-bands per band works, or when the
    convolution would exceed ``max_impulses`` impulses."""
    bands = _check_bands(bands_hz)
    tol, zeta = check_tolerance(tolerance), check_damping(damping_ratio)
    result = None
    for lo, hi in bands:
        total, parts = _cover_one(lo, hi, tol, zeta)
        if not parts:
            return None
        for fam, f0 in parts:
            s = scaled_form(fam, f0, tol, zeta)
            if result is not None and result.n_impulses * s.n_impulses > max_impulses:
                # the merged count can only be smaller; check it exactly before giving up
                if result.convolve(s).n_impulses > max_impulses:
                    return None
            result = s if result is None else result.convolve(s)
    return result


# -- public API --------------------------------------------------------------------------------
def multi_band_shaper(bands_hz, tolerance: float = 0.05, damping_ratio: float = 0.0, *,
                      cycle_s: float | None = None, start: Shaper | None = None, name: str = "band",
                      hint_s: float | None = None, start_covers_hz=()) -> Shaper:
    """Shortest positive shaper with V <= tolerance over every band at once (direct design).

    Parameters
    ----------
    bands_hz : sequence of (lo, hi), 0 < lo < hi (Hz)
    tolerance : float in (0, 1)
        Vtol as a fraction (0.05 = 5 %).
    damping_ratio : float in [0, 1)
    cycle_s : float > 0 or None
        Drive cycle: when given every impulse time is a whole number of cycles and the highest
        band edge must not exceed half the drive rate.
    start : Shaper or None
        A known feasible shaper (e.g. a convolution); the result is never longer than it.
    name : str
    hint_s : float or None
        A guessed duration (s) to bracket the search first (speed only; the result is the same
        kind of optimum).
    start_covers_hz : sequence of (lo, hi)
        Bands (Hz) over which ``start`` is already known to keep V <= tolerance at this damping (e.g. a
        whole envelope's bands, for a schedule row's sub-bands): a band inside one of them is not
        checked again (V over a sub-band never exceeds V over the band; speed only).

    Returns
    -------
    Shaper
        Never longer than ``start`` nor than :func:`closed_form_cover` of the bands (on the cycle
        grid, the closed form counts only if it is on the grid).
    """
    bands = _check_bands(bands_hz)
    tol, zeta = check_tolerance(tolerance), check_damping(damping_ratio)
    cycle = _check_cycle(cycle_s, bands)
    key = (tuple(bands), tol, zeta, cycle, name)
    if start is None and DESIGN_CACHE.lookup("band_design", key) is not None:
        return DESIGN_CACHE.lookup("band_design", key)
    cover = closed_form_cover(bands, tol, zeta)
    candidates = [s for s in (start, cover) if s is not None]
    known = [(s, b) for s, b in ((start, start_covers_hz), (cover, ())) if s is not None]
    candidates = [s for s, covers in known if (cycle is None or s.on_grid(cycle))
                  and worst_over_bands(s, _outside(bands, covers), zeta) <= tol * (1.0 + 1e-6)]
    upper = min(candidates, key=lambda s: s.duration_s) if candidates else None
    too_large = None
    try:
        opt = optimize_on_grid(bands, tol, zeta, cycle, upper or cover, name, hint_s)
    except ProblemTooLarge as exc:
        # The direct search would be too big; fall back to the closed-form cover put on the drive
        # cycle (impulses split across neighbouring cycles), if it still meets the tolerance.
        opt, too_large = None, exc
        if cover is not None and cycle is not None and not cover.on_grid(cycle):
            gridded = to_cycle_grid(cover, cycle, remedy="split")
            if worst_over_bands(gridded, bands, zeta) <= tol * (1.0 + 1e-6):
                candidates.append(gridded)
    pool = ([opt] if opt is not None else []) + candidates
    bands_text = ", ".join(f"[{lo:g}, {hi:g}] Hz" for lo, hi in bands)
    if not pool and too_large is not None:
        raise DesignError(f"no shaper found with V <= {100 * tol:g} % over bands {bands_text}: the direct "
                          f"search would need {too_large} (more than {MAX_BASIS_ENTRIES:,} pairs) and no "
                          "closed-form shaper on the drive-cycle grid covers the bands; allowed: a larger "
                          "tolerance, narrower bands (a shorter rope or payload range, or more schedule rows) "
                          "or a longer drive cycle")
    if not pool:
        raise DesignError(f"no shaper found with V <= {100 * tol:g} % over bands {bands_text}; "
                          "allowed: a larger tolerance or narrower bands")
    best = min(pool, key=lambda s: (s.duration_s, s is not opt))
    if start is None:
        DESIGN_CACHE.put("band_design", key, best)
    return best


def band_shaper(f_lo_hz: float, f_hi_hz: float, tolerance: float = 0.05, damping_ratio: float = 0.0, *,
                cycle_s: float | None = None) -> Shaper:
    """Shortest positive shaper with V <= tolerance over [f_lo_hz, f_hi_hz] (specified insensitivity)."""
    return multi_band_shaper([(f_lo_hz, f_hi_hz)], tolerance, damping_ratio, cycle_s=cycle_s, name="band")


@dataclass(frozen=True)
class TwoModeShapers:
    """Both two-mode designs at equal coverage (every band, same tolerance).

    Attributes
    ----------
    convolved : Shaper
        Convolution of the single-band shapers, one per band.
    direct : Shaper
        Directly optimized over all bands; never longer than ``convolved``.
    bands_hz : list of (lo, hi)
    tolerance, damping_ratio : float
    """

    convolved: Shaper
    direct: Shaper
    bands_hz: list
    tolerance: float
    damping_ratio: float

    def as_dict(self, cycle_s: float | None = None) -> dict:
        out = {}
        for label, s in (("convolved", self.convolved), ("direct", self.direct)):
            d = s.as_dict(cycle_s)
            d["worst_vibration_in_bands"] = worst_over_bands(s, self.bands_hz, self.damping_ratio)
            out[label] = d
        return out


def two_mode_shapers(bands_hz, tolerance: float = 0.05, damping_ratio: float = 0.0, *,
                     cycle_s: float | None = None) -> TwoModeShapers:
    """Convolved and direct shapers that keep V <= tolerance over every band (one band per mode)."""
    bands = _check_bands(bands_hz)
    parts = [band_shaper(lo, hi, tolerance, damping_ratio, cycle_s=cycle_s) for lo, hi in bands]
    conv = parts[0]
    for p in parts[1:]:
        conv = conv.convolve(p)
    conv = Shaper(conv.times_s, conv.amplitudes, "convolved")
    direct = multi_band_shaper(bands, tolerance, damping_ratio, cycle_s=cycle_s, start=conv, name="direct")
    return TwoModeShapers(conv, direct, bands, float(tolerance), float(damping_ratio))
