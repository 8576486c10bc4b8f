"""The linearized rig as a python-control StateSpace (kept apart: python-control loads slowly)."""

from __future__ import annotations

import control

__all__ = ["OUTPUT_NAMES", "rig_state_space"]

#: Output names of :func:`rig_state_space`, in order.
OUTPUT_NAMES = ("hook_offset_m", "payload_offset_m", "theta1_rad", "theta2_rad")


def rig_state_space(rig):
    """python-control StateSpace of ``rig`` (a :class:`stillhook.model.rig.Rig`), from its matrices.

    Input: trolley acceleration (m/s^2); outputs :data:`OUTPUT_NAMES`; states as in
    :meth:`stillhook.model.rig.Rig.state_space_matrices`.
    """
    A, B, C, D = rig.state_space_matrices()
    states = (["theta1_rad", "theta1_rad_s"] if rig.is_single_pendulum
              else ["theta1_rad", "theta2_rad", "theta1_rad_s", "theta2_rad_s"])
    return control.ss(A, B, C, D, inputs=["trolley_accel_m_s2"], outputs=list(OUTPUT_NAMES), states=states)
