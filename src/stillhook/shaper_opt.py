"""Band (specified-insensitivity) and two-mode shapers: the shortest shaper that keeps V within a
tolerance over whole frequency bands.

Problem: given bands [w_lo, w_hi] (one per mode), a tolerance Vtol and a damping ratio, find the
shortest impulse sequence with A_i >= 0, sum A_i = 1 and V(w) <= Vtol for every w in every band.

Method. With the impulse times fixed on a grid tau_j = j h (j = 0..N), V(w) = |sum_j x_j e_j(w)|
with e_j(w) = exp(-zeta w (tau_N - tau_j)) exp(j w_d tau_j), so "V <= s" is convex in the
amplitudes x and equals the family of half-planes Re(exp(-j phi) sum_j x_j e_j(w)) <= s over all
phases phi. A linear program (scipy.optimize.linprog, HiGHS) minimizes s subject to a growing
set of such cuts (w, phi): after each solve, V is evaluated on a dense frequency grid and at its
refined maxima, and every local maximum above Vtol adds the cut tangent at its own phase (a
cutting-plane method). The LP's s is a lower bound on the true minimax, so "s > Vtol" proves the
grid duration N h infeasible; "max V <= Vtol" proves it feasible. Bisection on N gives the
shortest duration on the grid; the LP adds impulses wherever they are needed (a basic solution
has as many non-zero impulses as the active constraints call for). The grid is then refined
(steps divided down to the drive cycle, or to T_min/4096 without one), keeping candidate times
within one coarse step of the current impulses.

The bisection starts from the shortest closed-form shaper (or convolution of closed forms over
sub-bands) that covers the bands, and that closed form is returned if the optimum is not shorter,
so a band shaper is never longer than the closed form that also covers the band. A direct
two-mode shaper is never longer than the convolution of the two single-band shapers: the
convolution is itself a candidate.

Notes
-----
Specified-insensitivity shapers: Singhose, Derezinski & Singer, "Extra-insensitive input shapers
for controlling flexible spacecraft", J. Guidance Control Dyn. 19(2):385-391, 1996 (from memory).
Convolved versus directly solved multi-mode shapers: Singhose, Crain & Seering, IEE Proc. Control
Theory Appl. 144(6):515-520, 1997. Cutting planes: Kelley, "The cutting-plane method for solving
convex programs", J. SIAM 8(4):703-712, 1960 (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from stillhook.errors import DesignError
from stillhook.shapers import (
    CLOSED_FORMS,
    Shaper,
    _check_damping,
    _check_frequency,
    _check_tolerance,
    insensitive_band_hz,
    worst_vibration,
)

#: Closed forms (positive amplitudes) tried when covering a band.
_COVER_FAMILIES = ("zv", "zvd", "ei", "zvdd", "ei2", "ei3")
#: Dense check grid: samples per 2 pi / duration (the scale on which V can change).
_CHECK_PER_OSC = 96
#: First grid step as a fraction of the shortest period in the bands.
_COARSE_STEPS_PER_PERIOD = 6
#: Finest step without a drive cycle, as a fraction of the shortest period.
_FINE_STEPS_PER_PERIOD = 4096
_MAX_CUT_ROUNDS = 40
#: Results of recent designs without a start shaper (same inputs give the same shaper).
_MEMO: dict = {}
#: After this many cut rounds, a relaxation within _MARGINAL of the tolerance counts as infeasible.
_MARGINAL_ROUNDS = 4
_MARGINAL = 2e-3
#: Relative half-width of the bracket tried around a duration hint.
_HINT_BRACKET = 0.05
#: Peaks above this fraction of the tolerance get a cut too (anticipating the next violation).
_ANTICIPATE = 0.97


def _check_bands(bands_hz) -> list[tuple[float, float]]:
    out = []
    for band in bands_hz:
        lo, hi = (_check_frequency(v) for v in band)
        if not lo < hi:
            raise DesignError(f"band [{lo:g}, {hi:g}] Hz has lo >= hi; allowed: 0 < lo < hi")
        out.append((lo, hi))
    if not out:
        raise DesignError("no frequency band given; allowed: one or more [lo, hi] bands in Hz")
    return out


def _check_cycle(cycle_s, bands) -> float | None:
    if cycle_s is None:
        return None
    c = float(cycle_s)
    if not (math.isfinite(c) and c > 0.0):
        raise DesignError(f"cycle_s = {cycle_s!r} is out of range; allowed: a finite number > 0")
    f_max = max(hi for _, hi in bands)
    if f_max > 0.5 / c:
        raise DesignError(f"frequency {f_max:g} Hz is above half the drive rate ({0.5 / c:g} Hz for a "
                          f"{c:g} s cycle); allowed: frequencies <= {0.5 / c:g} Hz")
    return c


def worst_over_bands(shaper: Shaper, bands_hz, damping_ratio: float = 0.0) -> float:
    """Largest V of ``shaper`` over all the bands (Hz)."""
    return max(worst_vibration(shaper, lo, hi, damping_ratio)[0] for lo, hi in bands_hz)


# -- closed-form covers -----------------------------------------------------------------------
@lru_cache(maxsize=256)
def _unit_form(family: str, tolerance: float, zeta: float) -> Shaper:
    """The closed form designed for 1 Hz (times scale as 1/f0 at a fixed damping ratio)."""
    return CLOSED_FORMS[family](1.0, zeta, tolerance)


def scaled_form(family: str, freq_hz: float, tolerance: float, zeta: float) -> Shaper:
    """Closed form ``family`` at ``freq_hz``, scaled from the cached 1 Hz design."""
    u = _unit_form(family, float(tolerance), float(zeta))
    return Shaper(u.times_s / freq_hz, u.amplitudes, f"{family}@{freq_hz:.6g}Hz")


@lru_cache(maxsize=256)
def _family_region(family: str, tolerance: float, zeta: float) -> tuple[float, float, float]:
    """(r_lo, r_hi, duration at 1 Hz) of a closed form's insensitive region, normalized to f0 = 1 Hz."""
    s = _unit_form(family, tolerance, zeta)
    lo, hi = insensitive_band_hz(s, 1.0, tolerance, zeta)
    return lo, hi, s.duration_s


def _cover_one(lo: float, hi: float, tol: float, zeta: float) -> tuple[float, list[tuple[str, float]]]:
    """Shortest split of [lo, hi] into k geometric sub-bands, each covered by one closed form."""
    best: tuple[float, list[tuple[str, float]]] = (math.inf, [])
    for k in range(1, 7):
        edges = lo * (hi / lo) ** (np.arange(k + 1) / k)
        total, parts = 0.0, []
        for a, b in zip(edges[:-1], edges[1:], strict=True):
            choice = None
            for fam in _COVER_FAMILIES:
                r_lo, r_hi, d1 = _family_region(fam, tol, zeta)
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


def closed_form_cover(bands_hz, tolerance: float = 0.05, damping_ratio: float = 0.0) -> Shaper | None:
    """Shortest closed form (or convolution of closed forms over sub-bands) with V <= tolerance
    on every band; None when no combination of up to six sub-bands per band works."""
    bands = _check_bands(bands_hz)
    tol, zeta = _check_tolerance(tolerance), _check_damping(damping_ratio)
    result = None
    for lo, hi in bands:
        total, parts = _cover_one(lo, hi, tol, zeta)
        if not parts:
            return None
        for fam, f0 in parts:
            s = scaled_form(fam, f0, tol, zeta)
            result = s if result is None else result.convolve(s)
    return result


# -- LP machinery ------------------------------------------------------------------------------
class _Bands:
    """Bands in rad/s with the tolerance and damping; evaluates V and builds cuts."""

    def __init__(self, bands_hz, tol: float, zeta: float):
        self.bands_hz = bands_hz
        self.w = [(2 * math.pi * lo, 2 * math.pi * hi) for lo, hi in bands_hz]
        self.tol, self.zeta = tol, zeta
        self.sd = math.sqrt(1.0 - zeta * zeta)
        self.cuts_w: list[float] = []
        self.cuts_phi: list[float] = []

    def basis(self, w: np.ndarray, tau: np.ndarray) -> np.ndarray:
        """e_j(w) = exp(-zeta w (tau_N - tau_j)) exp(j w_d tau_j), shape (len(w), len(tau))."""
        return np.exp(-self.zeta * w[:, None] * (tau[-1] - tau) + 1j * self.sd * w[:, None] * tau)

    def check_grid(self, duration_s: float) -> tuple[np.ndarray, np.ndarray]:
        """Dense frequencies over every band (rad/s) and the band index of each."""
        pts, idx = [], []
        for i, (lo, hi) in enumerate(self.w):
            n = max(16, math.ceil((hi - lo) * max(duration_s, 1e-9) * _CHECK_PER_OSC / (2 * math.pi)) + 1)
            pts.append(np.linspace(lo, hi, n))
            idx.append(np.full(n, i))
        return np.concatenate(pts), np.concatenate(idx)

    def seed_cuts(self, duration_s: float) -> None:
        if self.cuts_w:
            return
        w = self.check_grid(duration_s)[0][:: max(1, _CHECK_PER_OSC // 3)]
        for wk in w:
            for phi in np.arange(4) * (math.pi / 2):
                self.cuts_w.append(float(wk))
                self.cuts_phi.append(float(phi))


def _local_maxima(v: np.ndarray, band: np.ndarray) -> np.ndarray:
    """Indices of local maxima of v within each band segment (segment ends count as maxima)."""
    n = v.size
    left = np.concatenate([[True], (v[1:] >= v[:-1]) | (band[1:] != band[:-1])])
    right = np.concatenate([(v[:-1] >= v[1:]) | (band[:-1] != band[1:]), [True]])
    return np.nonzero(left & right)[0] if n else np.array([], dtype=int)


def _minimax(prob: _Bands, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """Amplitudes on times ``tau`` with V <= tol on the bands (minimizing the largest V), or None.

    Returns (x, check frequencies, |z| there) when feasible on the check grid.
    """
    from scipy.optimize import linprog

    n = tau.size
    wc, band = prob.check_grid(float(tau[-1]))
    Ec = prob.basis(wc, tau)
    prob.seed_cuts(float(tau[-1]))
    c = np.zeros(n + 1)
    c[-1] = 1.0
    A_eq = np.concatenate([np.ones(n), [0.0]])[None, :]
    rows = np.empty((0, n))
    for round_ in range(_MAX_CUT_ROUNDS):
        w, phi = np.array(prob.cuts_w[rows.shape[0]:]), np.array(prob.cuts_phi[rows.shape[0]:])
        if w.size:
            rows = np.vstack([rows, np.real(np.exp(-1j * phi)[:, None] * prob.basis(w, tau))])
        A_ub = np.hstack([rows, -np.ones((rows.shape[0], 1))])
        res = linprog(c, A_ub=A_ub, b_ub=np.zeros(rows.shape[0]), A_eq=A_eq, b_eq=[1.0],
                      bounds=[(0.0, None)] * (n + 1), method="highs-ds", options={"presolve": False})
        if res.status != 0:
            return None
        x, s = res.x[:n], res.x[-1]
        if s > prob.tol * (1.0 + 1e-9):
            return None  # even the relaxation exceeds the tolerance
        if round_ >= _MARGINAL_ROUNDS and s > prob.tol * (1.0 - _MARGINAL):
            return None  # marginal: call it infeasible (costs at most one grid step of duration)
        z = Ec @ x
        v = np.abs(z)
        peaks = _local_maxima(v, band)
        peaks = peaks[v[peaks] > prob.tol * _ANTICIPATE]
        w_new, z_new = list(wc[peaks]), list(z[peaks])
        # refine each near-violating peak between its neighbours (parabola through three samples)
        for k in peaks:
            if 0 < k < v.size - 1 and band[k - 1] == band[k] == band[k + 1]:
                y0, y1, y2 = v[k - 1], v[k], v[k + 1]
                den = y0 - 2 * y1 + y2
                if den < 0:
                    wk = wc[k] + 0.5 * (y0 - y2) / den * (wc[k + 1] - wc[k])
                    wk = min(max(wk, wc[k - 1]), wc[k + 1])
                    zk = prob.basis(np.array([wk]), tau)[0] @ x
                    w_new.append(float(wk))
                    z_new.append(zk)
        w_new, z_new = np.array(w_new), np.array(z_new)
        if not np.any(np.abs(z_new) > prob.tol):
            return x, wc, v
        bad = np.abs(z_new) > prob.tol * _ANTICIPATE
        prob.cuts_w.extend(w_new[bad].tolist())
        prob.cuts_phi.extend(np.angle(z_new[bad]).tolist())
    return None


def _shaper_from(tau: np.ndarray, x: np.ndarray, name: str) -> Shaper:
    keep = x > 1e-12 * x.max()
    return Shaper.from_impulses(tau[keep], x[keep], name)


def _feasible(prob: _Bands, tau: np.ndarray, name: str) -> tuple[Shaper, np.ndarray] | None:
    """(shaper, its time grid) within the tolerance on the check grid, or None."""
    out = _minimax(prob, tau)
    if out is None:
        return None
    x, wc, _ = out
    s = _shaper_from(tau, x, name)
    if prob.zeta > 0.0 and s.duration_s < tau[-1] - 1e-12:
        # trailing zero impulses move the damping reference to the last real impulse: recheck
        if np.max(s.residual_vibration(wc, prob.zeta)) > prob.tol:
            return None
    return s, tau


def _verified(prob: _Bands, found: tuple[Shaper, np.ndarray], name: str) -> Shaper | None:
    """Rigorous check of the worst V per band (dense grid + local search); repair by a new cut."""
    for _ in range(8):
        s, tau = found
        worst = [worst_vibration(s, lo, hi, prob.zeta) for lo, hi in prob.bands_hz]
        v, f = max(worst)
        if v <= prob.tol * (1.0 + 1e-6):
            return s
        z = prob.basis(np.array([2 * math.pi * f]), tau)
        x = np.zeros(tau.size)
        x[np.searchsorted(tau, s.times_s)] = s.amplitudes
        prob.cuts_w.append(2 * math.pi * f)
        prob.cuts_phi.append(float(np.angle(z[0] @ x)))
        found = _feasible(prob, tau, name)
        if found is None:
            return None
    return None


def _optimize(bands, tol: float, zeta: float, cycle_s: float | None, upper: Shaper | None, name: str,
              hint_s: float | None = None) -> Shaper | None:
    """Shortest shaper on the grid (bisection on the duration, then local grid refinement)."""
    prob = _Bands(bands, tol, zeta)
    t_min = 1.0 / max(hi for _, hi in bands)
    unit = cycle_s if cycle_s is not None else t_min / _FINE_STEPS_PER_PERIOD
    # coarse step: a power of two of the unit so that each refinement divides it exactly
    k = 2 ** max(0, int(math.floor(math.log2(max(1.0, t_min / _COARSE_STEPS_PER_PERIOD / unit)))))
    h = k * unit
    found: list[tuple[Shaper, np.ndarray]] = []  # every feasible result, for the final verification

    def feasible(tau):
        r = _feasible(prob, tau, name)
        if r is not None:
            found.append(r)
        return r

    def steps(r):
        return max(1, round(r[0].duration_s / h))

    # a feasible number of coarse steps, starting from the upper bound's duration
    n_hi = max(2, math.ceil(upper.duration_s / h) + 1) if upper is not None else 8
    while (best := feasible(h * np.arange(n_hi + 1))) is None:
        if n_hi > 1e5:
            return None
        n_hi *= 2
    n_hi = steps(best)
    # Lower bound for positive shapers: if w D < pi every phase w t_i lies within an arc of w D, so
    # V(w) >= cos(w D / 2) (projection on the arc's bisector); V <= tol at the lowest band
    # frequency w_lo needs D >= 2 acos(tol) / w_lo (derived; 5 % margin for damping).
    w_lo = 2.0 * math.pi * min(lo for lo, _ in bands)
    n_lo = max(0, min(n_hi - 1, math.floor(0.95 * 2.0 * math.acos(tol) / w_lo / h)))
    if hint_s is not None and 0.0 < hint_s < n_hi * h:
        # bracket around a guessed duration (e.g. a neighbouring schedule row's)
        g_hi = min(n_hi - 1, math.ceil(hint_s * (1.0 + _HINT_BRACKET) / h))
        r = feasible(h * np.arange(g_hi + 1)) if g_hi > 0 else None
        if r is not None:
            best, n_hi = r, min(g_hi, steps(r))
            g_lo = math.floor(hint_s * (1.0 - _HINT_BRACKET) / h)
            if n_lo < g_lo < n_hi and feasible(h * np.arange(g_lo + 1)) is None:
                n_lo = g_lo
    while n_hi - n_lo > 1:
        mid = (n_lo + n_hi) // 2
        r = feasible(h * np.arange(mid + 1))
        if r is None:
            n_lo = mid
        else:
            best, n_hi = r, min(mid, steps(r))
    # refinement: finer steps near the current impulses, bisection on the duration
    while k > 1:
        k_new = max(1, k // 4)
        h_new = k_new * unit
        d_best = round(best[0].duration_s / h_new)
        d_lo = max(0, round((best[0].duration_s - h) / h_new))
        support = np.round(best[0].times_s / h_new).astype(int)
        window = np.arange(-round(h / h_new), round(h / h_new) + 1)
        cand = np.unique((support[:, None] + window[None, :]).reshape(-1))
        cand = cand[cand > 0]
        while d_best - d_lo > 1:
            mid = (d_lo + d_best) // 2
            r = feasible(h_new * np.concatenate([[0], cand[cand < mid], [mid]]))
            if r is None:
                d_lo = mid
            else:
                best, d_best = r, mid
        k, h = k_new, h_new
    for r in sorted(found, key=lambda r: r[0].duration_s):
        ok = _verified(prob, r, name)
        if ok is not None:
            return ok
    return None


# -- public API --------------------------------------------------------------------------------
def multi_band_shaper(bands_hz, tolerance: float = 0.05, damping_ratio: float = 0.0, *,
                      cycle_s: float | None = None, start: Shaper | None = None, name: str = "band",
                      hint_s: float | None = None) -> Shaper:
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

    Returns
    -------
    Shaper
        Never longer than ``start`` nor than :func:`closed_form_cover` of the bands (on the cycle
        grid, the closed form counts only if it is on the grid).
    """
    bands = _check_bands(bands_hz)
    tol, zeta = _check_tolerance(tolerance), _check_damping(damping_ratio)
    cycle = _check_cycle(cycle_s, bands)
    key = (tuple(bands), tol, zeta, cycle, name)
    if start is None and key in _MEMO:
        return _MEMO[key]
    cover = closed_form_cover(bands, tol, zeta)
    candidates = [s for s in (start, cover) if s is not None]
    candidates = [s for s in candidates if (cycle is None or s.on_grid(cycle))
                  and worst_over_bands(s, bands, zeta) <= tol * (1.0 + 1e-6)]
    upper = min(candidates, key=lambda s: s.duration_s) if candidates else None
    opt = _optimize(bands, tol, zeta, cycle, upper or cover, name, hint_s)
    pool = ([opt] if opt is not None else []) + candidates
    if not pool:
        raise DesignError(f"no shaper found with V <= {100 * tol:g} % over bands "
                          + ", ".join(f"[{lo:g}, {hi:g}] Hz" for lo, hi in bands)
                          + "; allowed: a larger tolerance or narrower bands")
    best = min(pool, key=lambda s: (s.duration_s, s is not opt))
    if start is None:
        if len(_MEMO) >= 64:
            _MEMO.pop(next(iter(_MEMO)))
        _MEMO[key] = best
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
