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

The participations come vectorized over the grid from the one batch decomposition,
:func:`stillhook.model.modal_batch.batch_modes`. A payload mass of exactly 0 is a single pendulum
with the (massless) payload in line with the rope, one mode, as :class:`stillhook.model.rig.Rig`
treats it; its second mode has no share.

Notes
-----
Mode shapes: Kibble & Berkshire, *Classical Mechanics*, 5th ed., Imperial College Press, 2004.
The ratio assumes both modes are excited as by an acceleration step; a move profile that happens
to cancel one mode changes the unshaped reference, not the shaped residual.
"""

from __future__ import annotations

import numpy as np

from stillhook.model.envelope import Envelope
from stillhook.model.modal_batch import batch_modes
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
        n_modes = 2 for a two-mode envelope (low first), 1 otherwise. At a payload mass of 0 the
        second mode's participation is 0 (a single pendulum, payload in line).
    """
    L1 = envelope.pendulum_length_m(np.asarray(rope_lengths_m, dtype=float)[:, None])  # encoder -> pendulum
    m2 = np.asarray(payload_masses_kg, dtype=float)[None, :]
    modes = batch_modes(envelope.hook_mass_kg, m2, L1, envelope.rigging_length_m, envelope.gravity_m_s2)
    n_modes = 2 if envelope.has_two_modes else 1
    return modes.frequency_hz[..., :n_modes], modes.payload_participation_m_per_m_s2[..., :n_modes]


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
