"""Shortest shaper on a time grid by linear programming with cutting planes (engine of shaper_opt).

Problem: given bands [w_lo, w_hi] (one per mode), a tolerance Vtol and a damping ratio, find the
shortest impulse sequence with A_i >= 0, sum A_i = 1 and V(w) <= Vtol for every w in every band.

With the impulse times fixed on a grid tau_j = j h (j = 0..N), V(w) = |sum_j x_j e_j(w)| with
e_j(w) = exp(-zeta w (tau_N - tau_j)) exp(j w_d tau_j), so "V <= s" is convex in the amplitudes x
and equals the family of half-planes Re(exp(-j phi) sum_j x_j e_j(w)) <= s over all phases phi.
A linear program (HiGHS dual simplex warm-started as cuts arrive and from grid to grid within one search stage,
with a bounded effort and an interior-point retry: :class:`stillhook.shaping.lp_solve.CutLP`, :class:`_GridLP`)
minimizes s subject to a growing set
of such cuts (w, phi): after each solve V is evaluated on a dense frequency grid, its maxima are
refined, and every maximum near or above Vtol adds the cut tangent at its own phase (Kelley's
cutting-plane method). The LP's s is a lower bound on the true minimax, so "s > Vtol" proves the
grid duration N h infeasible and "max V <= Vtol" proves it feasible. Bisection on N gives the
shortest duration on the grid; the LP adds impulses wherever they are needed (a basic solution has
as many non-zero impulses as active constraints call for). The grid is then refined (steps divided
by 4 down to the drive cycle, or to T_min/4096 without one), keeping candidate times within half a
coarse step of the current impulses. The shortest result is finally verified with
:func:`stillhook.shaping.shaper.worst_vibration` (dense sampling plus a local search) per band.

Notes
-----
Cutting planes: Kelley, "The cutting-plane method for solving convex programs", J. SIAM
8(4):703-712, 1960 (from memory). Residual vibration V: Singer & Seering, ASME JDSMC
112(1):76-82, 1990.
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.shaping.lp_solve import CutLP
from stillhook.shaping.shaper import Shaper, worst_vibration

__all__ = ["MAX_BASIS_ENTRIES", "ProblemTooLarge", "optimize_on_grid"]

#: Dense check grid: samples per 2 pi / duration (the scale on which V can change).
_CHECK_PER_OSC = 96
#: The first LP's cuts (4 phases each) sit at every this many check frequencies, about 2/3 of the scale on
#: which V changes (was 1/3: twice the rows; measured 10-15 % slower designs, as many cut rounds).
_SEED_EVERY = 2 * _CHECK_PER_OSC // 3
#: First grid step as a fraction of the shortest period in the bands.
_COARSE_STEPS_PER_PERIOD = 4
#: Finest step without a drive cycle, as a fraction of the shortest period.
_FINE_STEPS_PER_PERIOD = 4096
_MAX_CUT_ROUNDS = 40
#: After this many cut rounds, a relaxation within _MARGINAL of the tolerance counts as infeasible.
_MARGINAL_ROUNDS = 4
_MARGINAL = 2e-3
#: Relative half-width of the bracket tried around a duration hint.
_HINT_BRACKET = 0.05
#: Peaks above this fraction of the tolerance get a cut too (anticipating the next violation).
_ANTICIPATE = 0.97
#: Largest LP basis tried (check frequencies x candidate impulse times, complex entries, ~32 MB):
#: keeps a design within seconds and bounded memory; larger problems fall back to closed forms.
MAX_BASIS_ENTRIES = 2_000_000


class ProblemTooLarge(Exception):
    """The time grid times the check grid exceeds MAX_BASIS_ENTRIES (internal, caught by shaper_opt)."""

    def __init__(self, n_times: int, n_freqs: int):
        super().__init__(f"{n_times} candidate impulse times x {n_freqs} check frequencies")
        self.n_times, self.n_freqs = n_times, n_freqs


class _Bands:
    """Bands in rad/s with the tolerance and damping; evaluates V and builds cuts."""

    def __init__(self, bands_hz, tol: float, zeta: float):
        self.bands_hz = bands_hz
        self.w = [(2 * math.pi * lo, 2 * math.pi * hi) for lo, hi in bands_hz]
        self.tol, self.zeta = tol, zeta
        self.sd = math.sqrt(1.0 - zeta * zeta)
        self.cuts_w: list[float] = []
        self.cuts_phi: list[float] = []

    def add_cuts(self, w, phi) -> None:
        self.cuts_w.extend(float(v) for v in w)
        self.cuts_phi.extend(float(v) for v in phi)

    def basis(self, w: np.ndarray, tau: np.ndarray) -> np.ndarray:
        """e_j(w) = exp(-zeta w (tau_N - tau_j)) exp(j w_d tau_j), shape (len(w), len(tau))."""
        theta = self.sd * np.multiply.outer(w, tau)
        e = np.empty(theta.shape, dtype=complex)
        e.real, e.imag = np.cos(theta), np.sin(theta)  # real cos/sin: faster than a complex exp
        if self.zeta > 0.0:
            e *= np.exp(-self.zeta * np.multiply.outer(w, tau[-1] - tau))
        return e

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
        w = self.check_grid(duration_s)[0][::_SEED_EVERY]
        phi = np.arange(4) * (math.pi / 2)
        self.add_cuts(np.repeat(w, phi.size), np.tile(phi, w.size))


def _local_maxima(v: np.ndarray, band: np.ndarray) -> np.ndarray:
    """Indices of local maxima of v within each band segment (segment ends count as maxima)."""
    n = v.size
    left = np.concatenate([[True], (v[1:] >= v[:-1]) | (band[1:] != band[:-1])])
    right = np.concatenate([(v[:-1] >= v[1:]) | (band[:-1] != band[1:]), [True]])
    return np.nonzero(left & right)[0] if n else np.array([], dtype=int)


class _GridLP:
    """One cutting-plane LP over candidate impulse times ``universe`` (s), shared by the neighbouring grids
    of one search stage: each grid is a subset of the universe (the other columns held at 0), so the LP
    keeps its rows (the cuts) and its basis from one grid to the next (a warm start).

    With damping the cut rows depend on the grid's last time tau_N through
    exp(-zeta w (tau_N - tau_j)) = exp(-zeta w (U_N - tau_j)) exp(-zeta w (U_N - tau_N)) ** -1, so each row is
    built once on the universe (tau_N = U_N) and "row <= s" is written row - c s <= 0 with
    c = exp(-zeta w (U_N - tau_N)), reset for every grid (:meth:`CutLP.rescale`).
    """

    def __init__(self, prob: _Bands, universe: np.ndarray):
        self.prob, self.U = prob, universe
        self.lp = CutLP(universe.size)
        self.done = 0
        self.cut_w = np.zeros(0)

    def _scales(self, w: np.ndarray, tau_n: float) -> np.ndarray:
        # c = exp(-zeta w (U_N - tau_N)); exactly 1 without damping or on the universe's own last time
        if self.prob.zeta == 0.0:
            return np.ones(w.size)
        return np.exp(-self.prob.zeta * w * (self.U[-1] - tau_n))

    def minimax(self, active: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
        """Amplitudes on times ``U[active]`` with V <= tol on the bands (minimizing the largest V), or None.

        ``active``: ascending indices into the universe. Returns (x, check frequencies, |z| there) when
        feasible on the check grid.
        """
        prob, lp = self.prob, self.lp
        tau = self.U[active]
        n = tau.size
        wc, band = prob.check_grid(float(tau[-1]))
        if n * wc.size > MAX_BASIS_ENTRIES:
            raise ProblemTooLarge(n, wc.size)
        Ec = prob.basis(wc, tau)
        prob.seed_cuts(float(tau[-1]))
        mask = np.zeros(self.U.size, dtype=bool)
        mask[active] = True
        lp.restrict(mask)
        lp.rescale(self._scales(self.cut_w, float(tau[-1])))
        for round_ in range(_MAX_CUT_ROUNDS):
            if len(prob.cuts_w) > self.done:
                w, phi = np.array(prob.cuts_w[self.done:]), np.array(prob.cuts_phi[self.done:])
                lp.add_cuts(np.real(np.exp(-1j * phi)[:, None] * prob.basis(w, self.U)),
                            self._scales(w, float(tau[-1])))
                self.cut_w = np.concatenate([self.cut_w, w])
                self.done = len(prob.cuts_w)
            res = lp.solve()
            if res.status != 0:
                return None
            x, s = res.x[active], res.s
            if s > prob.tol * (1.0 + 1e-9):
                return None  # even the relaxation exceeds the tolerance
            if round_ >= _MARGINAL_ROUNDS and s > prob.tol * (1.0 - _MARGINAL):
                return None  # marginal: call it infeasible (costs at most one grid step of duration)
            # z = E x without BLAS: a threaded gemv waits ms for a second core on a loaded machine (measured)
            z = np.einsum("ij,j->i", Ec, x)
            v = np.abs(z)
            w_new, z_new = _near_violations(prob, wc, band, tau, x, z, v)
            if not np.any(np.abs(z_new) > prob.tol):
                return x, wc, v
            bad = np.abs(z_new) > prob.tol * _ANTICIPATE
            prob.add_cuts(w_new[bad], np.angle(z_new[bad]))
        return None


def _near_violations(prob: _Bands, wc, band, tau, x, z, v) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies (rad/s) and z there of the peaks of V above _ANTICIPATE x tol, each refined between its
    neighbours by the parabola through three samples."""
    peaks = _local_maxima(v, band)
    peaks = peaks[v[peaks] > prob.tol * _ANTICIPATE]
    w_new, z_new = list(wc[peaks]), list(z[peaks])
    for k in peaks:
        if 0 < k < v.size - 1 and band[k - 1] == band[k] == band[k + 1]:
            y0, y1, y2 = v[k - 1], v[k], v[k + 1]
            den = y0 - 2 * y1 + y2
            if den < 0:
                wk = wc[k] + 0.5 * (y0 - y2) / den * (wc[k + 1] - wc[k])
                wk = min(max(wk, wc[k - 1]), wc[k + 1])
                zk = np.einsum("j,j->", prob.basis(np.array([wk]), tau)[0], x)
                w_new.append(float(wk))
                z_new.append(zk)
    return np.array(w_new), np.array(z_new)


def _shaper_from(tau: np.ndarray, x: np.ndarray, name: str) -> Shaper:
    keep = x > 1e-12 * x.max()
    return Shaper.from_impulses(tau[keep], x[keep], name)


def _feasible(prob: _Bands, grid: _GridLP, active: np.ndarray, name: str) -> tuple[Shaper, np.ndarray] | None:
    """(shaper, its time grid ``grid.U[active]``) within the tolerance on the check grid, or None."""
    out = grid.minimax(active)
    if out is None:
        return None
    x, wc, _ = out
    tau = grid.U[active]
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
        prob.add_cuts([2 * math.pi * f], [float(np.angle(z[0] @ x))])
        found = _feasible(prob, _GridLP(prob, tau), np.arange(tau.size), name)
        if found is None:
            return None
    return None


def optimize_on_grid(bands, tol: float, zeta: float, cycle_s: float | None, upper: Shaper | None, name: str,
              hint_s: float | None = None) -> Shaper | None:
    """Shortest shaper on the grid (bisection on the duration, then local grid refinement)."""
    prob = _Bands(bands, tol, zeta)
    t_min = 1.0 / max(hi for _, hi in bands)
    unit = cycle_s if cycle_s is not None else t_min / _FINE_STEPS_PER_PERIOD
    # coarse step: a power of two of the unit so that each refinement divides it exactly
    k = 2 ** max(0, int(math.floor(math.log2(max(1.0, t_min / _COARSE_STEPS_PER_PERIOD / unit)))))
    h = k * unit
    found: list[tuple[Shaper, np.ndarray]] = []  # every feasible result, for the final verification

    def feasible(grid: _GridLP, active: np.ndarray):
        r = _feasible(prob, grid, active, name)
        if r is not None:
            found.append(r)
        return r

    def steps(r):
        return max(1, round(r[0].duration_s / h))

    # a feasible number of coarse steps, starting from the upper bound's duration; every coarse grid
    # below it is a prefix of h * [0, 1, ..., n_hi] and shares its LP
    n_hi = max(2, math.ceil(upper.duration_s / h) + 1) if upper is not None else 8
    while True:
        coarse = _GridLP(prob, h * np.arange(n_hi + 1))
        if (best := feasible(coarse, np.arange(n_hi + 1))) is not None:
            break
        if n_hi > 1e5:
            return None
        n_hi *= 2

    def prefix(m: int):
        return feasible(coarse, np.arange(m + 1))

    n_hi = steps(best)
    # Lower bound for positive shapers: if w D < pi every phase w t_i lies within an arc of w D, so
    # V(w) >= cos(w D / 2) (projection on the arc's bisector); V <= tol at the lowest band
    # frequency w_lo needs D >= 2 acos(tol) / w_lo (derived; 5 % margin for damping).
    w_lo = 2.0 * math.pi * min(lo for lo, _ in bands)
    n_lo = max(0, min(n_hi - 1, math.floor(0.95 * 2.0 * math.acos(tol) / w_lo / h)))
    if hint_s is not None and 0.0 < hint_s < n_hi * h:
        # bracket around a guessed duration (e.g. a neighbouring schedule row's)
        g_hi = min(n_hi - 1, math.ceil(hint_s * (1.0 + _HINT_BRACKET) / h))
        r = prefix(g_hi) if g_hi > 0 else None
        if r is not None:
            best, n_hi = r, min(g_hi, steps(r))
            g_lo = math.floor(hint_s * (1.0 - _HINT_BRACKET) / h)
            if n_lo < g_lo < n_hi and prefix(g_lo) is None:
                n_lo = g_lo
    while n_hi - n_lo > 1:
        mid = (n_lo + n_hi) // 2
        r = prefix(mid)
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
        window = np.arange(-round(h / h_new) // 2, round(h / h_new) // 2 + 1)
        cand = np.unique((support[:, None] + window[None, :]).reshape(-1))
        cand = cand[cand > 0]
        # every grid of this level (0, the candidates below mid, mid) is a subset of one universe
        fine = np.unique(np.concatenate([[0], cand[cand < d_best], np.arange(d_lo + 1, d_best)]))
        grid = _GridLP(prob, h_new * fine) if d_best - d_lo > 1 else None
        while d_best - d_lo > 1:
            mid = (d_lo + d_best) // 2
            r = feasible(grid, np.searchsorted(fine, np.concatenate([[0], cand[cand < mid], [mid]])))
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
