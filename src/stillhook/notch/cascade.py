"""The designed notch cascade as an object: SOS, response, residual vibration, filtering, export.

Built by :func:`stillhook.notch.design.design_notches` (see that module for the design equations).

Notes
-----
Residual vibration of a filtered command: the residue of H U P at the plant pole s_p is H(s_p)
times the unfiltered one (derived), so the ratio is |H| at the mode's pole image.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from stillhook.errors import ConfigError
from stillhook.sim.sos_filter import sos_filter

__all__ = ["NotchDesign", "NotchSection", "TAIL_DECAY", "sos_response"]

#: The zero padding after a command lets every filter mode decay to this fraction (see apply()).
TAIL_DECAY = 1e-4


@dataclass(frozen=True)
class NotchSection:
    """One notch of the cascade.

    Attributes
    ----------
    frequency_hz : float
        Notch centre f0 (exact null when depth is infinite).
    pole_damping, zero_damping : float
        zeta_p > zeta_z >= 0 of the continuous prototype.
    width_hz : float
        2 zeta_p f0, the -3 dB width of the infinitely deep notch.
    depth_db : float
        20 log10(zeta_p / zeta_z); ``math.inf`` for a true null.
    band_hz : (float, float)
        The band the notch is meant to cover (the mode's band, or f0 / 1.1 .. 1.1 f0).
    band_worst_residual : float
        Largest |H| of the whole cascade over that band (fraction), on the digital filter.
    """

    frequency_hz: float
    pole_damping: float
    zero_damping: float
    width_hz: float
    depth_db: float
    band_hz: tuple[float, float]
    band_worst_residual: float

    def as_dict(self) -> dict:
        """JSON-ready summary (depth_db None for a true null)."""
        return {
            "frequency_hz": self.frequency_hz,
            "width_hz": self.width_hz,
            "depth_db": self.depth_db if math.isfinite(self.depth_db) else None,
            "pole_damping": self.pole_damping,
            "zero_damping": self.zero_damping,
            "band_hz": list(self.band_hz),
            "band_worst_residual": self.band_worst_residual,
        }


def sos_response(sos: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Product over sections of (b0 + b1 z^-1 + b2 z^-2) / (a0 + a1 z^-1 + a2 z^-2) at complex z."""
    zi = 1.0 / z
    h = np.ones_like(z, dtype=complex)
    for b0, b1, b2, a0, a1, a2 in sos:
        h *= (b0 + b1 * zi + b2 * zi * zi) / (a0 + a1 * zi + a2 * zi * zi)
    return h


@dataclass(frozen=True)
class NotchDesign:
    """A cascade of digital notches at the drive cycle.

    A command filter (:class:`stillhook.sim.command_filter.CommandFilter`): ``apply``,
    ``added_duration_s`` (the ring-out padding), ``mean_delay_s`` (the DC group delay),
    ``residual_vibration``.

    Attributes
    ----------
    sos : ndarray (n, 6)
        Scipy SOS layout [b0, b1, b2, a0, a1, a2], a0 = 1, DC gain exactly 1.
    cycle_s : float
        Sample period (s) = the drive cycle.
    sections : tuple of NotchSection
    tolerance : float
        Residual-sway tolerance (fraction) the widths were chosen for.
    quantization : dict
        ``{"q15": (NotchShift, ...), "q31": (...)}``, see :func:`quantized_notch_shift`.
    post_shift : dict
        ``{"q15": int, "q31": int}`` used for those figures.
    warnings : tuple of str
        Band not covered, notch moved or lost in fixed point, quantized pole on the unit circle.
    """

    sos: np.ndarray
    cycle_s: float
    sections: tuple[NotchSection, ...]
    tolerance: float
    quantization: dict = field(default_factory=dict)
    post_shift: dict = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    @property
    def freqs_hz(self) -> np.ndarray:
        """Notch frequencies (Hz), in cascade order."""
        return np.array([s.frequency_hz for s in self.sections])

    @property
    def max_pole_radius(self) -> float:
        """Largest pole radius of the cascade (< 1)."""
        return float(max(np.max(np.abs(np.roots(row[3:]))) for row in self.sos))

    @property
    def centroid_delay_s(self) -> float:
        """Centroid of the impulse response = group delay at DC (s).

        tau = T sum_sections (sum k b_k / sum b_k - sum k a_k / sum a_k) for H = B(z^-1)/A(z^-1);
        the counterpart of a shaper's sum A_i t_i. Close to sum 2 (zeta_p - zeta_z) / w for f0 << 1/T.
        """
        k = np.arange(3)
        tau = sum(float(row[:3] @ k / row[:3].sum() - row[3:] @ k / row[3:].sum()) for row in self.sos)
        return tau * self.cycle_s

    @property
    def mean_delay_s(self) -> float:
        """The centroid delay (s), command-filter interface."""
        return self.centroid_delay_s

    @property
    def added_duration_s(self) -> float:
        """The zero padding :meth:`apply` adds so the filter rings out (s), command-filter interface."""
        return self.ring_out_samples() * self.cycle_s

    def frequency_response(self, freqs_hz) -> np.ndarray:
        """Complex response H(e^(j 2 pi f T)) of the cascade at frequencies (Hz), vectorized."""
        f = np.asarray(freqs_hz, dtype=float)
        return sos_response(self.sos, np.exp(2j * math.pi * f * self.cycle_s))

    def residual_vibration(self, omega_rad_s, damping_ratio: float = 0.0) -> np.ndarray:
        """Residual sway with the filter as a fraction of that without, for modes at omega (vectorized).

        |H(z_p)| at z_p = exp((-zeta w + j w sqrt(1 - zeta^2)) T), the image of the mode's pole:
        the filter scales the residue at that pole (module Notes). Equals |H| at the mode's
        frequency for an undamped mode; filter transients, which decay, are not included.
        """
        w = np.asarray(omega_rad_s, dtype=float)
        zeta = float(damping_ratio)
        s = -zeta * w + 1j * w * math.sqrt(1.0 - zeta * zeta)
        return np.abs(sos_response(self.sos, np.exp(s * self.cycle_s)))

    def ring_out_samples(self, decay: float = TAIL_DECAY) -> int:
        """Samples for every filter mode to decay to ``decay``: ceil(ln decay / ln r_max)."""
        return max(1, math.ceil(math.log(decay) / math.log(self.max_pole_radius)))

    def apply(self, speed_m_s, cycle_s: float | None = None, *, decay: float = TAIL_DECAY) -> np.ndarray:
        """Filter a sampled speed command (:func:`stillhook.sim.sos_filter.sos_filter`, zero initial state).

        The command is first padded with ``ring_out_samples(decay)`` zeros so the filter rings
        out: after the padding each filter mode has decayed to ``decay`` (default 1e-4) of its
        value when the command ended. The tail left is reported by the comparison as a final
        position error; the speed is not forced to zero.

        Parameters
        ----------
        speed_m_s : array_like, 1-D
            Speed samples (m/s) at the drive cycle.
        cycle_s : float, optional
            The command's sample period (s); it must be the cycle the cascade was designed for.

        Returns
        -------
        ndarray, length len(speed_m_s) + ring_out_samples(decay)
        """
        v = np.asarray(speed_m_s, dtype=float)
        if v.ndim != 1 or len(v) == 0 or not np.all(np.isfinite(v)):
            raise ConfigError("speed_m_s must be a non-empty 1-D sequence of finite speeds (m/s)")
        if cycle_s is not None and not math.isclose(cycle_s, self.cycle_s, rel_tol=1e-9):
            raise ConfigError(f"a speed command sampled every {cycle_s!r} s cannot go through a notch designed "
                              f"for a {self.cycle_s:g} s cycle; allowed: cycle_s = {self.cycle_s:g}")
        if not 0.0 < decay < 1.0:
            raise ConfigError(f"decay = {decay!r} is out of range; allowed: 0 < decay < 1")
        return sos_filter(self.sos, np.concatenate([v, np.zeros(self.ring_out_samples(decay))]))

    def as_dict(self) -> dict:
        """JSON-ready description (deterministic key order)."""
        return {
            "kind": "notch",
            "cycle_s": self.cycle_s,
            "sample_rate_hz": 1.0 / self.cycle_s,
            "sos": [[float(c) for c in row] for row in self.sos],
            "sections": [s.as_dict() for s in self.sections],
            "tolerance": self.tolerance,
            "dc_gain": 1.0,
            "centroid_delay_s": self.centroid_delay_s,
            "ring_out_s": self.ring_out_samples() * self.cycle_s,
            "max_pole_radius": self.max_pole_radius,
            "quantization": {fmt: {"post_shift": self.post_shift[fmt],
                                   "sections": [q.as_dict() for q in shifts]}
                             for fmt, shifts in self.quantization.items()},
            "warnings": list(self.warnings),
        }
