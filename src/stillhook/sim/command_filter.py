"""The command-filter interface: what the study and the report ask of anything that reshapes a speed command.

A command filter sits between the operator's (or the motion planner's) trolley speed command and the
drive. Input shapers (:class:`stillhook.shaping.shaper.Shaper`) and notch cascades
(:class:`stillhook.notch.cascade.NotchDesign`) are command filters; :data:`UNFILTERED` is the identity
(the raw command). Code that compares or sweeps filters uses only this interface, so it never asks
which kind it holds, and a new kind (a feedback controller seen from its speed reference, a PLC
target's filter) joins every study by implementing the four members below.

Interface (all times in seconds, the command sampled every drive cycle T)::

    y = f.apply(v, T)                      filtered command, len(y) = len(v) + added_duration_s / T
    f.added_duration_s                     how much longer the filtered command runs (s, >= 0)
    f.mean_delay_s                         centroid of the filter's impulse response (s):
                                           sum_k k T h[k] / sum_k h[k] (sum A_i t_i for a shaper)
    f.residual_vibration(omega, zeta)      residual sway of a mode (omega rad/s, damping ratio zeta)
                                           with the filter, as a fraction of that without

For a shaper the residual vibration is V(w, zeta) of Singer & Seering; for a linear time-invariant
filter H it is |H| at the image of the mode's pole s_p = -zeta w + j w sqrt(1 - zeta^2) (the filter
scales the residue at that pole); a feedback controller states its ratio from its closed loop on its
design model. The filters are causal and keep the command's end position (unity DC gain) up to a
tail they report through the trolley's final position, not through this interface.

Notes
-----
Input shaping and digital filtering as command filters compared on these measures: Singhose &
Vaughan, "Reducing vibration by digital filtering and input shaping", IEEE Trans. Control Systems
Technology 19(6):1410-1420, 2011 (from memory).
"""

from __future__ import annotations

from typing import Protocol, runtime_checkable

import numpy as np

__all__ = ["CommandFilter", "UNFILTERED", "Unfiltered"]


@runtime_checkable
class CommandFilter(Protocol):
    """Anything that turns a sampled speed command into the command the drive receives (module docstring)."""

    @property
    def added_duration_s(self) -> float:
        """How much longer the filtered command is than the input (s, >= 0)."""
        ...

    @property
    def mean_delay_s(self) -> float:
        """Centroid (mean delay) of the filter's impulse response (s)."""
        ...

    def apply(self, speed_m_s, cycle_s: float) -> np.ndarray:
        """The filtered speed samples (m/s) at the drive cycle ``cycle_s`` (s)."""
        ...

    def residual_vibration(self, omega_rad_s, damping_ratio: float = 0.0) -> np.ndarray:
        """Residual sway with the filter over without, for modes at ``omega_rad_s`` (vectorized)."""
        ...


class Unfiltered:
    """The identity command filter: the raw command, no delay, the full residual sway."""

    added_duration_s = 0.0
    mean_delay_s = 0.0

    def apply(self, speed_m_s, cycle_s: float) -> np.ndarray:
        """The command itself (as a float array)."""
        return np.asarray(speed_m_s, dtype=float)

    def residual_vibration(self, omega_rad_s, damping_ratio: float = 0.0) -> np.ndarray:
        """1 at every frequency."""
        return np.ones_like(np.asarray(omega_rad_s, dtype=float))


#: The one identity filter.
UNFILTERED = Unfiltered()
