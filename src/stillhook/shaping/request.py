"""One shaper request (method, frequencies, bands, damping, tolerance, drive cycle) as a JSON-ready dict.

The library side of ``stillhook shaper --method ...``: checks the request, builds the shaper
(closed form per frequency, convolved for several; or band / two-mode band designs), and reports
V at the design frequencies, the insensitive band and width at the tolerance, the worst V over
given bands and, with a drive cycle, V after each drive-cycle remedy.
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.checks import check_quantity
from stillhook.errors import DesignError
from stillhook.shaping.band_design import band_shaper, two_mode_shapers
from stillhook.shaping.closed_forms import CLOSED_FORMS
from stillhook.shaping.cycle_grid import grid_effects, to_cycle_grid
from stillhook.shaping.shaper import Shaper, check_cycle, insensitive_band_hz, worst_vibration
from stillhook.sim.drive_rate import check_below_half_rate

__all__ = ["check_request", "shaper_request"]


def check_request(method: str, freqs_hz, bands_hz, damping_ratio, tolerance_pct, cycle_s):
    """Validate a request; return (freqs, bands, zeta, tolerance fraction, cycle_s or None).

    Every impossible request raises one DesignError naming the value and what is allowed.
    """
    if method not in (*CLOSED_FORMS, "band"):
        raise DesignError(f"method {method!r} is not known; allowed: " + ", ".join((*CLOSED_FORMS, "band")))
    pct = check_quantity("tolerance_pct", tolerance_pct, error=DesignError)
    zeta = check_quantity("damping_ratio", damping_ratio, error=DesignError)
    freqs = [check_quantity("frequency_hz", f, error=DesignError) for f in freqs_hz]
    bands = []
    for band in bands_hz:
        lo, hi = (check_quantity("band_edge_hz", v, error=DesignError) for v in band)
        if lo >= hi:
            raise DesignError(f"band [{lo:g}, {hi:g}] Hz is impossible; allowed: 0 < LO < HI")
        bands.append((lo, hi))
    cycle = None
    if cycle_s is not None:
        cycle = check_cycle(cycle_s)
        check_below_half_rate(freqs + [hi for _, hi in bands], cycle)
    if method == "band":
        if freqs:
            raise DesignError("method 'band' takes its bands from --band-hz LO HI (repeat for a second mode), "
                              "not --frequency-hz")
        if not bands:
            raise DesignError("method 'band' needs --band-hz LO HI (one per mode)")
    elif not freqs:
        raise DesignError(f"method {method!r} needs --frequency-hz F (repeat for a two-mode shaper)")
    return freqs, bands, zeta, pct / 100.0, cycle


def _finite_or_none(v: float) -> float | None:
    return float(v) if math.isfinite(v) else None


def shaper_request(method: str, freqs_hz, bands_hz=(), damping_ratio: float = 0.0, tolerance_pct: float = 5.0,
                   cycle_s: float | None = None, remedy: str = "resolve") -> dict:
    """Build and describe the shaper a CLI request asks for (see module docstring).

    Returns
    -------
    dict
        ``{"method", "name", "frequencies_hz", "bands_hz", "damping_ratio", "tolerance",
        "impulses": [{"time_s", "amplitude"}], "duration_s", "overshoots_command", "command_gain",
        "speed_range_factor", "modes": [...], "bands": [...], "two_mode": {...} or None,
        "drive_cycle": {...} or None}``.
    """
    freqs, bands, zeta, tol, cycle = check_request(method, freqs_hz, bands_hz, damping_ratio, tolerance_pct,
                                                   cycle_s)
    two_mode = None
    if method == "band":
        if len(bands) == 1:
            shaper = band_shaper(bands[0][0], bands[0][1], tol, zeta, cycle_s=cycle)
        else:
            tm = two_mode_shapers(bands, tol, zeta, cycle_s=cycle)
            shaper, two_mode = tm.direct, tm.as_dict(cycle)
    else:
        shaper = None
        for f in freqs:
            s = CLOSED_FORMS[method](f, zeta, tol)
            shaper = s if shaper is None else shaper.convolve(s)
    modes = []
    for f in freqs:
        lo, hi = insensitive_band_hz(shaper, f, tol, zeta)
        modes.append({"frequency_hz": f, "vibration": float(shaper.vibration_at_hz(f, zeta)),
                      "insensitive_band_hz": [lo, _finite_or_none(hi)],
                      "insensitivity_width": _finite_or_none((hi - lo) / f)})
    band_rows = []
    for lo, hi in bands:
        v, at = worst_vibration(shaper, lo, hi, zeta)
        band_rows.append({"lo_hz": lo, "hi_hz": hi, "worst_vibration": v, "worst_at_hz": at})
    out = {"method": method, "name": shaper.name, "frequencies_hz": freqs,
           "bands_hz": [list(b) for b in bands], "damping_ratio": zeta, "tolerance": tol}
    out.update(shaper.as_dict())
    out["speed_range_factor"] = list(shaper.speed_range_factor)
    out.update({"modes": modes, "bands": band_rows, "two_mode": two_mode, "drive_cycle": None})
    if cycle is not None:
        design_freqs = freqs or [math.sqrt(lo * hi) for lo, hi in bands]
        effects = grid_effects(shaper, cycle, design_freqs, zeta, bands or None)
        on_grid: Shaper = to_cycle_grid(shaper, cycle, remedy=remedy, freqs_hz=design_freqs, damping_ratio=zeta)
        effects["remedy"] = remedy
        effects["impulses"] = on_grid.as_dict(cycle)["impulses"]
        effects["design_frequencies_hz"] = [float(f) for f in np.atleast_1d(design_freqs)]
        out["drive_cycle"] = effects
    return out
