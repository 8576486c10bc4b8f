"""Uncertain rig parameters: the ranges hook mass, rigging length and damping ratio may take.

The design is made for the nominal rig (``[rig]`` values); an uncertainty study (the sweep's random
samples) draws these parameters uniformly over their ranges together with rope length and payload
mass, to show how much of the real crane the design still covers when the rig is not known exactly.
A range [v, v] at the nominal value v means the parameter is taken as known.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from stillhook.checks import check_quantity
from stillhook.errors import ConfigError

__all__ = ["UNCERTAIN_PARAMETERS", "RigUncertainty"]

#: The rig parameters an uncertainty study varies, in sampling order (the order fixes the random stream).
UNCERTAIN_PARAMETERS = ("hook_mass_kg", "rigging_length_m", "damping_ratio")


@dataclass(frozen=True)
class RigUncertainty:
    """Ranges of the uncertain rig parameters around their nominal values.

    Parameters
    ----------
    nominal : dict
        {parameter: value} for every name of :data:`UNCERTAIN_PARAMETERS` (the ``[rig]`` values).
    ranges : dict
        {parameter: (lo, hi)}; a missing parameter is known exactly (range [nominal, nominal]). Each range
        lies within the parameter's ``checks.LIMITS`` and contains the nominal value.
    sources : dict
        {parameter: text} where each range comes from (e.g. ``"[uncertainty] hook_mass_kg"``).
    """

    nominal: dict
    ranges: dict = field(default_factory=dict)
    sources: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        full = {}
        for key in UNCERTAIN_PARAMETERS:
            v = float(self.nominal[key])
            lo, hi = (check_quantity(key, x, name=self.sources.get(key, key)) for x in self.ranges.get(key, (v, v)))
            if not lo <= v <= hi:
                raise ConfigError(f"{self.sources.get(key, key)} = [{lo:g}, {hi:g}] does not contain the nominal "
                                  f"[rig] {key} = {v:g}; allowed: [min, max] with min <= {v:g} <= max")
            full[key] = (lo, hi)
        object.__setattr__(self, "ranges", full)
        object.__setattr__(self, "nominal", {k: float(self.nominal[k]) for k in UNCERTAIN_PARAMETERS})

    @property
    def uncertain(self) -> tuple[str, ...]:
        """The parameters whose range is wider than one value, in sampling order."""
        return tuple(k for k in UNCERTAIN_PARAMETERS if self.ranges[k][0] < self.ranges[k][1])

    def sample(self, rng: np.random.Generator, n: int) -> dict:
        """{parameter: ndarray (n,)} drawn uniformly over each uncertain range, in :data:`UNCERTAIN_PARAMETERS`
        order from ``rng``; parameters known exactly are left out (they keep their nominal value)."""
        return {k: rng.uniform(*self.ranges[k], n) for k in self.uncertain}

    def describe(self) -> dict:
        """JSON-ready: nominal value, range and source of every uncertain parameter."""
        return {k: {"nominal": self.nominal[k], "range": list(self.ranges[k]), "source": self.sources.get(k, "")}
                for k in self.uncertain}
