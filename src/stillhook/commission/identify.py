"""Identify the sway modes in a log: free-sway segments, matrix pencil, nonlinear refinement.

Per segment and per sway signal: remove the mean, low-pass and decimate to about
:data:`SAMPLES_PER_PERIOD` samples per period of the highest frequency of interest (Kaiser-windowed
sinc FIR, zero phase: :mod:`stillhook.commission.decimation`), estimate the poles by the matrix pencil,
reject spurious poles (real poles, damping below :data:`MIN_DAMPING` or above :data:`MAX_DAMPING`,
frequency outside the band of interest, amplitude under :data:`MIN_AMPLITUDE_SHARE` of the largest),
then refine the at most two strongest modes by nonlinear least squares on the raw samples
(:mod:`stillhook.commission.damped_fit`). When several signals are logged each mode is reported from
the signal that fixes its frequency best.

A free-sway segment has the trolley at rest (|speed| < :data:`REST_SPEED_M_S`) and the rope steady (it
moves less than :data:`ROPE_STEADY_M` over any :data:`ROPE_WINDOW_S`); it must last
:data:`MIN_PERIODS` periods of the lowest mode expected.

Notes
-----
Low-pass before decimation: plain subsampling folds the noise of the whole band into the decimated
one and costs about sqrt(decimation) in accuracy (common practice, no source).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from stillhook.commission.damped_fit import fit_damped_sinusoids
from stillhook.commission.decimation import decimate_zero_phase
from stillhook.commission.logs import SwayLog
from stillhook.commission.pencil import matrix_pencil
from stillhook.errors import InputFileError

__all__ = [
    "DEFAULT_BAND_HZ", "IdentifiedMode", "MAX_DAMPING", "MIN_AMPLITUDE_SHARE", "MIN_DAMPING", "MIN_PERIODS",
    "REST_SPEED_M_S", "ROPE_STEADY_M", "ROPE_WINDOW_S", "SAMPLES_PER_PERIOD", "Segment", "expected_modes_hz",
    "free_sway_windows", "identify_log", "identify_record",
]

#: Trolley speed (m/s) under which the trolley counts as at rest.
REST_SPEED_M_S = 0.005
#: Rope length change (m) over ROPE_WINDOW_S above which the hoist counts as moving.
ROPE_STEADY_M = 0.01
ROPE_WINDOW_S = 1.0
#: A segment must last this many periods of the lowest mode expected.
MIN_PERIODS = 3.0
#: Frequency band searched without a project (Hz): 0.02 Hz is a 600 m pendulum, 5 Hz a 1 cm one.
DEFAULT_BAND_HZ = (0.02, 5.0)
#: Decimated samples per period of the band's top frequency.
SAMPLES_PER_PERIOD = 8
#: Poles with damping ratio outside [MIN_DAMPING, MAX_DAMPING] are spurious (noise, drift).
MIN_DAMPING = -0.005
MAX_DAMPING = 0.3
#: Poles with amplitude under this share of the strongest are spurious.
MIN_AMPLITUDE_SHARE = 0.02
#: A mode whose amplitude is under this many standard deviations is not observable.
MIN_AMPLITUDE_SIGMAS = 10.0
#: Samples given to the matrix pencil at most (the refinement uses all of them).
MAX_PENCIL_SAMPLES = 2000


@dataclass(frozen=True)
class IdentifiedMode:
    """One mode of one segment (frequency is the undamped natural frequency |s| / 2 pi)."""

    frequency_hz: float
    frequency_sd_hz: float
    damping_ratio: float
    damping_ratio_sd: float
    amplitude: float
    amplitude_sd: float
    phase_rad: float
    signal: str

    def as_dict(self) -> dict:
        """The issue's JSON fields."""
        return {"frequency_hz": self.frequency_hz, "frequency_sd_hz": self.frequency_sd_hz,
                "damping_ratio": self.damping_ratio, "damping_ratio_sd": self.damping_ratio_sd,
                "amplitude": self.amplitude, "signal": self.signal}


@dataclass
class Segment:
    """The identified modes of one free-sway segment, low frequency first.

    ``mode_numbers`` gives each mode's place in the model (1 low, 2 high) when a project predicts them,
    else None; ``fits`` holds per signal (t_s, measured, fitted) for the figures.
    """

    start_s: float
    end_s: float
    rope_length_m: float | None
    payload_mass_kg: float | None
    modes: list
    fit_rms_ratio: float
    mode_numbers: list | None = None
    notes: list = field(default_factory=list)
    fits: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        return {"start_s": self.start_s, "end_s": self.end_s, "rope_length_m": self.rope_length_m,
                "modes": [m.as_dict() for m in self.modes], "fit_rms_ratio": self.fit_rms_ratio}


def expected_modes_hz(envelope, rope_length_m: float | None, payload_mass_kg: float | None) -> list[float] | None:
    """The project's mode frequencies (Hz) at the log's rope length and payload mass (nominal when unknown)."""
    if envelope is None:
        return None
    L = envelope.nominal_rope_length_m if rope_length_m is None else rope_length_m
    m = envelope.nominal_payload_mass_kg if payload_mass_kg is None else payload_mass_kg
    return [mode.frequency_hz for mode in envelope.rig(L, m).modes()]


def free_sway_windows(log: SwayLog) -> list[tuple[int, int]]:
    """Index ranges [i, j) where the trolley rests and the rope is steady (whole record without those columns)."""
    n = log.time_s.size
    ok = np.ones(n, dtype=bool)
    v = log.trolley_speed_m_s()
    if v is not None:
        ok &= np.abs(v) < REST_SPEED_M_S
    if "rope_length_m" in log.columns:
        ok &= ~_rope_moving(log.time_s, log.columns["rope_length_m"])
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
    return [(int(a), int(b)) for a, b in zip(edges[::2], edges[1::2], strict=True)]


def _rope_moving(t: np.ndarray, L: np.ndarray) -> np.ndarray:
    """True within ROPE_WINDOW_S of any sample where the rope length changes by more than ROPE_STEADY_M over
    the next ROPE_WINDOW_S."""
    ahead = np.searchsorted(t, t + ROPE_WINDOW_S, side="right") - 1
    moving = np.abs(L[ahead] - L) > ROPE_STEADY_M
    count = np.concatenate([[0], np.cumsum(moving)])  # moving samples before each index
    lo = np.searchsorted(t, t - ROPE_WINDOW_S, side="left")
    hi = np.searchsorted(t, t + ROPE_WINDOW_S, side="right")
    return count[hi] - count[lo] > 0


def identify_record(t_s, y, band_hz=DEFAULT_BAND_HZ, *, max_modes: int = 2):
    """Modes of one uniformly-enough sampled record: pencil on the low-passed decimated record, then NLS on all.

    Returns the :class:`~stillhook.commission.damped_fit.DampedFit`, or None when no oscillatory mode
    survives the rejection.
    """
    t = np.asarray(t_s, dtype=float) - float(t_s[0])
    y = np.asarray(y, dtype=float)
    mean = float(y.mean())
    x = y - mean
    dt = float(np.median(np.diff(t)))
    f_lo, f_hi = band_hz
    q = max(1, int(1.0 / (dt * SAMPLES_PER_PERIOD * f_hi)))
    xd = decimate_zero_phase(x, q) if q > 1 else x  # zero-phase FIR low-pass, then keep every q-th sample
    trim = min(10, xd.size // 10) if q > 1 else 0  # the filter's edge transients
    xd = xd[trim: xd.size - trim][:MAX_PENCIL_SAMPLES]
    t0 = trim * q * dt
    pencil = matrix_pencil(xd, q * dt)
    s, c = pencil.poles_rad_s, pencil.amplitudes * np.exp(-pencil.poles_rad_s * t0)  # amplitudes at t = 0
    wn = np.abs(s)
    zeta = -s.real / np.maximum(wn, 1e-300)
    keep = (s.imag > 0) & (wn / (2 * np.pi) >= f_lo) & (wn / (2 * np.pi) <= f_hi)
    keep &= (zeta >= MIN_DAMPING) & (zeta <= MAX_DAMPING)
    if not np.any(keep):
        return None
    s, c = s[keep], c[keep]
    amp = 2 * np.abs(c)
    strong = amp >= MIN_AMPLITUDE_SHARE * amp.max()
    s, c, amp = s[strong], c[strong], amp[strong]
    top = np.argsort(-amp)[:max_modes]
    return fit_damped_sinusoids(t, y, s[top], c[top], mean)


def _band(envelope, expected: list[float] | None, sample_rate_hz: float) -> tuple[float, float]:
    """Frequencies searched: around the project's bands and the expected modes, else DEFAULT_BAND_HZ."""
    lo, hi = DEFAULT_BAND_HZ
    if envelope is not None:
        freqs = [f for band in envelope.mode_bands_hz() for f in band] + list(expected or [])
        lo, hi = 0.5 * min(freqs), 2.0 * max(freqs)
    return lo, min(hi, 0.4 * sample_rate_hz)


def _window(log: SwayLog, window_s) -> tuple[int, int]:
    """Index range of a forced window; warnings when the trolley or the rope moves inside it."""
    t = log.time_s
    start, end = (float(v) for v in window_s)
    i, j = int(np.searchsorted(t, start, side="left")), int(np.searchsorted(t, end, side="right"))
    if not (end > start) or j - i < 8:
        raise InputFileError(f"{log.name}: window {start:g}-{end:g} s holds {max(j - i, 0)} samples; the record "
                             f"spans {t[0]:g}-{t[-1]:g} s; allowed: START < END inside it, 8 samples at least")
    v = log.trolley_speed_m_s()
    if v is not None and np.max(np.abs(v[i:j])) >= REST_SPEED_M_S:
        log.warnings.append(f"{log.name}: the trolley moves inside the window {start:g}-{end:g} s (up to "
                            f"{np.max(np.abs(v[i:j])):.3g} m/s): forced sway biases the fit")
    if "rope_length_m" in log.columns and np.ptp(log.columns["rope_length_m"][i:j]) > ROPE_STEADY_M:
        log.warnings.append(f"{log.name}: the rope length changes by {np.ptp(log.columns['rope_length_m'][i:j]):.3g}"
                            f" m inside the window {start:g}-{end:g} s: the frequencies move during it")
    return i, j


def _mean_column(log: SwayLog, name: str, i: int, j: int, given: float | None) -> float | None:
    return float(np.mean(log.columns[name][i:j])) if name in log.columns else given


def _merge(candidates: list[IdentifiedMode]) -> list[IdentifiedMode]:
    """One estimate per mode: candidates within 3 % (or 5 sd) are one mode; the smallest sd wins; two at most."""
    groups: list[list[IdentifiedMode]] = []
    for m in sorted(candidates, key=lambda m: m.frequency_hz):
        g = groups[-1] if groups else None
        if g and abs(m.frequency_hz - g[0].frequency_hz) < max(0.03 * g[0].frequency_hz, 5 * g[0].frequency_sd_hz):
            g.append(m)
        else:
            groups.append([m])
    best = [min(g, key=lambda m: m.frequency_sd_hz / m.frequency_hz) for g in groups]
    best = sorted(best, key=lambda m: m.frequency_sd_hz / m.frequency_hz)[:2]
    return sorted(best, key=lambda m: m.frequency_hz)


def _mode_numbers(modes: list[IdentifiedMode], expected: list[float] | None) -> list[int] | None:
    """Each mode's place in the model (1 low, 2 high), nearest predicted frequency on a log scale."""
    if not expected:
        return None
    if len(modes) == len(expected):
        return list(range(1, len(modes) + 1))
    return [1 + int(np.argmin([abs(math.log(m.frequency_hz / f)) for f in expected])) for m in modes]


def _segment(log, i, j, band, rope_length_m, payload_mass_kg) -> Segment | None:
    t = log.time_s[i:j]
    L = _mean_column(log, "rope_length_m", i, j, rope_length_m)
    m = _mean_column(log, "payload_mass_kg", i, j, payload_mass_kg)
    seg = Segment(float(t[0]), float(t[-1]), L, m, [], 0.0)
    candidates = []
    for name in log.signals:
        fit = identify_record(t, log.columns[name][i:j], band)
        if fit is None:
            continue
        seg.fits[name] = (t - t[0], log.columns[name][i:j], fit.fitted)
        seg.fit_rms_ratio = max(seg.fit_rms_ratio, fit.rms_ratio)
        for k in range(fit.frequency_hz.size):
            if fit.amplitude[k] >= MIN_AMPLITUDE_SIGMAS * fit.amplitude_sd[k]:
                candidates.append(IdentifiedMode(*(float(getattr(fit, a)[k]) for a in (
                    "frequency_hz", "frequency_sd_hz", "damping_ratio", "damping_ratio_sd", "amplitude",
                    "amplitude_sd", "phase_rad")), name))
    seg.modes = _merge(candidates)
    return seg if seg.modes else None


def identify_log(log: SwayLog, *, envelope=None, window_s=None, rope_length_m: float | None = None,
                 payload_mass_kg: float | None = None) -> list[Segment]:
    """Identify the modes of every free-sway segment of ``log`` (or of the forced ``window_s``).

    Parameters
    ----------
    log : SwayLog
    envelope : stillhook.model.Envelope, optional
        The project's: narrows the band searched, sets the minimum segment length and numbers the modes.
    window_s : (float, float), optional
        Use this time window only (warnings when the trolley or rope moves in it).
    rope_length_m, payload_mass_kg : float, optional
        For logs without those columns.

    Raises
    ------
    InputFileError
        No segment lasts MIN_PERIODS periods of the lowest mode, or no mode is found.
    """
    windows = [_window(log, window_s)] if window_s is not None else free_sway_windows(log)
    segments, short = [], []
    for i, j in windows:
        L = _mean_column(log, "rope_length_m", i, j, rope_length_m)
        m = _mean_column(log, "payload_mass_kg", i, j, payload_mass_kg)
        expected = expected_modes_hz(envelope, L, m)
        t0, t1 = float(log.time_s[i]), float(log.time_s[j - 1])
        need_s = MIN_PERIODS / min(expected) if expected else None
        if j - i < 8 or (need_s is not None and t1 - t0 < need_s):
            short.append((t1 - t0, t0, t1, need_s, expected))
            continue
        seg = _segment(log, i, j, _band(envelope, expected, log.sample_rate_hz), L, m)
        if seg is None:
            continue
        need_s = MIN_PERIODS / seg.modes[0].frequency_hz
        if t1 - t0 < need_s:
            short.append((t1 - t0, t0, t1, need_s, [seg.modes[0].frequency_hz]))
            continue
        seg.mode_numbers = _mode_numbers(seg.modes, expected)
        seg.notes += _observability(seg, expected, log.signals)
        segments.append(seg)
    if not segments:
        raise InputFileError(_too_short(log, short, window_s is not None))
    return segments


def _observability(seg: Segment, expected: list[float] | None, signals) -> list[str]:
    where = f"segment {seg.start_s:g}-{seg.end_s:g} s ({', '.join(signals)})"
    if expected is None:
        return [] if len(seg.modes) > 1 else [f"{where}: one mode found; a second mode, if the rig has one, is not "
                                              "observable here (not excited, or below the noise)"]
    missing = [k + 1 for k in range(len(expected)) if k + 1 not in seg.mode_numbers]
    return [f"{where}: mode {k} (the project predicts {expected[k - 1]:.3g} Hz) is not observable here: not "
            "excited, or below the noise" for k in missing]


def _too_short(log: SwayLog, short: list, forced: bool) -> str:
    what = "the window" if forced else "no free-sway segment (trolley at rest, rope steady) with sway"
    if not short:
        return f"{log.name}: {what}: no sway mode found above the noise"
    dur, t0, t1, need_s, f = max(short, key=lambda s: s[0])
    if need_s is None:
        return f"{log.name}: {what} is long enough: the longest lasts {dur:.3g} s ({t0:g}-{t1:g} s)"
    return (f"{log.name}: record too short: {'the window' if forced else 'the longest free-sway segment'} lasts "
            f"{dur:.3g} s ({t0:g}-{t1:g} s); resolving the lowest mode (~{min(f):.3g} Hz) needs at least "
            f"{need_s:.3g} s ({MIN_PERIODS:g} periods)")
