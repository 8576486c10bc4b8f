"""Drive-cycle effects: impulse times must be whole numbers of drive cycles.

A drive applies the shaper once per cycle Ts, so each impulse lands on a delay d_i = t_i / Ts that
must be an integer. Three remedies, each returning a shaper on the grid:

* ``round``: move each impulse to the nearest cycle. Cheap, but leaves a vibration of order
  w Ts / 4 at the design point (each impulse's phase moves by up to w Ts / 2).
* ``split``: share each impulse between its two neighbouring cycles in proportion to closeness,
  A (1 - a) at k Ts and A a at (k + 1) Ts for t = (k + a) Ts (linear interpolation). The phase
  error becomes second order in w Ts.
* ``resolve``: keep the neighbouring cycles as candidate times and re-solve the amplitudes by a
  linear program so that the shaper's transfer function H(s) = sum_i A_i exp(-s t_i) equals the
  original's at every design pole s_p = -zeta w + j w_d (and, when enough candidates exist, so
  does dH/dw), staying as close as possible to the split amplitudes (least sum of absolute
  changes). Zero-vibration conditions then hold exactly on the grid.

Notes
-----
Digital shapers on a sample grid: Murphy & Watanabe, "Digital shaping filters for reducing
machine vibration", IEEE Trans. Robotics & Automation 8(2):285-289, 1992 (from memory).
"""

from __future__ import annotations

import math

import numpy as np

from stillhook.errors import DesignError
from stillhook.shaping.lp_solve import solve_lp
from stillhook.shaping.shaper import Shaper, check_cycle, check_damping, worst_vibration

__all__ = ["REMEDIES", "grid_effects", "to_cycle_grid"]

REMEDIES = ("round", "split", "resolve")


def _pole_rows(k: np.ndarray, cycle_s: float, freqs_hz, zeta: float) -> np.ndarray:
    """Real rows of [Re H, Im H, Re dH/dw, Im dH/dw] per design frequency for impulses at k cycles."""
    t = k * cycle_s
    rows = []
    for f in freqs_hz:
        w = 2.0 * math.pi * float(f)
        sd = math.sqrt(1.0 - zeta * zeta)
        # H(s_p) = sum A_i exp(zeta w t_i) exp(-j w_d t_i); dH/dw = sum A_i t_i (zeta - j sd) exp(...)
        e = np.exp(zeta * w * t - 1j * sd * w * t)
        de = t * (zeta - 1j * sd) * e
        rows.append([e.real, e.imag, de.real, de.imag])
    return np.array(rows)  # (n_freq, 4, n)


def _round(shaper: Shaper, cycle_s: float) -> Shaper:
    k = np.round(shaper.times_s / cycle_s)
    return Shaper.from_impulses(k * cycle_s, shaper.amplitudes, shaper.name + "|round")


def _split(shaper: Shaper, cycle_s: float) -> Shaper:
    u = shaper.times_s / cycle_s
    k = np.floor(u + 1e-9)
    a = np.clip(u - k, 0.0, 1.0)
    a[a < 1e-9] = 0.0
    times = np.concatenate([k, k + 1]) * cycle_s
    amps = np.concatenate([shaper.amplitudes * (1.0 - a), shaper.amplitudes * a])
    return Shaper.from_impulses(times, amps, shaper.name + "|split")


def _polish(x: np.ndarray, A_eq: np.ndarray, b_eq: np.ndarray, positive: bool) -> np.ndarray:
    """Meet the LP's equality rows to machine precision on its support.

    The solver meets A x = b only to its feasibility tolerance, scaled by its own row scaling; on
    long shapers with thousands of cycles that leaves V ~ 1e-8. The minimum-norm correction on the
    support S, dx_S = A_S^+ (b - A x), removes it (kept only when it keeps the signs allowed).
    """
    x = np.where(np.abs(x) < 1e-13, 0.0, x)
    S = np.flatnonzero(x)
    if S.size == 0:
        return x
    dx, *_ = np.linalg.lstsq(A_eq[:, S], b_eq - A_eq @ x, rcond=None)
    polished = x.copy()
    polished[S] += dx
    if positive and np.any(polished[S] < 0.0):
        return x
    return polished


def _resolve(shaper: Shaper, cycle_s: float, freqs_hz, zeta: float) -> Shaper:
    if freqs_hz is None or len(np.atleast_1d(freqs_hz)) == 0:
        raise DesignError("remedy 'resolve' needs the design frequencies (freqs_hz); "
                          "allowed: one or more frequencies in Hz, or remedy 'split' / 'round'")
    freqs = [float(f) for f in np.atleast_1d(freqs_hz)]
    positive = not shaper.overshoots_command
    split = _split(shaper, cycle_s)
    u = shaper.times_s / cycle_s
    target_rows = _pole_rows(u, cycle_s, freqs, zeta)  # original times (not on the grid)
    target = target_rows @ shaper.amplitudes  # (n_freq, 4)
    for widen in (0, 1, 2):
        k = np.unique(np.concatenate([np.floor(u + 1e-9) - widen, np.ceil(u - 1e-9) + widen]))
        k = k[k >= 0]
        n = k.size
        x_ref = np.zeros(n)
        idx = np.searchsorted(k, np.round(split.times_s / cycle_s))
        x_ref[idx] = split.amplitudes
        rows = _pole_rows(k, cycle_s, freqs, zeta)
        for orders in (4, 2):  # value and slope, then value only
            A_eq = np.vstack([np.ones((1, n))] + [rows[i, :orders] for i in range(len(freqs))])
            b_eq = np.concatenate([[1.0]] + [target[i, :orders] for i in range(len(freqs))])
            # variables [x, d]: minimize sum d with -d <= x - x_ref <= d
            c = np.concatenate([np.zeros(n), np.ones(n)])
            eye = np.eye(n)
            A_ub = np.block([[eye, -eye], [-eye, -eye]])
            b_ub = np.concatenate([x_ref, -x_ref])
            bounds = [(0.0, None) if positive else (None, None)] * n + [(0.0, None)] * n
            res = solve_lp(c, A_ub=A_ub, b_ub=b_ub, A_eq=np.hstack([A_eq, np.zeros_like(A_eq)]), b_eq=b_eq,
                           bounds=bounds, method="highs",
                           options={"primal_feasibility_tolerance": 1e-10, "dual_feasibility_tolerance": 1e-10})
            if res.status == 0:
                x = _polish(res.x[:n], A_eq, b_eq, positive)
                return Shaper.from_impulses(k * cycle_s, x, shaper.name + "|resolve")
    raise DesignError(f"cannot re-solve shaper {shaper.name or '(unnamed)'} on a {cycle_s:g} s grid; "
                      "allowed: remedy 'split' or 'round', or a shorter drive cycle")


def to_cycle_grid(shaper: Shaper, cycle_s: float, *, remedy: str = "split", freqs_hz=None,
                  damping_ratio: float = 0.0) -> Shaper:
    """Put ``shaper`` on the drive-cycle grid with one of the remedies ``round``, ``split``, ``resolve``.

    Parameters
    ----------
    shaper : Shaper
    cycle_s : float > 0
        Drive cycle (s).
    remedy : {"split", "round", "resolve"}
    freqs_hz : sequence of float > 0, optional
        Design frequencies (one per mode); required by ``resolve``.
    damping_ratio : float in [0, 1)
        Damping at the design frequencies (used by ``resolve``).

    Returns
    -------
    Shaper
        On the grid (``shaper.on_grid(cycle_s)``); unchanged when already on it.
    """
    cycle = check_cycle(cycle_s)
    zeta = check_damping(damping_ratio)
    if remedy not in REMEDIES:
        raise DesignError(f"remedy {remedy!r} is not known; allowed: " + ", ".join(REMEDIES))
    if shaper.on_grid(cycle):
        k = np.round(shaper.times_s / cycle)
        return Shaper(k * cycle, shaper.amplitudes, shaper.name)
    if remedy == "round":
        return _round(shaper, cycle)
    if remedy == "split":
        return _split(shaper, cycle)
    return _resolve(shaper, cycle, freqs_hz, zeta)


def grid_effects(shaper: Shaper, cycle_s: float, freqs_hz, damping_ratio: float = 0.0,
                 bands_hz=None) -> dict:
    """V after each remedy, at each design frequency and (optionally) worst over each band.

    Returns
    -------
    dict
        ``{"cycle_s", "freqs_hz", "original": {...}, "round": {...}, "split": {...},
        "resolve": {...}}``, each entry with ``vibration_at_design`` (list, fractions),
        ``worst_in_bands`` (list or None), ``duration_s`` and ``n_impulses``.
    """
    cycle = check_cycle(cycle_s)
    zeta = check_damping(damping_ratio)
    freqs = [float(f) for f in np.atleast_1d(freqs_hz)]

    def summary(s: Shaper) -> dict:
        return {
            "vibration_at_design": [float(v) for v in s.vibration_at_hz(np.array(freqs), zeta)],
            "worst_in_bands": None if bands_hz is None else
            [worst_vibration(s, lo, hi, zeta)[0] for lo, hi in bands_hz],
            "duration_s": s.duration_s,
            "n_impulses": s.n_impulses,
        }

    out = {"cycle_s": cycle, "freqs_hz": freqs, "original": summary(shaper)}
    for remedy in REMEDIES:
        out[remedy] = summary(to_cycle_grid(shaper, cycle, remedy=remedy, freqs_hz=freqs, damping_ratio=zeta))
    return out
