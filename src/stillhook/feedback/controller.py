"""The float per-cycle feedback controller: the reference the fixed-point runtime must follow.

Each drive cycle, given the sensor reading y, the measured rope length L and the operator's (shaped)
speed command r::

    k     = row for L (the one schedule rule; states carry over a switch: they are physical quantities)
    o_c   = o + M_k (y - C_k o)                         current estimate
    du    = -K_k [S o_c, d]                              S picks the rig states; d = [dv, dp]
    u     = clip(r + du, +-v_max, v^ +- a_max tau)       speed and acceleration limits
    o     = A_k o_c + B_k u,   d = D d + D_b (u - r)     both fed the APPLIED command (anti-windup)

After a shaper (``follow_reference``) the gain acts on the sway's deviation from a reference model,
s = S o_c - x_r with x_r = A_k x_r + B_k r the row's model of the rig and drive driven by the shaped
command alone: the shaper cancels the sway its own command causes, and the feedback damps the rest
(a released load, a gust, a model that is off) instead of fighting the shaped move's planned sway.
Without a shaper the reference model would ring at the open-loop damping, so there the gain acts on
the estimated sway itself (x_r = 0).

v^ is the estimated trolley speed. Feeding the observer and the correction's drive model the command
the drive really got keeps every state true to the plant when a limit cuts the correction, so nothing
winds up and the position return dp ends at the reference path.

Notes
-----
Anti-windup by feeding the limited input to the observer: Astrom & Wittenmark, *Computer-Controlled
Systems*, 3rd ed., 1997, actuator saturation (from memory).
"""

from __future__ import annotations

import numpy as np

from stillhook.feedback.design import FeedbackDesign

__all__ = ["FeedbackController"]


class FeedbackController:
    """Per-cycle float controller of a :class:`FeedbackDesign` (module docstring).

    Call :meth:`step` once per drive cycle. ``enabled = False`` passes the reference through
    (the fault path: shaper alone) while the observer keeps tracking the applied command.
    """

    def __init__(self, design: FeedbackDesign, follow_reference: bool = False):
        self.design = design
        self.follow_reference = bool(follow_reference)
        self.n = design.rows[0].plant.n_rig
        self.reset()

    def reset(self) -> None:
        self.o = np.zeros(self.design.rows[0].A_o.shape[0])
        self.d = np.zeros(2)
        self.x_r = np.zeros(self.n + 1)
        self.row = None

    def step(self, y: float, rope_length_m: float, reference_m_s: float, enabled: bool = True) -> float:
        """The speed command (m/s) for this cycle."""
        des = self.design
        k = des.row_for(rope_length_m)
        self.row = k
        row = des.rows[k]
        o_c = self.o + row.M[:, 0] * (y - float(row.C_o[0] @ self.o))
        n = self.n
        du = -float(row.K[0, :n] @ (o_c[:n] - self.x_r[:n]) + row.K[0, n:] @ self.d) if enabled else 0.0
        v_hat = o_c[n]
        room = des.max_accel_m_s2 * des.tau_s
        u = reference_m_s + du
        u = min(max(u, v_hat - room, -des.max_speed_m_s), v_hat + room, des.max_speed_m_s)
        if not enabled:
            u = reference_m_s
        self.o = row.A_o @ o_c + row.B_o[:, 0] * u
        self.d = des.D_drive @ self.d + des.Db_drive[:, 0] * (u - reference_m_s)
        if self.follow_reference:
            self.x_r = row.A_o[: n + 1, : n + 1] @ self.x_r + row.B_o[: n + 1, 0] * reference_m_s
        return u
