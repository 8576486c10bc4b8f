"""Rig model: the hook-and-payload double pendulum under a trolley, linearized.

Coordinates: theta1 is the hoist rope's angle from vertical (trolley to hook, length L1),
theta2 the rigging's angle (hook to payload centre of mass, length L2). Horizontal offsets
from the trolley: hook x1 = L1 sin(theta1), payload x2 = x1 + L2 sin(theta2). The input is the
trolley acceleration a (m/s^2), positive in +x.

Linearized equations (small angles, prescribed trolley motion, constant L1)::

    M q'' + C q' + K q = -b a,     q = [theta1, theta2]

    M = [[(m1 + m2) L1^2, m2 L1 L2],     K = [[(m1 + m2) g L1, 0       ],
         [m2 L1 L2,       m2 L2^2  ]]         [0,              m2 g L2 ]]

    b = [(m1 + m2) L1, m2 L2]

The modes solve the symmetric generalized eigenproblem K phi = w^2 M phi (reduced to a standard one by
the Cholesky factor M = G G^T: (G^-1 K G^-T) y = w^2 y, phi = G^-T y, as LAPACK's sygv does; numpy
alone, so a command that models a rig does not load scipy.linalg, ~0.2 s), whose
characteristic polynomial is the double-pendulum frequency equation

    w^4 - (1 + R)(g/L1 + g/L2) w^2 + (1 + R) g^2 / (L1 L2) = 0,    R = m2 / m1.

Damping is modal: each mode gets the same damping ratio zeta, C = M Phi diag(2 zeta w) Phi^T M
with mass-normalized Phi (Phi^T M Phi = I). A prescribed trolley motion is a forcing term and
does not change the frequencies.

Notes
-----
Frequency equation and mode shapes: Kibble & Berkshire, *Classical Mechanics*, 5th ed.,
Imperial College Press, 2004 (normal modes of the double pendulum). The same roots appear in
Singhose, Kim & Kenison, "Input shaping control of double-pendulum bridge crane oscillations",
ASME J. Dyn. Sys. Meas. Control 130(3):034504, 2008 (from memory). Cholesky reduction of the
symmetric-definite problem: Golub & Van Loan, *Matrix Computations*, 4th ed., 2013, section 8.7.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.checks import check_quantity
from stillhook.errors import RigError

__all__ = ["DEFAULT_DAMPING_RATIO", "Mode", "Rig", "STANDARD_GRAVITY_M_S2", "mode_frequencies_rad_s"]

#: Standard gravity (m/s^2), the default.
STANDARD_GRAVITY_M_S2 = 9.80665
#: Default sway damping ratio: none. Real ropes give 0.001-0.01 (common practice, no source);
#: designing for zero damping is the conservative choice for residual sway.
DEFAULT_DAMPING_RATIO = 0.0


@dataclass(frozen=True)
class Mode:
    """One sway mode of a rig.

    Attributes
    ----------
    omega_rad_s : float > 0
        Undamped natural angular frequency.
    frequency_hz, period_s : float > 0
        ``omega / 2 pi`` and its inverse.
    damping_ratio : float in [0, 1)
    payload_to_hook_ratio : float
        Mode shape as the payload-to-hook horizontal displacement ratio x2/x1. Positive for the
        low (in-phase) mode, negative for the high mode. Equals 1 for a single pendulum.
    shape : ndarray (2,)
        Mass-normalized angle vector [theta1, theta2] (phi^T M phi = 1, theta1 >= 0).
    hook_participation_m_per_m_s2, payload_participation_m_per_m_s2 : float
        Amplitude (m) of the hook and payload offset that a unit step of trolley acceleration
        (1 m/s^2, from rest) leaves oscillating in this mode, signed. The static offsets of all
        modes add up to the quasi-static lean -a L1/g (hook) and -a (L1 + L2)/g (payload).
    """

    omega_rad_s: float
    frequency_hz: float
    period_s: float
    damping_ratio: float
    payload_to_hook_ratio: float
    shape: np.ndarray
    hook_participation_m_per_m_s2: float
    payload_participation_m_per_m_s2: float

    @property
    def damped_omega_rad_s(self) -> float:
        """Damped angular frequency w sqrt(1 - zeta^2) (rad/s)."""
        return self.omega_rad_s * math.sqrt(1.0 - self.damping_ratio**2)

    def as_dict(self) -> dict:
        """JSON-ready summary."""
        return {
            "omega_rad_s": self.omega_rad_s,
            "frequency_hz": self.frequency_hz,
            "period_s": self.period_s,
            "damping_ratio": self.damping_ratio,
            "payload_to_hook_ratio": self.payload_to_hook_ratio,
            "hook_participation_m_per_m_s2": self.hook_participation_m_per_m_s2,
            "payload_participation_m_per_m_s2": self.payload_participation_m_per_m_s2,
        }


@dataclass(frozen=True)
class Rig:
    """A hook block and payload hanging from a trolley, at one rope length and payload mass.

    Parameters
    ----------
    hook_mass_kg : float in [1, 5e5]
        Hook block mass m1.
    payload_mass_kg : float in [0, 2e7]
        Payload mass m2 (0: no payload, a single pendulum).
    rope_length_m : float in [0.1, 1000]
        Hoist rope length L1, suspension point on the trolley to the hook.
    rigging_length_m : float in [0, 100]
        Rigging length L2, hook to payload centre of mass (0: payload at the hook).
    gravity_m_s2 : float in [1, 30], default 9.80665
    damping_ratio : float in [0, 0.7], default 0
        Modal damping ratio applied to every mode.

    The ranges are :data:`stillhook.checks.LIMITS` (plausibility bounds with their reasons).
    """

    hook_mass_kg: float
    payload_mass_kg: float
    rope_length_m: float
    rigging_length_m: float
    gravity_m_s2: float = STANDARD_GRAVITY_M_S2
    damping_ratio: float = DEFAULT_DAMPING_RATIO

    def __post_init__(self) -> None:
        # plausibility bounds and their reasons: stillhook.checks.LIMITS (the same for project keys and options)
        for name in ("hook_mass_kg", "payload_mass_kg", "rope_length_m", "rigging_length_m", "gravity_m_s2",
                     "damping_ratio"):
            object.__setattr__(self, name, check_quantity(name, getattr(self, name), error=RigError))

    # -- structure -----------------------------------------------------------------------
    @property
    def is_single_pendulum(self) -> bool:
        """True when the rig has one sway mode (no payload mass or no rigging length)."""
        return self.payload_mass_kg == 0.0 or self.rigging_length_m == 0.0

    @property
    def mass_ratio(self) -> float:
        """R = m2 / m1."""
        return self.payload_mass_kg / self.hook_mass_kg

    def mass_matrix(self) -> np.ndarray:
        """Linearized mass matrix M (kg m^2), see module docstring."""
        m1, m2, L1, L2 = self.hook_mass_kg, self.payload_mass_kg, self.rope_length_m, self.rigging_length_m
        return np.array([[(m1 + m2) * L1**2, m2 * L1 * L2], [m2 * L1 * L2, m2 * L2**2]])

    def stiffness_matrix(self) -> np.ndarray:
        """Linearized gravity stiffness matrix K (N m / rad)."""
        m1, m2, L1, L2, g = (self.hook_mass_kg, self.payload_mass_kg, self.rope_length_m,
                             self.rigging_length_m, self.gravity_m_s2)
        return np.array([[(m1 + m2) * g * L1, 0.0], [0.0, m2 * g * L2]])

    def input_vector(self) -> np.ndarray:
        """b in M q'' + K q = -b a (kg m)."""
        m1, m2, L1, L2 = self.hook_mass_kg, self.payload_mass_kg, self.rope_length_m, self.rigging_length_m
        return np.array([(m1 + m2) * L1, m2 * L2])

    def output_matrix(self) -> np.ndarray:
        """Rows map [theta1, theta2] to [hook offset, payload offset] (m), linearized."""
        L1, L2 = self.rope_length_m, self.rigging_length_m
        return np.array([[L1, 0.0], [L1, L2]])

    # -- modes ----------------------------------------------------------------------------
    def _eig(self) -> tuple[np.ndarray, np.ndarray]:
        """Return (w^2 ascending, Phi mass-normalized, columns) for the two-mode rig."""
        G = np.linalg.cholesky(self.mass_matrix())  # M = G G^T
        G_inv = np.linalg.inv(G)
        w2, y = np.linalg.eigh(G_inv @ self.stiffness_matrix() @ G_inv.T)
        phi = G_inv.T @ y  # Phi^T M Phi = Y^T Y = I
        phi = phi * np.where(phi[0] < 0, -1.0, 1.0)  # sign convention: theta1 >= 0
        return w2, phi

    def modes(self) -> list[Mode]:
        """Sway modes, low first: two for a double pendulum, one for a single pendulum."""
        g, zeta = self.gravity_m_s2, self.damping_ratio
        L1, L2 = self.rope_length_m, self.rigging_length_m
        if self.is_single_pendulum:
            # Single pendulum of length L1 (payload at the hook, or no payload): w^2 = g / L1.
            w = math.sqrt(g / L1)
            m = self.hook_mass_kg + self.payload_mass_kg
            phi1 = 1.0 / math.sqrt(m * L1**2)
            # Step of a: static angle -a/g, hook offset -a L1 / g; a massless payload hangs in line.
            hook = -L1 / g
            payload = -(L1 + (L2 if self.payload_mass_kg == 0.0 else 0.0)) / g
            return [Mode(w, w / (2 * math.pi), 2 * math.pi / w, zeta, 1.0 if payload == hook else payload / hook,
                         np.array([phi1, phi1]), hook, payload)]
        w2, phi = self._eig()
        b, out = self.input_vector(), self.output_matrix()
        result = []
        for i in range(2):
            w = math.sqrt(w2[i])
            # Modal coordinate eta_i'' + w_i^2 eta_i = -phi_i^T b a; a unit step from rest gives
            # eta_i = Gamma_i (1 - cos w_i t) with Gamma_i = -phi_i^T b / w_i^2.
            gamma = -float(phi[:, i] @ b) / w2[i]
            x1, x2 = out @ phi[:, i]
            result.append(Mode(w, w / (2 * math.pi), 2 * math.pi / w, zeta, float(x2 / x1), phi[:, i].copy(),
                               float(x1 * gamma), float(x2 * gamma)))
        return result

    def damping_matrix(self) -> np.ndarray:
        """Modal damping matrix C = M Phi diag(2 zeta w) Phi^T M (N m s / rad)."""
        if self.damping_ratio == 0.0 or self.is_single_pendulum:
            m, L1 = self.hook_mass_kg + self.payload_mass_kg, self.rope_length_m
            # single pendulum: c11 = 2 zeta w m L1^2 with w = sqrt(g / L1)
            c11 = 2.0 * self.damping_ratio * math.sqrt(self.gravity_m_s2 / L1) * m * L1**2
            return np.array([[c11, 0.0], [0.0, 0.0]])
        w2, phi = self._eig()
        M = self.mass_matrix()
        return M @ phi @ np.diag(2.0 * self.damping_ratio * np.sqrt(w2)) @ phi.T @ M

    # -- linear state-space matrices ------------------------------------------------------
    def state_space_matrices(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(A, B, C, D) of the linearized rig, x' = A x + B u, y = C x + D u.

        Input u: trolley acceleration (m/s^2). States: [theta1, theta2, theta1', theta2'] (or
        [theta1, theta1'] for a single pendulum). Outputs: hook offset (m), payload offset (m),
        theta1 (rad), theta2 (rad), all horizontal offsets measured from the trolley.
        Its poles are -zeta w +- j w sqrt(1 - zeta^2) for each mode.
        """
        if self.is_single_pendulum:
            L1, g = self.rope_length_m, self.gravity_m_s2
            w = math.sqrt(g / L1)
            A = np.array([[0.0, 1.0], [-w * w, -2.0 * self.damping_ratio * w]])
            B = np.array([[0.0], [-1.0 / L1]])
            L2_in_line = self.rigging_length_m if self.payload_mass_kg == 0.0 else 0.0
            C = np.array([[L1, 0.0], [L1 + L2_in_line, 0.0], [1.0, 0.0], [1.0, 0.0]])
            return A, B, C, np.zeros((4, 1))
        M, K, Cd, b = self.mass_matrix(), self.stiffness_matrix(), self.damping_matrix(), self.input_vector()
        Minv = np.linalg.inv(M)
        A = np.block([[np.zeros((2, 2)), np.eye(2)], [-Minv @ K, -Minv @ Cd]])
        B = np.concatenate([np.zeros(2), -Minv @ b]).reshape(4, 1)
        C = np.zeros((4, 4))
        C[0:2, 0:2] = self.output_matrix()
        C[2:4, 0:2] = np.eye(2)
        return A, B, C, np.zeros((4, 1))


def mode_frequencies_rad_s(hook_mass_kg, payload_mass_kg, rope_length_m, rigging_length_m,
                           gravity_m_s2: float = STANDARD_GRAVITY_M_S2) -> np.ndarray:
    """Both undamped mode frequencies (rad/s) from the frequency equation, vectorized.

    Parameters
    ----------
    hook_mass_kg : float > 0 or array
    payload_mass_kg : float >= 0 or array
    rope_length_m : float > 0 or array
    rigging_length_m : float > 0 or array
        Broadcast together.
    gravity_m_s2 : float > 0

    Returns
    -------
    ndarray, shape broadcast + (2,)
        [..., 0] low mode, [..., 1] high mode. At payload mass 0 the high mode takes its limit
        sqrt(g / L2) (the payload swinging below a hook it does not move).

    Notes
    -----
    Roots of w^4 - p w^2 + q = 0 with p = (1 + R)(g/L1 + g/L2), q = (1 + R) g^2/(L1 L2),
    R = m2/m1 (Kibble & Berkshire 2004); the low root is taken as 2q / (p + sqrt(p^2 - 4q)) to
    avoid cancellation.
    """
    m1, m2, L1, L2 = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                           (hook_mass_kg, payload_mass_kg, rope_length_m, rigging_length_m)))
    g = float(gravity_m_s2)
    R = m2 / m1
    p = (1.0 + R) * (g / L1 + g / L2)
    q = (1.0 + R) * g * g / (L1 * L2)
    root = np.sqrt(np.maximum(p * p - 4.0 * q, 0.0))
    w2_hi = 0.5 * (p + root)
    w2_lo = 2.0 * q / (p + root)
    return np.sqrt(np.stack([w2_lo, w2_hi], axis=-1))
