"""Sway sensor kinds: what a sensor on the hook block, the rope or a camera target reads.

The names are those of the commissioning logs. Each reads one row of the rig's linear output matrix
(:meth:`stillhook.model.rig.Rig.state_space_matrices`): offsets are horizontal, from the trolley.
"""

from __future__ import annotations

__all__ = ["SENSOR_KINDS", "SENSOR_ROWS"]

#: Sensor kind -> row of the rig's output matrix [hook offset, payload offset, theta1, theta2].
SENSOR_ROWS = {"hook_angle_rad": 2, "payload_angle_rad": 3, "hook_offset_m": 0, "payload_offset_m": 1}
#: The kinds, in the order outputs list them.
SENSOR_KINDS = tuple(SENSOR_ROWS)
