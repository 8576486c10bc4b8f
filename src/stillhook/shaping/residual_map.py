"""Residual payload sway over the envelope: how much of an unshaped move's sway a shaper leaves.

A step of trolley acceleration a leaves the payload swinging in each mode i with amplitude
|P_i| a, where P_i is the mode's payload participation (m per m/s^2, see
:class:`stillhook.model.rig.Mode`). A shaper multiplies mode i's residual by its V_i = V(w_i, zeta).
The modes have incommensurate frequencies, so over a settling window the peaks of the unshaped
residual approach sum_i |P_i| a, and the shaped residual is at most sum_i |P_i| V_i a. The
ratio used for every envelope check is therefore::

    ratio(L1, m2) = sum_i |P_i| V_i / sum_i |P_i|        (a weighted mean of the V_i)

so keeping every mode's V within the tolerance keeps the ratio within it, and a mode whose
share |P_i| / sum |P| is small may be left untreated if the ratio still holds.

The participations are computed vectorized over the grid from the mode shapes
phi = [g - w^2 L2, w^2 L1] (angle ratio theta2/theta1 = w^2 L1 / (g - w^2 L2)):
modal mass mu = phi^T M phi, step amplitude Gamma = -phi^T b / (mu w^2), payload offset
(L1 phi_1 + L2 phi_2) Gamma. At payload mass 0 the limit of a vanishing payload is used (a light
payload swinging on the rigging below the hook), as in :meth:`Envelope.frequency_map_hz`; this is
the conservative reading (:meth:`stillhook.model.rig.Rig.modes` treats exactly 0 kg as a payload hanging
in line, with no second mode).

Notes
-----
Mode shapes: Kibble & Berkshire, *Classical Mechanics*, 5th ed., Imperial College Press, 2004.
The ratio assumes both modes are excited as by an acceleration step; a move profile that happens
to cancel one mode changes the unshaped reference, not the shaped residual.
"""

from __future__ import annotations

import numpy as np

from stillhook.model.envelope import Envelope
from stillhook.model.rig import mode_frequencies_rad_s
from stillhook.shaping.shaper import Shaper

__all__ = ["mode_shares", "payload_participations", "residual_ratio"]


def payload_participations(envelope: Envelope, rope_lengths_m, payload_masses_kg) -> tuple[np.ndarray, np.ndarray]:
    """Mode frequencies (Hz) and signed payload participations (m per m/s^2) on a grid.

    Parameters
    ----------
    envelope : Envelope
    rope_lengths_m : array (nL,), > 0
    payload_masses_kg : array (nm,), >= 0

    Returns
    -------
    freqs_hz, participation : ndarray, shape (nL, nm, n_modes)
        n_modes = 2 for a two-mode envelope (low first), 1 otherwise. A payload mass of 0 is taken
        as the limit of a vanishing payload.
    """
    g = envelope.gravity_m_s2
    L1 = envelope.pendulum_length_m(np.asarray(rope_lengths_m, dtype=float)[:, None])
    m2 = np.asarray(payload_masses_kg, dtype=float)[None, :]
    L2 = envelope.rigging_length_m
    if not envelope.has_two_modes:
        w = np.sqrt(g / L1) * np.ones_like(m2)
        P = -(L1 + (L2 if envelope.payload_mass_range_kg[1] == 0.0 else 0.0)) / g * np.ones_like(m2)
        return (w / (2 * np.pi))[..., None], P[..., None]
    m1 = envelope.hook_mass_kg
    m2_safe = np.where(m2 > 0.0, m2, 1e-9 * m1)
    w = mode_frequencies_rad_s(m1, m2_safe, L1, L2, g)  # (nL, nm, 2)
    w2 = w * w
    L1b, m2b = L1[..., None], m2_safe[..., None]
    phi1, phi2 = g - w2 * L2, w2 * L1b
    # mu = phi^T M phi with M = [[(m1 + m2) L1^2, m2 L1 L2], [m2 L1 L2, m2 L2^2]]
    mu = (m1 + m2b) * L1b**2 * phi1**2 + 2 * m2b * L1b * L2 * phi1 * phi2 + m2b * L2**2 * phi2**2
    phib = (m1 + m2b) * L1b * phi1 + m2b * L2 * phi2  # phi^T b
    gamma = -phib / (mu * w2)
    P = (L1b * phi1 + L2 * phi2) * gamma
    return w / (2 * np.pi), P


def mode_shares(envelope: Envelope, rope_lengths_m, payload_masses_kg) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies (Hz) and each mode's share |P_i| / sum_j |P_j| of the payload participation."""
    F, P = payload_participations(envelope, rope_lengths_m, payload_masses_kg)
    A = np.abs(P)
    return F, A / A.sum(axis=-1, keepdims=True)


def residual_ratio(envelope: Envelope, shaper: Shaper, rope_lengths_m,
                   payload_masses_kg) -> tuple[np.ndarray, np.ndarray]:
    """Residual payload sway over unshaped, sum_i |P_i| V_i / sum_i |P_i|, on the grid.

    Returns
    -------
    ratio : ndarray (nL, nm)
    contributions : ndarray (nL, nm, n_modes)
        Each mode's term |P_i| V_i / sum_j |P_j| (they add up to ratio).
    """
    F, S = mode_shares(envelope, rope_lengths_m, payload_masses_kg)
    V = shaper.vibration_at_hz(F, envelope.damping_ratio)
    contrib = S * V
    return contrib.sum(axis=-1), contrib
