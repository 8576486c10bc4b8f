"""Residual sway of many rigs at once: exact discretization of the linear model in modal coordinates.

Each rig of the batch is decomposed into its sway modes (:mod:`stillhook.model.modal_batch`). With
theta = sum_i phi_i eta_i and modal damping, mode i obeys

    eta_i'' + 2 zeta w_i eta_i' + w_i^2 eta_i = -(phi_i^T b / phi_i^T M phi_i) a(t),

and the payload offset from the trolley is x2 = sum_i p_i y_i, where y_i is the response of the
unit oscillator y'' + 2 zeta w_i y' + w_i^2 y = -a(t) and

    p_i = (L1 phi_i1 + L2 phi_i2) (phi_i^T b) / (phi_i^T M phi_i)         (payload gain, m per m)

(the hook gain q_i uses L1 phi_i1 instead). Static check: sum_i p_i / w_i^2 = (L1 + L2) / g.

The trolley follows the sampled speed command linearly, so a(t) = a_k on cycle k,
[k T, (k + 1) T), with a_k = (v[k+1] - v[k]) / T, as in :mod:`stillhook.sim.dynamics`. The unit
oscillator's impulse response is h(t) = Im(e^(s t)) / w_d, s = -zeta w + j w_d, w_d = w sqrt(1 - zeta^2),
so after the command ends at t_e = n T (the last non-zero cycle is n - 1), exactly,

    y(t_e + tau) = Im(Y e^(s tau)),   Y = -(1 / w_d) sum_k a_k e^(s (n - 1 - k) T) (e^(s T) - 1) / s.

A run of cycles k0 <= k < k1 with one acceleration a sums in closed form,
a e^(s (n - k1) T) (e^(s (k1 - k0) T) - 1) / s, so long ramps and plateaus cost nothing; runs are
accumulated Horner-fashion, S <- S e^(s (k1_r - k1_(r-1)) T) + a_r expm1(s L_r T) / s.

Residual sway is the peak of |x2(t_e + tau)| = |Im(sum_i p_i Y_i e^(s_i tau))| for 0 < tau <= settle_s
(:data:`stillhook.sim.dynamics.SETTLE_WINDOW_S`): found on a grid of spacing <= 1/(50 f_max) and <= 10 ms,
then refined with Newton steps on the derivative, so it is the continuous peak (the grid alone is
within (w h)^2 / 8 < 0.1 %).

Notes
-----
Modes and frequency equation: Kibble & Berkshire, *Classical Mechanics*, 5th ed., Imperial
College Press, 2004. Exact discretization of a linear system under a zero-order-hold input
(here on the acceleration): Franklin, Powell & Workman, *Digital Control of Dynamic Systems*,
3rd ed., Addison-Wesley, 1998, ch. 4 (from memory). The convolution with the closed-form impulse
response is derived here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.checks import check_quantity, check_quantity_array
from stillhook.errors import ConfigError
from stillhook.model.modal_batch import batch_modes
from stillhook.sim.dynamics import SETTLE_WINDOW_S

__all__ = [
    "AccelRuns", "BLOCK_RIGS", "DENSE_RUNS_FRACTION", "MAX_GRID_STEP_S", "ModalBatch", "POINTS_PER_PERIOD",
    "RUN_RTOL", "end_amplitudes", "end_amplitudes_dense", "peak_after_end", "residual_sway_m",
]

#: Peak search grid: at least this many points per period of the fastest mode (our choice).
POINTS_PER_PERIOD = 50
#: Peak search grid spacing cap (s), the same as the nonlinear simulator's output step.
MAX_GRID_STEP_S = 0.01
#: Rigs per block in the peak search (bounds memory to a few tens of MB).
BLOCK_RIGS = 128
#: Consecutive accelerations closer than this (relative to the largest) form one run.
RUN_RTOL = 1e-12
#: A command with more runs than this fraction of its cycles is summed cycle by cycle, in blocks.
DENSE_RUNS_FRACTION = 0.05


@dataclass(frozen=True)
class ModalBatch:
    """Sway modes of many rigs of one envelope, in the form the sweep needs.

    Attributes
    ----------
    rope_length_m, payload_mass_kg : ndarray (R,)
        The rigs' points in the envelope.
    omega_rad_s : ndarray (R, 2)
        Undamped mode frequencies, low first. A single-pendulum rig (no payload mass or no
        rigging) has one mode; its second column repeats the first with zero gains. A payload of
        0 kg hangs in line with the rope (:mod:`stillhook.model.modal_batch`).
    damping_ratio : float in [0, 1), or ndarray (R,)
        Modal damping ratio of every mode: one for all rigs, or one per rig (uncertainty studies).
    payload_gain, hook_gain : ndarray (R, 2)
        p_i and q_i of the module docstring (m of offset per m of unit-oscillator response).
    """

    rope_length_m: np.ndarray
    payload_mass_kg: np.ndarray
    omega_rad_s: np.ndarray
    damping_ratio: float | np.ndarray
    payload_gain: np.ndarray
    hook_gain: np.ndarray

    @classmethod
    def from_envelope(cls, envelope, rope_length_m, payload_mass_kg, *, hook_mass_kg=None, rigging_length_m=None,
                      damping_ratio=None) -> ModalBatch:
        """Modes of the rigs ``envelope.rig(L, m, ...)`` for paired 1-D arrays of L (m) and m (kg).

        ``hook_mass_kg`` (kg), ``rigging_length_m`` (m) and ``damping_ratio``, when given, are 1-D arrays
        paired with L: each rig's own value (an uncertainty study) instead of the envelope's.
        Points may lie outside the envelope's ranges (extrapolation studies) but must be physical.
        """
        L1 = np.atleast_1d(np.asarray(rope_length_m, dtype=float))
        m2 = np.atleast_1d(np.asarray(payload_mass_kg, dtype=float))
        per_rig = {"payload_mass_kg": m2, "hook_mass_kg": hook_mass_kg, "rigging_length_m": rigging_length_m,
                   "damping_ratio": damping_ratio}
        for key, values in per_rig.items():
            if values is not None and (np.shape(values) != L1.shape or L1.ndim != 1):
                raise ConfigError(f"rope lengths and {key.replace('_', ' ')} must be paired 1-D arrays; got "
                                  f"shapes {L1.shape} and {np.shape(values)}")
        check_quantity_array("rope_length_m", L1, name="rope lengths")
        given = {key: check_quantity_array(key, values, name=key.replace("_", " "))
                 for key, values in per_rig.items() if values is not None}
        Lp = envelope.pendulum_length_m(L1)  # pendulum length of the encoder rope lengths L1
        if not np.all(Lp > 0):
            raise ConfigError("rope lengths plus the rope offset must be > 0 (m)")
        m1 = given.get("hook_mass_kg", envelope.hook_mass_kg)
        L2 = given.get("rigging_length_m", envelope.rigging_length_m)
        modes = batch_modes(m1, m2, Lp, L2, envelope.gravity_m_s2)
        # unit-oscillator gains from the step participations: a unit step leaves y_i = -1 / w_i^2
        w = modes.omega_rad_s
        p = -modes.payload_participation_m_per_m_s2 * (w * w)
        q = -modes.hook_participation_m_per_m_s2 * (w * w)
        zeta = given.get("damping_ratio", float(envelope.damping_ratio))
        return cls(L1, m2, w, zeta, p, q)

    @property
    def size(self) -> int:
        return int(self.rope_length_m.size)

    @property
    def poles_rad_s(self) -> np.ndarray:
        """s = -zeta w + j w_d, w_d = w sqrt(1 - zeta^2), shape (R, 2)."""
        z = np.asarray(self.damping_ratio, dtype=float)
        z = z[:, None] if z.ndim == 1 else z
        return -z * self.omega_rad_s + 1j * self.omega_rad_s * np.sqrt(1.0 - z * z)

    def take(self, index) -> ModalBatch:
        """The sub-batch of rigs ``index`` (int array, slice or boolean mask)."""
        z = self.damping_ratio
        return ModalBatch(self.rope_length_m[index], self.payload_mass_kg[index], self.omega_rad_s[index],
                          z[index] if isinstance(z, np.ndarray) else z, self.payload_gain[index],
                          self.hook_gain[index])


@dataclass(frozen=True)
class AccelRuns:
    """A sampled speed command as runs of constant trolley acceleration.

    Attributes
    ----------
    accel_m_s2 : ndarray (n_runs,)
        Acceleration of each non-zero run (mean of its cycles).
    start, stop : ndarray of int (n_runs,)
        Cycles k0 <= k < k1 of each run.
    end_cycle : int
        n: the command is at rest from t = n T on (0 for a command that never moves).
    cycle_s : float
    """

    accel_m_s2: np.ndarray
    start: np.ndarray
    stop: np.ndarray
    end_cycle: int
    cycle_s: float

    @property
    def command_end_s(self) -> float:
        return self.end_cycle * self.cycle_s

    @classmethod
    def from_speed(cls, speed_m_s, cycle_s: float) -> AccelRuns:
        """Runs of a speed command sampled every ``cycle_s`` (the trolley interpolates linearly).

        Parameters
        ----------
        speed_m_s : array_like, 1-D, finite
            Speed samples v[k] (m/s); the command holds 0 after the last sample.
        cycle_s : float > 0
        """
        T = check_quantity("cycle_s", cycle_s)
        v = np.asarray(speed_m_s, dtype=float)
        if v.ndim != 1 or v.size == 0 or not np.all(np.isfinite(v)):
            raise ConfigError("speed_m_s must be a non-empty 1-D sequence of finite speeds (m/s)")
        a = np.diff(np.concatenate([v, [0.0]])) / T  # a_k on cycle k
        scale = float(np.max(np.abs(a))) if a.size else 0.0
        if scale == 0.0:
            empty = np.zeros(0, dtype=np.int64)
            return cls(np.zeros(0), empty, empty, 0, T)
        tol = RUN_RTOL * scale
        a = np.where(np.abs(a) <= tol, 0.0, a)
        nz = np.nonzero(a)[0]
        end_cycle = int(nz[-1]) + 1
        a = a[:end_cycle]
        brk = np.nonzero(np.abs(np.diff(a)) > tol)[0] + 1
        starts = np.concatenate([[0], brk])
        stops = np.concatenate([brk, [end_cycle]])
        sums = np.add.reduceat(a, starts)
        mean = sums / (stops - starts)
        keep = np.abs(mean) > tol
        return cls(mean[keep], starts[keep].astype(np.int64), stops[keep].astype(np.int64), end_cycle, T)


def end_amplitudes(batch: ModalBatch, runs: AccelRuns) -> np.ndarray:
    """Complex modal amplitudes Y (R, 2) at the end of the command: y_i(t_e + tau) = Im(Y_i e^(s_i tau)).

    Y = -(1 / w_d) sum_r a_r e^(s (n - k1_r) T) expm1(s (k1_r - k0_r) T) / s  (module docstring).
    A command with few runs (shaped trapezoids) is summed run by run; one whose acceleration changes
    nearly every cycle (a notch filter's output) is summed in blocks of cycles with two matrix products.
    """
    s = batch.poles_rad_s
    if runs.accel_m_s2.size > DENSE_RUNS_FRACTION * max(runs.end_cycle, 1):
        return end_amplitudes_dense(s, runs)
    T = runs.cycle_s
    S = np.zeros_like(s)
    cache_shift: dict[int, np.ndarray] = {}
    cache_run: dict[int, np.ndarray] = {}
    prev_stop = 0
    for a_r, k0, k1 in zip(runs.accel_m_s2, runs.start, runs.stop, strict=True):
        d, n = int(k1) - prev_stop, int(k1 - k0)
        if d not in cache_shift:
            cache_shift[d] = np.exp(s * (d * T))
        if n not in cache_run:
            cache_run[n] = np.expm1(s * (n * T)) / s
        S = S * cache_shift[d] + a_r * cache_run[n]
        prev_stop = int(k1)
    S = S * np.exp(s * ((runs.end_cycle - prev_stop) * T))
    return -S / s.imag


def end_amplitudes_dense(s: np.ndarray, runs: AccelRuns) -> np.ndarray:
    """Y for a command given cycle by cycle: S = sum_k a_k z^(n - 1 - k), z = e^(s T), in blocks of B.

    With the cycles padded in front to nb blocks of B, S = sum_b z^(B (nb - 1 - b)) sum_j a_(b, j) z^(B - 1 - j).
    """
    T, n = runs.cycle_s, runs.end_cycle
    a = np.zeros(n)
    for a_r, k0, k1 in zip(runs.accel_m_s2, runs.start, runs.stop, strict=True):
        a[k0:k1] = a_r
    B = max(16, math.isqrt(n))
    nb = -(-n // B)
    a = np.concatenate([np.zeros(nb * B - n), a]).reshape(nb, B)
    flat = s.reshape(-1)
    within = np.exp(flat[:, None] * (T * np.arange(B - 1, -1, -1)))  # (R2, B)
    across = np.exp(flat[:, None] * (T * B * np.arange(nb - 1, -1, -1)))  # (R2, nb)
    S = np.sum(across * (within @ a.T), axis=1).reshape(s.shape)
    return -S * (np.expm1(s * T) / s) / s.imag


def _grid(omega_max: float, settle_s: float) -> np.ndarray:
    h = min(MAX_GRID_STEP_S, 2.0 * math.pi / (POINTS_PER_PERIOD * omega_max))
    n = max(2, math.ceil(settle_s / h))
    return np.linspace(0.0, settle_s, n + 1)


def peak_after_end(batch: ModalBatch, amplitudes: np.ndarray, settle_s: float, *, which: str = "payload"
                   ) -> np.ndarray:
    """Peak |offset| (m) over 0 <= tau <= settle_s of the free response Im(sum_i gain_i Y_i e^(s_i tau)).

    Parameters
    ----------
    batch : ModalBatch (R rigs)
    amplitudes : complex ndarray (..., R, 2)
        From :func:`end_amplitudes`; leading axes (several designs) are allowed.
    settle_s : float > 0
    which : 'payload' or 'hook'

    Returns
    -------
    ndarray (..., R)
    """
    gain = batch.payload_gain if which == "payload" else batch.hook_gain
    P = np.asarray(amplitudes) * gain  # (..., R, 2)
    s = batch.poles_rad_s
    lead = P.shape[:-2]
    out = np.empty(lead + (batch.size,))
    for b0 in range(0, batch.size, BLOCK_RIGS):
        sl = slice(b0, min(b0 + BLOCK_RIGS, batch.size))
        sb, Pb = s[sl], P[..., sl, :]
        active = np.abs(gain[sl]) > 0
        tau = _grid(float(np.max(np.abs(sb[active]))) if np.any(active) else 1.0, settle_s)
        E = np.exp(sb[..., None] * tau)  # (r, 2, J)
        # x(tau) = Im(P_1 E_1 + P_2 E_2) = Re(P) Im(E) + Im(P) Re(E), summed over modes
        x = np.einsum("...rm,rmj->...rj", Pb.real, E.imag) + np.einsum("...rm,rmj->...rj", Pb.imag, E.real)
        j = np.argmax(np.abs(x), axis=-1)
        peak_grid = np.take_along_axis(np.abs(x), j[..., None], axis=-1)[..., 0]
        h = tau[1] - tau[0]
        t = tau[j]
        lo, hi = np.maximum(t - h, 0.0), np.minimum(t + h, settle_s)
        for _ in range(4):  # Newton on f'(tau) = 0: tau <- tau - f'/f''
            e = np.exp(sb * t[..., None])
            d1 = np.imag(np.sum(Pb * sb * e, axis=-1))
            d2 = np.imag(np.sum(Pb * sb * sb * e, axis=-1))
            step = np.divide(d1, d2, out=np.zeros_like(d1), where=d2 != 0.0)
            t = np.clip(t - step, lo, hi)
        refined = np.abs(np.imag(np.sum(Pb * np.exp(sb * t[..., None]), axis=-1)))
        out[..., sl] = np.maximum(peak_grid, refined)
    return out


def residual_sway_m(batch: ModalBatch, speed_m_s, cycle_s: float, *, settle_s: float = SETTLE_WINDOW_S,
                    which: str = "payload") -> np.ndarray:
    """Residual sway (m) of every rig of ``batch`` after one speed command.

    Peak |payload offset from the trolley| (or hook, ``which='hook'``) in the ``settle_s``
    seconds after the command ends, on the linear model (module docstring).

    Parameters
    ----------
    batch : ModalBatch
    speed_m_s : array_like, 1-D
        Trolley speed command samples (m/s) at t = k cycle_s.
    cycle_s : float > 0
    settle_s : float > 0, default 20
    which : 'payload' or 'hook'

    Returns
    -------
    ndarray (R,)
    """
    settle_s = check_quantity("settle_s", settle_s)
    if which not in ("payload", "hook"):
        raise ConfigError(f"which = {which!r} is not allowed; allowed: 'payload' or 'hook'")
    runs = AccelRuns.from_speed(speed_m_s, cycle_s)
    return peak_after_end(batch, end_amplitudes(batch, runs), settle_s, which=which)
