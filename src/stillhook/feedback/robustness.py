"""Robustness of the scheduled feedback over the envelope: stability, damping, gain and delay margins.

At each point (L, m) of an envelope grid the TRUE rig (envelope.rig(L, m)) runs with the controller of
the row the schedule picks for L (:meth:`FeedbackDesign.row_for`); the grid holds every row's length and
both sides of every switching length, so the schedule is checked where it holds between rows.

Linear closed loop (no saturation, reference at rest). Controller, input y (sensor), output u::

    o_c = (I - M C_o) o + M y              current estimate
    u   = -K_x S o_c - K_d d               S picks x_rig; d = [dv, dp] the correction's drive model
    o'  = A_o o_c + B_o u,   d' = D d + D_b u

Plant: the observer structure (:func:`stillhook.feedback.design.delayed_model`) at the true rig.
Closed-loop poles are the eigenvalues of the joined system; the damping ratio reported is the least
over ALL closed-loop poles (both sway modes, observer, drive): a bound on each sway mode's damping.

Margins at the plant input, loop gain L(z) = -C(z) P(z) (negative-feedback convention), on a frequency
grid up to the Nyquist frequency that is dense around each plant mode: gain margin 1/|L| where the
phase crosses -180 deg (upper: |L| < 1; lower: |L| > 1), phase margin at |L| = 1, delay margin
PM / (w_c T) in drive cycles (the smallest over crossovers).

Notes
-----
Loop gain, gain, phase and delay margins of a sampled loop: Franklin, Powell & Workman, *Digital Control
of Dynamic Systems*, 3rd ed., 1998 (from memory); delayed sway feedback and its margins matter: Masoud,
Nayfeh et al. 2003-2005 (delayed cable-angle feedback on cranes).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.feedback.design import FeedbackDesign, FeedbackRow, delayed_model, min_damping_ratio
from stillhook.feedback.plant import design_plant
from stillhook.model.lookup import row_edges_m

__all__ = ["EnvelopeCheck", "GridPoint", "check_envelope", "check_point", "closed_loop_matrix", "controller_system",
           "envelope_grid", "loop_frequency_response", "margins", "plant_system", "point_poles",
           "state_space_response", "MODAL_COND_LIMIT"]

#: Largest condition number of A's eigenvector matrix for which responses use the modal partial fractions.
MODAL_COND_LIMIT = 1e6


def controller_system(design: FeedbackDesign, row: FeedbackRow):
    """(A_c, B_c, C_c, D_c) of the row's controller from y to u (module docstring).

    A row without feedback (``row.feedback_on`` False, K = 0) puts out no correction, so its drive model d
    stays at rest and is left out: only the observer remains (its integrator pole z = 1 is no loop pole).
    """
    n = row.plant.n_rig
    n_o = row.A_o.shape[0]
    K_x, K_d = row.K[:, :n], row.K[:, n:]
    S = np.zeros((n, n_o))
    S[:, :n] = np.eye(n)
    E = np.eye(n_o) - row.M @ row.C_o
    if not row.feedback_on:
        return row.A_o @ E, row.A_o @ row.M, np.zeros((1, n_o)), np.zeros((1, 1))
    C_c = np.hstack([-K_x @ S @ E, -K_d])
    D_c = -K_x @ S @ row.M
    A_c = np.block([[row.A_o @ E + row.B_o @ C_c[:, :n_o], row.B_o @ C_c[:, n_o:]],
                    [design.Db_drive @ C_c[:, :n_o], design.D_drive + design.Db_drive @ C_c[:, n_o:]]])
    B_c = np.vstack([row.A_o @ row.M + row.B_o @ D_c, design.Db_drive @ D_c])
    return A_c, B_c, C_c, D_c


def plant_system(design: FeedbackDesign, rig, extra_delay_cycles: int = 0):
    """(A_p, B_p, C_p) of the true rig from u to y, with the sensor's delay (plus ``extra_delay_cycles``)."""
    plant = design_plant(rig, design.cycle_s, design.tau_s, design.sensor_kind)
    A, B, C, _G = delayed_model(plant, design.delay_cycles + extra_delay_cycles)
    return A, B, C


def closed_loop_matrix(plant, controller) -> np.ndarray:
    """A of the joined loop: u = C_c xi + D_c y, y = C_p X."""
    A_p, B_p, C_p = plant
    A_c, B_c, C_c, D_c = controller
    return np.block([[A_p + B_p @ D_c @ C_p, B_p @ C_c], [B_c @ C_p, A_c]])


def state_space_response(A, B, C, D, z) -> np.ndarray:
    """G(z) = C (z I - A)^-1 B + D of a single-input single-output state space at every point of ``z``.

    Parameters
    ----------
    A : ndarray (n, n); B : (n, 1); C : (1, n); D : (1, 1)
    z : ndarray of complex (N,)
        Points where G is evaluated (e^{j w T} on the unit circle for a frequency response); none an
        eigenvalue of A.

    Returns
    -------
    ndarray of complex (N,)

    Notes
    -----
    Where A = V diag(lambda) V^-1 with a well-conditioned V (cond(V) < MODAL_COND_LIMIT: error about
    cond(V) eps), the partial fractions G(z) = sum_k (C v_k) (V^-1 B)_k / (z - lambda_k) + D cost O(n) per
    point; otherwise (a defective A, such as a delay line of two or more cycles) one dense solve per point.
    Modal form of the transfer function: Kailath, *Linear Systems*, Prentice-Hall, 1980, section 2.3 (from
    memory). The loops checked here have cond(V) below 300 (measured on the feedback example).
    """
    A = np.asarray(A, dtype=float)
    B, C = np.asarray(B, dtype=float), np.asarray(C, dtype=float)
    z = np.asarray(z, dtype=complex).reshape(-1)
    d = complex(np.asarray(D)[0, 0])
    if A.shape[0] == 0:
        return np.full(z.shape, d)
    lam, V = np.linalg.eig(A)
    if np.linalg.cond(V) < MODAL_COND_LIMIT:
        residues = (C @ V)[0] * np.linalg.solve(V, B.astype(complex))[:, 0]
        return (1.0 / (z[:, None] - lam[None, :])) @ residues + d
    M = z[:, None, None] * np.eye(A.shape[0])[None] - A[None]
    X = np.linalg.solve(M, np.broadcast_to(B, (z.size,) + B.shape))
    return (C @ X)[:, 0, 0] + d


def loop_frequency_response(plant, controller, cycle_s: float, omega_rad_s) -> np.ndarray:
    """L(e^{j w T}) = -C(z) P(z) at the given angular frequencies (rad/s)."""
    z = np.exp(1j * np.asarray(omega_rad_s, dtype=float) * cycle_s)
    A_p, B_p, C_p = plant
    P = state_space_response(A_p, B_p, C_p, np.zeros((1, 1)), z)
    Cz = state_space_response(*controller, z)
    return -Cz * P


def _frequency_grid(mode_omegas, cycle_s: float) -> np.ndarray:
    nyq = math.pi / cycle_s
    parts = [np.geomspace(1e-3 * min(mode_omegas), nyq * (1 - 1e-9), 800)]
    for w in mode_omegas:
        parts.append(np.linspace(0.8 * w, min(1.2 * w, nyq * (1 - 1e-9)), 601))
    return np.unique(np.concatenate(parts))


def margins(L: np.ndarray, omega_rad_s: np.ndarray, cycle_s: float) -> dict:
    """Gain margins (upper, lower, dB), phase margin (deg) and delay margin (cycles) from L(jw) samples."""
    mag = np.abs(L)
    up, low, pm, dm = math.inf, -math.inf, math.inf, math.inf
    # phase crossovers: L crosses the negative real axis (Im changes sign with Re < 0)
    for i in np.nonzero(np.sign(L.imag[:-1]) != np.sign(L.imag[1:]))[0]:
        f = L.imag[i] / (L.imag[i] - L.imag[i + 1])
        Lx = L[i] + f * (L[i + 1] - L[i])
        if Lx.real >= 0:
            continue
        g_db = -20.0 * math.log10(abs(Lx.real))
        if g_db > 0:
            up = min(up, g_db)
        else:
            low = max(low, g_db)
    # gain crossovers: |L| crosses 1
    for i in np.nonzero(np.sign(mag[:-1] - 1.0) != np.sign(mag[1:] - 1.0))[0]:
        f = (1.0 - mag[i]) / (mag[i + 1] - mag[i])
        w = omega_rad_s[i] + f * (omega_rad_s[i + 1] - omega_rad_s[i])
        Lx = L[i] + f * (L[i + 1] - L[i])
        phase = math.degrees(math.atan2(Lx.imag, Lx.real))  # (-180, 180]
        margin = 180.0 + phase if phase <= 0 else phase - 180.0
        pm = min(pm, margin)
        # a delay tau adds phase lag w tau: the loop reaches -180 deg after (margin mod 360) / w
        dm = min(dm, math.radians(margin % 360.0) / (w * cycle_s))
    return {"gain_margin_db": up, "gain_reduction_margin_db": low, "phase_margin_deg": pm,
            "delay_margin_cycles": dm}


@dataclass(frozen=True)
class GridPoint:
    """One envelope point: its row, stability, least damping ratio and margins."""

    rope_length_m: float
    payload_mass_kg: float
    row: int
    stable: bool
    spectral_radius: float
    damping_ratio: float
    gain_margin_db: float
    gain_reduction_margin_db: float
    phase_margin_deg: float
    delay_margin_cycles: float


def envelope_grid(design: FeedbackDesign, envelope, n_rope: int = 9, n_payload: int = 7):
    """(rope lengths, payload masses) of the check grid: geometric grid, row lengths, both sides of each switch."""
    lo, hi = envelope.rope_length_range_m
    edges = row_edges_m(design.rope_lengths_m, design.lookup_rule)
    L = np.concatenate([np.geomspace(lo, hi, n_rope), design.rope_lengths_m, edges * (1 - 1e-6), edges])
    L = np.unique(np.clip(L, lo, hi))
    m_lo, m_hi = envelope.payload_mass_range_kg
    m = np.geomspace(m_lo, m_hi, n_payload) if m_lo > 0 else np.linspace(m_lo, m_hi, n_payload)
    return L, np.unique(np.append(m, design.design_payload_mass_kg))


def point_poles(design: FeedbackDesign, row: FeedbackRow, rig) -> np.ndarray:
    """Closed-loop poles of ``row``'s controller on one true rig (the cheap first test of a point)."""
    return np.linalg.eigvals(closed_loop_matrix(plant_system(design, rig), controller_system(design, row)))


def check_point(design: FeedbackDesign, rig, rope_length_m: float | None = None,
                row_index: int | None = None) -> GridPoint:
    """Stability, damping and margins of the scheduled loop on one true rig.

    ``rope_length_m``: the encoder's rope length that picks the row (default the rig's pendulum length,
    the same without a rope offset). ``row_index``: check that row instead of the scheduled one.
    """
    L = rig.rope_length_m if rope_length_m is None else float(rope_length_m)
    k = design.row_for(L) if row_index is None else int(row_index)
    row = design.rows[k]
    plant, ctrl = plant_system(design, rig), controller_system(design, row)
    poles = np.linalg.eigvals(closed_loop_matrix(plant, ctrl))
    radius = float(np.max(np.abs(poles)))
    w = _frequency_grid([mode.omega_rad_s for mode in rig.modes()], design.cycle_s)
    mg = margins(loop_frequency_response(plant, ctrl, design.cycle_s, w), w, design.cycle_s)
    return GridPoint(L, rig.payload_mass_kg, k, radius < 1.0, radius,
                     min_damping_ratio(poles, design.cycle_s), **mg)


@dataclass(frozen=True)
class EnvelopeCheck:
    """The grid and its worst cases (JSON-ready through :meth:`as_dict`)."""

    points: list
    min_damping_ratio: float

    @property
    def worst(self) -> GridPoint:
        return min(self.points, key=lambda p: (p.stable, p.damping_ratio))

    @property
    def all_stable(self) -> bool:
        return all(p.stable for p in self.points)

    @property
    def delay_margin_cycles(self) -> float:
        return min(p.delay_margin_cycles for p in self.points)

    @property
    def gain_margin_db(self) -> float:
        return min(p.gain_margin_db for p in self.points)

    @property
    def passed(self) -> bool:
        return self.all_stable and self.worst.damping_ratio >= self.min_damping_ratio

    def as_dict(self) -> dict:
        """JSON-ready; an infinite margin (no crossover anywhere) is None."""
        w = self.worst

        def num(v):
            return float(v) if math.isfinite(v) else None

        return {"worst_closed_loop_damping_ratio": float(w.damping_ratio),
                "worst_at": {"rope_length_m": float(w.rope_length_m), "payload_mass_kg": float(w.payload_mass_kg)},
                "delay_margin_cycles": num(self.delay_margin_cycles), "gain_margin_db": num(self.gain_margin_db),
                "all_stable": self.all_stable, "min_damping_ratio": self.min_damping_ratio,
                "passed": self.passed, "grid_points": len(self.points)}


def check_envelope(design: FeedbackDesign, envelope, min_damping: float, n_rope: int = 9,
                   n_payload: int = 7) -> EnvelopeCheck:
    """Check every grid point (:func:`envelope_grid`) with :func:`check_point`."""
    L, m = envelope_grid(design, envelope, n_rope, n_payload)
    pts = [check_point(design, envelope.rig(float(Li), float(mj)), float(Li)) for Li in L for mj in m]
    return EnvelopeCheck(pts, float(min_damping))
