"""The rigs a sweep runs: rope length and payload mass, and per rig the uncertain parameters when sampled.

Random samples are drawn in one fixed order from one numpy PCG64 stream seeded by the user: all rope
lengths, all payload masses, then each uncertain parameter of the project's ``[uncertainty]`` (hook mass,
rigging length, damping ratio, those with a range wider than one value). A sweep without uncertain
parameters therefore draws exactly the rigs it drew before uncertainty existed, and the draws never depend on
how the sweep is split into chunks or worker processes.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from stillhook.checks import check_quantity
from stillhook.errors import ConfigError
from stillhook.model.uncertainty import UNCERTAIN_PARAMETERS
from stillhook.study.modal_sweep import ModalBatch

__all__ = ["RigSamples", "random_points", "random_rigs"]


@dataclass(frozen=True)
class RigSamples:
    """Paired 1-D arrays of rigs of one envelope.

    Attributes
    ----------
    rope_length_m, payload_mass_kg : ndarray (R,)
        Encoder rope length (m) and payload mass (kg) of every rig.
    varied : dict
        {parameter: ndarray (R,)} for the uncertain parameters sampled per rig (names of
        :data:`stillhook.model.uncertainty.UNCERTAIN_PARAMETERS`); a parameter not in it keeps the
        envelope's (nominal) value at every rig.
    """

    rope_length_m: np.ndarray
    payload_mass_kg: np.ndarray
    varied: dict = field(default_factory=dict)

    @property
    def size(self) -> int:
        return int(self.rope_length_m.size)

    def take(self, index) -> RigSamples:
        """The rigs ``index`` (slice, int array or boolean mask)."""
        return RigSamples(self.rope_length_m[index], self.payload_mass_kg[index],
                          {k: v[index] for k, v in self.varied.items()})

    def join(self, other: RigSamples) -> RigSamples:
        """These rigs followed by ``other``'s (both must vary the same parameters)."""
        if set(self.varied) != set(other.varied):
            raise ConfigError(f"cannot join rigs varying {sorted(self.varied)} and {sorted(other.varied)}; "
                              "allowed: the same uncertain parameters")
        return RigSamples(np.concatenate([self.rope_length_m, other.rope_length_m]),
                          np.concatenate([self.payload_mass_kg, other.payload_mass_kg]),
                          {k: np.concatenate([v, other.varied[k]]) for k, v in self.varied.items()})

    def modal_batch(self, envelope) -> ModalBatch:
        """Modes of these rigs (each with its own hook mass, rigging length and damping where varied)."""
        return ModalBatch.from_envelope(envelope, self.rope_length_m, self.payload_mass_kg, **self.varied)

    def parameters(self, envelope, n: int) -> dict:
        """Every parameter of rig ``n``: rope length, payload mass and the three uncertain ones (floats)."""
        out = {"rope_length_m": float(self.rope_length_m[n]), "payload_mass_kg": float(self.payload_mass_kg[n])}
        for key in UNCERTAIN_PARAMETERS:
            out[key] = float(self.varied[key][n]) if key in self.varied else float(getattr(envelope, key))
        return out

    def rig(self, envelope, n: int):
        """The :class:`stillhook.model.rig.Rig` of rig ``n`` (for the nonlinear simulator)."""
        p = self.parameters(envelope, n)
        return envelope.rig(p["rope_length_m"], p["payload_mass_kg"], hook_mass_kg=p["hook_mass_kg"],
                            rigging_length_m=p["rigging_length_m"], damping_ratio=p["damping_ratio"])


def _uniform(rng: np.random.Generator, lo: float, hi: float, n: int) -> np.ndarray:
    return rng.uniform(lo, hi, n) if hi > lo else np.full(n, lo)


def random_points(envelope, n: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """``n`` rigs drawn uniformly over the envelope's rectangle (numpy PCG64, fixed ``seed``)."""
    rigs = random_rigs(envelope, n, seed)
    return rigs.rope_length_m, rigs.payload_mass_kg


def random_rigs(envelope, n: int, seed: int = 0, uncertainty=None) -> RigSamples:
    """``n`` rigs drawn uniformly over the envelope and over the uncertain parameters' ranges.

    Parameters
    ----------
    envelope : stillhook.model.envelope.Envelope
    n : int in [1, 10^6]
    seed : int in [0, 2^32 - 1]
    uncertainty : stillhook.model.uncertainty.RigUncertainty, optional
        Ranges of hook mass, rigging length and damping ratio; None keeps the envelope's values.

    Returns
    -------
    RigSamples
        Same ``seed``, same rigs (module docstring gives the order of the draws).
    """
    n = check_quantity("random_rigs", n, name="number of samples")
    rng = np.random.default_rng(check_quantity("seed", seed))
    (L0, L1), (m0, m1) = envelope.rope_length_range_m, envelope.payload_mass_range_kg
    L, m = _uniform(rng, L0, L1, n), _uniform(rng, m0, m1, n)
    return RigSamples(L, m, {} if uncertainty is None else uncertainty.sample(rng, n))
