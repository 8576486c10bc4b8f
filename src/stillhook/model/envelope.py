"""Operating envelope: the rope-length and payload-mass ranges a rig works over.

The two sway frequencies move as the hoist pays out rope and as payloads change; a filter
tuned to one point must hold over the whole envelope. This module maps both modes over a
grid of (rope length, payload mass) and gives each mode's band (lowest, highest frequency).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.checks import check_quantity
from stillhook.errors import RigError
from stillhook.model.rig import DEFAULT_DAMPING_RATIO, STANDARD_GRAVITY_M_S2, Rig, mode_frequencies_rad_s

__all__ = ["Envelope", "MIN_BAND_EDGE_RATIO"]


#: Narrowest band a design covers, as the ratio of its upper edge to its centre (common practice, no source:
#: +-10 % of frequency is about +-20 % of rope length).
MIN_BAND_EDGE_RATIO = 1.1


@dataclass(frozen=True)
class Envelope:
    """A rig over its operating envelope.

    Parameters
    ----------
    hook_mass_kg : float > 0
    rigging_length_m : float >= 0
    rope_length_range_m : (float, float), 0 < lo <= hi
        Hoist rope length range L1 (trolley to hook).
    payload_mass_range_kg : (float, float), 0 <= lo <= hi
    damping_ratio : float in [0, 1)
    gravity_m_s2 : float > 0
    nominal_rope_length_m, nominal_payload_mass_kg : float or None
        The design/demo point; default the middle of each range.
    rope_offset_m : float, default 0
        Pendulum length minus the hoist encoder's rope length (sheaves, hook block geometry):
        L1 = rope_length_m + rope_offset_m. Rope lengths everywhere else (ranges, schedule rows,
        emitted tables) are the encoder's; :meth:`pendulum_length_m` is the one place the offset is added.
    """

    hook_mass_kg: float
    rigging_length_m: float
    rope_length_range_m: tuple[float, float]
    payload_mass_range_kg: tuple[float, float]
    damping_ratio: float = DEFAULT_DAMPING_RATIO
    gravity_m_s2: float = STANDARD_GRAVITY_M_S2
    nominal_rope_length_m: float | None = None
    nominal_payload_mass_kg: float | None = None
    rope_offset_m: float = 0.0

    def __post_init__(self) -> None:
        for name in ("rope_length_range_m", "payload_mass_range_kg"):
            quantity = name.replace("_range", "")
            lo, hi = (check_quantity(quantity, v, name=name, error=RigError) for v in getattr(self, name))
            if lo > hi:
                raise RigError(f"{name} = [{lo:g}, {hi:g}] has min > max; allowed: min <= max")
            object.__setattr__(self, name, (lo, hi))
        object.__setattr__(self, "rope_offset_m", check_quantity("rope_offset_m", self.rope_offset_m, error=RigError))
        if self.rope_length_range_m[0] + self.rope_offset_m <= 0.0:
            raise RigError(f"rope_offset_m = {self.rope_offset_m:g} makes the pendulum length at the shortest rope "
                           f"({self.rope_length_range_m[0]:g} m) not positive; allowed: rope length + offset > 0")
        # validate every corner through Rig (masses, lengths, damping, gravity)
        for L in self.rope_length_range_m:
            for m in self.payload_mass_range_kg:
                self.rig(L, m)
        if self.nominal_rope_length_m is None:
            object.__setattr__(self, "nominal_rope_length_m", 0.5 * sum(self.rope_length_range_m))
        if self.nominal_payload_mass_kg is None:
            object.__setattr__(self, "nominal_payload_mass_kg", 0.5 * sum(self.payload_mass_range_kg))
        for name, rng in (("nominal_rope_length_m", self.rope_length_range_m),
                          ("nominal_payload_mass_kg", self.payload_mass_range_kg)):
            v = float(getattr(self, name))
            if not (rng[0] <= v <= rng[1]):
                raise RigError(f"{name} = {v:g} is outside its range [{rng[0]:g}, {rng[1]:g}]; "
                               "allowed: a value inside the range")
            object.__setattr__(self, name, v)

    # -- points --------------------------------------------------------------------------
    def pendulum_length_m(self, rope_length_m):
        """Pendulum length L1 (trolley to hook) of an encoder rope length: L1 = rope_length_m + rope_offset_m.

        Every model quantity of the envelope (rigs, frequency maps, residual maps, sweeps) goes through
        this; the rope lengths the user and the drive see stay the encoder's.
        """
        return rope_length_m + self.rope_offset_m

    def rig(self, rope_length_m: float, payload_mass_kg: float, *, hook_mass_kg: float | None = None,
            rigging_length_m: float | None = None, damping_ratio: float | None = None) -> Rig:
        """The rig at one point of the envelope (``rope_length_m`` as the encoder reads it).

        ``hook_mass_kg``, ``rigging_length_m`` and ``damping_ratio`` replace the envelope's values for this rig
        (one sample of an uncertainty study); None keeps the envelope's.
        """
        return Rig(self.hook_mass_kg if hook_mass_kg is None else hook_mass_kg, payload_mass_kg,
                   self.pendulum_length_m(rope_length_m),
                   self.rigging_length_m if rigging_length_m is None else rigging_length_m,
                   self.gravity_m_s2, self.damping_ratio if damping_ratio is None else damping_ratio)

    @property
    def nominal_rig(self) -> Rig:
        """The rig at the nominal rope length and payload mass."""
        return self.rig(self.nominal_rope_length_m, self.nominal_payload_mass_kg)

    @property
    def has_two_modes(self) -> bool:
        """False when the rigging length is 0 or the payload range is [0, 0]."""
        return self.rigging_length_m > 0.0 and self.payload_mass_range_kg[1] > 0.0

    def grid(self, n_rope: int = 41, n_payload: int = 41) -> tuple[np.ndarray, np.ndarray]:
        """Evenly spaced rope lengths (m) and payload masses (kg) spanning the envelope."""
        if n_rope < 1 or n_payload < 1:
            raise RigError(f"grid size ({n_rope}, {n_payload}) is out of range; allowed: >= 1 each")
        (L_lo, L_hi), (m_lo, m_hi) = self.rope_length_range_m, self.payload_mass_range_kg
        return np.linspace(L_lo, L_hi, n_rope), np.linspace(m_lo, m_hi, n_payload)

    def corners(self) -> list[tuple[float, float]]:
        """The envelope's distinct corners (rope length m, payload mass kg), rope-major."""
        out = []
        for L in self.rope_length_range_m:
            for m in self.payload_mass_range_kg:
                if (L, m) not in out:
                    out.append((L, m))
        return out

    # -- maps and bands --------------------------------------------------------------------
    def frequency_map_hz(self, rope_lengths_m, payload_masses_kg) -> np.ndarray:
        """Mode frequencies (Hz) on the grid rope_lengths x payload_masses.

        Returns
        -------
        ndarray, shape (len(rope_lengths_m), len(payload_masses_kg), n_modes)
            n_modes is 2 for a two-mode envelope, 1 otherwise (single pendulum sqrt(g/L1)).
        """
        L = self.pendulum_length_m(np.asarray(rope_lengths_m, dtype=float)[:, None])
        m = np.asarray(payload_masses_kg, dtype=float)[None, :]
        if not self.has_two_modes:
            w = np.sqrt(self.gravity_m_s2 / L) * np.ones_like(m)
            return (w / (2 * np.pi))[..., None]
        w = mode_frequencies_rad_s(self.hook_mass_kg, m, L, self.rigging_length_m, self.gravity_m_s2)
        return w / (2 * np.pi)

    def mode_bands_hz(self, n_rope: int = 61, n_payload: int = 61) -> list[tuple[float, float]]:
        """Each mode's (lowest, highest) frequency in Hz over the envelope, low mode first.

        Evaluated on a dense grid that includes the corners (both frequencies fall as L1 grows;
        as R = m2/m1 grows the low mode falls toward sqrt(g/(L1 + L2)) and the high mode rises).
        """
        F = self.frequency_map_hz(*self.grid(n_rope, n_payload))
        return [(float(F[..., i].min()), float(F[..., i].max())) for i in range(F.shape[-1])]

    def design_bands_hz(self, n_rope: int = 61, n_payload: int = 61, *,
                        min_edge_ratio: float = MIN_BAND_EDGE_RATIO) -> list[tuple[float, float]]:
        """The bands every design covers: each mode's band joined with [c / r, c r] around its geometric centre c.

        r = ``min_edge_ratio``, default :data:`MIN_BAND_EDGE_RATIO` (1.1, about +-10 %): a narrow or one-point
        envelope still gets a band for the uncertainty of the model (rope stretch, the payload's centre of
        mass), the same in the shaper design, the notch and the comparison.
        """
        out = []
        for lo, hi in self.mode_bands_hz(n_rope, n_payload):
            c = math.sqrt(lo * hi)
            out.append((min(lo, c / min_edge_ratio), max(hi, c * min_edge_ratio)))
        return out

    def describe(self) -> dict:
        """JSON-ready summary of the envelope."""
        return {
            "hook_mass_kg": self.hook_mass_kg,
            "rigging_length_m": self.rigging_length_m,
            "rope_length_range_m": list(self.rope_length_range_m),
            "payload_mass_range_kg": list(self.payload_mass_range_kg),
            "damping_ratio": self.damping_ratio,
            "gravity_m_s2": self.gravity_m_s2,
            "nominal_rope_length_m": self.nominal_rope_length_m,
            "nominal_payload_mass_kg": self.nominal_payload_mass_kg,
            "rope_offset_m": self.rope_offset_m,
        }
