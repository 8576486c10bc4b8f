"""Sway modes of many rigs at once: the one vectorized modal decomposition.

For arrays of rigs (hook mass m1, payload mass m2, rope length L1, rigging length L2) this gives
each mode's frequency and how much a step of trolley acceleration excites the hook and the payload,
the same quantities :meth:`stillhook.model.rig.Rig.modes` gives for one rig, without an
eigen-solver per rig. The design's residual map (:mod:`stillhook.shaping.residual_map`) and the
envelope sweep (:mod:`stillhook.study.modal_sweep`) both use it.

Two-mode rig (m2 > 0 and L2 > 0): frequencies from the frequency equation
(:func:`stillhook.model.rig.mode_frequencies_rad_s`); mode shape from the second row of
(K - w^2 M) phi = 0, scaled to stay finite as m2 -> 0,

    phi = [g - w^2 L2, w^2 L1]                     (theta2 / theta1 = w^2 L1 / (g - w^2 L2))

modal mass mu = phi^T M phi, forcing phi^T b, and for a unit step of trolley acceleration from rest
the modal amplitude Gamma = -phi^T b / (mu w^2), so the mode leaves the hook swinging with
amplitude H = L1 phi_1 Gamma and the payload with P = (L1 phi_1 + L2 phi_2) Gamma (m per m/s^2).

Single pendulum (m2 = 0 or L2 = 0): one mode, w^2 = g / L1, H = -L1 / g; the payload is at the hook
(L2 = 0) or, with no payload mass, hangs in line with the rope, P = -(L1 + L2) / g -- exactly as
:class:`stillhook.model.rig.Rig` treats it (a massless payload has no mode of its own). The second
column then repeats the first frequency with zero participation.

Static check (physical law): the modes' static offsets add up to the quasi-static lean,
sum_i H_i = -L1 / g and sum_i P_i = -(L1 + L2) / g.

Notes
-----
Frequency equation and mode shapes: Kibble & Berkshire, *Classical Mechanics*, 5th ed., Imperial
College Press, 2004 (normal modes of the double pendulum). Modal participation of a base
acceleration: the modal-superposition method of any structural dynamics text, e.g. Chopra,
*Dynamics of Structures*, 4th ed., Prentice Hall, 2012, ch. 13 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from stillhook.model.rig import STANDARD_GRAVITY_M_S2, mode_frequencies_rad_s

__all__ = ["BatchModes", "batch_modes"]


@dataclass(frozen=True)
class BatchModes:
    """Modes of a batch of rigs (arrays of shape ``batch + (2,)``, low mode first).

    Attributes
    ----------
    omega_rad_s : ndarray
        Undamped mode frequencies w_i (rad/s).
    payload_participation_m_per_m_s2, hook_participation_m_per_m_s2 : ndarray
        P_i and H_i of the module docstring: amplitude of payload and hook offset that a unit
        step of trolley acceleration leaves in each mode (signed; 0 for the absent second mode
        of a single pendulum).
    two_modes : ndarray of bool, shape ``batch``
        True where the rig is a double pendulum.
    """

    omega_rad_s: np.ndarray
    payload_participation_m_per_m_s2: np.ndarray
    hook_participation_m_per_m_s2: np.ndarray
    two_modes: np.ndarray

    @property
    def frequency_hz(self) -> np.ndarray:
        """w_i / (2 pi) (Hz)."""
        return self.omega_rad_s / (2 * np.pi)


def batch_modes(hook_mass_kg, payload_mass_kg, rope_length_m, rigging_length_m,
                gravity_m_s2: float = STANDARD_GRAVITY_M_S2) -> BatchModes:
    """Modes of every rig of a batch (module docstring), vectorized.

    Parameters
    ----------
    hook_mass_kg : float > 0 or array_like
    payload_mass_kg : array_like, >= 0
    rope_length_m : array_like, > 0
    rigging_length_m : float >= 0 or array_like
        All four broadcast together to the batch shape (e.g. ``L[:, None]`` and ``m[None, :]`` for a
        grid, or paired 1-D arrays; hook mass and rigging length per rig for uncertainty studies).
    gravity_m_s2 : float > 0

    Returns
    -------
    BatchModes
    """
    g = float(gravity_m_s2)
    m1, m2, L1, L2 = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                           (hook_mass_kg, payload_mass_kg, rope_length_m, rigging_length_m)))
    two = (m2 > 0.0) & (L2 > 0.0)
    # single pendulum: w^2 = g / L1; a massless payload hangs in line with the rope
    w_single = np.sqrt(g / L1)
    w = np.stack([w_single, w_single], axis=-1)
    P = np.zeros(w.shape)
    H = np.zeros(w.shape)
    P[..., 0] = -(L1 + np.where(m2 == 0.0, L2, 0.0)) / g
    H[..., 0] = -L1 / g
    if np.any(two):
        w2m, Pm, Hm = _double_pendulum(m1[two], m2[two], L1[two], L2[two], g)
        w[two], P[two], H[two] = w2m, Pm, Hm
    return BatchModes(w, P, H, two)


def _double_pendulum(m1: np.ndarray, m2: np.ndarray, L1: np.ndarray, L2: np.ndarray, g: float):
    """(w, P, H), each (n, 2), for paired 1-D arrays of double-pendulum rigs (module docstring)."""
    w = mode_frequencies_rad_s(m1, m2, L1, L2, g)  # (n, 2)
    w2 = w * w
    m1b, m2b, L1b, L2b = m1[..., None], m2[..., None], L1[..., None], L2[..., None]
    phi1, phi2 = g - w2 * L2b, w2 * L1b
    # mu = phi^T M phi with M = [[(m1 + m2) L1^2, m2 L1 L2], [m2 L1 L2, m2 L2^2]]; phi^T b, b = [(m1 + m2) L1, m2 L2]
    mu = (m1b + m2b) * L1b**2 * phi1**2 + 2 * m2b * L1b * L2b * phi1 * phi2 + m2b * L2b**2 * phi2**2
    phib = (m1b + m2b) * L1b * phi1 + m2b * L2b * phi2
    gamma = -phib / (mu * w2)
    return w, (L1b * phi1 + L2b * phi2) * gamma, L1b * phi1 * gamma
