"""The design plant of the feedback controller: the two-mode rig behind the drive's speed loop, sampled.

Continuous model (states of :meth:`stillhook.model.rig.Rig.state_space_matrices` plus the trolley)::

    x_rig' = A_rig x_rig + B_rig a            a = (u - v) / tau      (speed loop: first-order lag)
    v'     = (u - v) / tau
    p'     = v                                 (trolley position)

u is the speed command the drive receives (m/s), v the trolley speed, p its position, tau the speed
loop's time constant (``[drive] speed_loop_time_constant_s``). The sensor reads one row of the rig's
output matrix (``[sensor] kind``) ``d`` drive cycles late.

Discretization: zero-order hold at the drive cycle T. The drive holds each speed command for one
cycle, so the held input is exact: x[k+1] = Phi x[k] + Gamma u[k] with Phi = e^(A T),
Gamma = int_0^T e^(A s) ds B, both from one matrix exponential of [[A, B], [0, 0]] T. Tustin would
approximate a held input as a trapezoid and warp frequencies; it suits filters, not a sampled drive.

Notes
-----
Zero-order-hold sampling of a state-space model: Franklin, Powell & Workman, *Digital Control of
Dynamic Systems*, 3rd ed., 1998, ch. 4 (from memory); the block-exponential identity is Van Loan,
"Computing integrals involving the matrix exponential", IEEE Trans. Autom. Control 23(3):395-404,
1978 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import expm

from stillhook.model.rig import Rig
from stillhook.model.sensors import SENSOR_ROWS

__all__ = ["DesignPlant", "design_plant", "sampled", "sensor_row"]



def sampled(A: np.ndarray, B: np.ndarray, cycle_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Zero-order-hold sampling: (Phi, Gamma) = blocks of expm([[A, B], [0, 0]] T)."""
    n, m = B.shape
    big = np.zeros((n + m, n + m))
    big[:n, :n], big[:n, n:] = A, B
    E = expm(big * cycle_s)
    return E[:n, :n], E[:n, n:]


def sensor_row(rig: Rig, kind: str) -> np.ndarray:
    """The row c (1 x n_rig) with sensor reading = c x_rig, linearized (m or rad)."""
    _A, _B, C, _D = rig.state_space_matrices()
    return C[SENSOR_ROWS[kind]].reshape(1, -1)


@dataclass(frozen=True, eq=False)
class DesignPlant:
    """The sampled plant at one rig.

    Attributes
    ----------
    n_rig : int
        Rig states (4, or 2 for a single pendulum): [angles, angle rates].
    Phi, Gamma : ndarray
        Sampled model of x = [x_rig, v, p] (n_rig + 2 states), input u (speed command, m/s).
    C_sensor : ndarray (1, n_rig + 2)
        Sensor row (undelayed).
    C_offsets : ndarray (2, n_rig + 2)
        Hook and payload offsets from the trolley (m), for the design cost.
    G : ndarray (n_rig + 2, 1)
        How a horizontal acceleration disturbance of the load (m/s^2, held over a cycle) enters:
        like a trolley acceleration of opposite sign, on the rig states only.
    """

    rig: Rig
    cycle_s: float
    tau_s: float
    n_rig: int
    Phi: np.ndarray
    Gamma: np.ndarray
    C_sensor: np.ndarray
    C_offsets: np.ndarray
    G: np.ndarray


def design_plant(rig: Rig, cycle_s: float, tau_s: float, sensor_kind: str) -> DesignPlant:
    """Sample the rig behind the speed loop (module docstring) at the drive cycle.

    Parameters
    ----------
    rig : Rig
    cycle_s : float > 0
        Drive cycle T (s).
    tau_s : float > 0
        Speed-loop time constant (s).
    sensor_kind : one of :data:`SENSOR_KINDS`
    """
    A_r, B_r, C_r, _ = rig.state_space_matrices()
    n = A_r.shape[0]
    A = np.zeros((n + 2, n + 2))
    A[:n, :n] = A_r
    A[:n, n] = -B_r[:, 0] / tau_s          # a = (u - v) / tau drives the rig
    A[n, n] = -1.0 / tau_s
    A[n + 1, n] = 1.0
    B = np.zeros((n + 2, 1))
    B[:n, 0] = B_r[:, 0] / tau_s
    B[n, 0] = 1.0 / tau_s
    Gd = np.zeros((n + 2, 1))
    Gd[:n] = -B_r                          # disturbance acceleration w acts as a trolley acceleration -w
    Phi, both = sampled(A, np.hstack([B, Gd]), cycle_s)  # one exponential for both held inputs
    Gamma, G = both[:, :1], both[:, 1:]
    C_s = np.zeros((1, n + 2))
    C_s[0, :n] = C_r[SENSOR_ROWS[sensor_kind]]
    C_o = np.zeros((2, n + 2))
    C_o[:, :n] = C_r[0:2]
    return DesignPlant(rig, float(cycle_s), float(tau_s), n, Phi, Gamma, C_s, C_o, G)
