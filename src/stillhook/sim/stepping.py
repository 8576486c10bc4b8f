"""Stepping: classical RK4 through each drive cycle for a batch of runs, compiled or numpy.

Over drive cycle k the trolley acceleration a_k and the hoist's L1'' are constant, so n_rk RK4 steps
of h = T / n_rk integrate a smooth right-hand side (:mod:`stillhook.sim.equations`)::

    k1 = f(tau, y), k2 = f(tau + h/2, y + h k1/2), k3 = f(tau + h/2, y + h k2/2), k4 = f(tau + h, y + h k3)
    y <- y + h (k1 + 2 k2 + 2 k3 + k4) / 6,   L1(tau) = L_k + L1'_k tau + L1''_k tau^2 / 2

with n_rk chosen so that w_max h <= step_rad (local error ~ (w_max h)^5 / 120). Two engines do the
same arithmetic in the same order: the compiled kernel (:mod:`stillhook.sim.kernel`, one run after
the other) and the numpy engine below (vectorized over the runs of the batch that share n_rk and
equations), which is the reference the tests compare the kernel with and the fallback where no C
compiler works.

Notes
-----
Classical Runge-Kutta method: Hairer, Norsett & Wanner, *Solving Ordinary Differential Equations I*,
2nd ed., Springer, 1993, section II.1.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from stillhook.sim.equations import numpy_rhs
from stillhook.sim.kernel import kernel_for

__all__ = ["StepPlan", "run_steps"]

#: Engine choices: the compiled kernel when it builds (else numpy), the compiled kernel only, numpy only.


@dataclass(frozen=True)
class StepPlan:
    """A batch of R runs for the steppers; drive tables are flat and shared between runs by offset.

    Attributes
    ----------
    cycle_s : float > 0
        Drive cycle T (s), common to the batch.
    sub : int >= 1
        Output samples per cycle (every n_rk / sub steps).
    par : ndarray, shape (R, 5)
        m1 (kg), m2 (kg), L2 (m), g (m/s^2), zeta per run.
    single : ndarray of int64, shape (R,)
        1 where the run uses the single-pendulum equations.
    n_rk : ndarray of int64, shape (R,)
        RK4 steps per cycle (multiples of sub).
    n_out : ndarray of int64, shape (R,)
        Output samples per run (the first at t = 0).
    tr_a, tr_off, tr_n : trolley acceleration tables (m/s^2), each run's offset and cycle count
    ho_L0 : ndarray, shape (R,)
        Each run's rope length at t = 0 (m), added to its rope table.
    ho_L, ho_v, ho_a, ho_off, ho_n : rope length change (m), rate (m/s), acceleration (m/s^2) at cycle starts
    y0 : ndarray, shape (R, 4)
        Initial theta1, theta2 (rad), theta1', theta2' (rad/s).
    """

    cycle_s: float
    sub: int
    par: np.ndarray
    single: np.ndarray
    n_rk: np.ndarray
    n_out: np.ndarray
    tr_a: np.ndarray
    tr_off: np.ndarray
    tr_n: np.ndarray
    ho_L0: np.ndarray
    ho_L: np.ndarray
    ho_v: np.ndarray
    ho_a: np.ndarray
    ho_off: np.ndarray
    ho_n: np.ndarray
    y0: np.ndarray

    @property
    def out_off(self) -> np.ndarray:
        """Row of each run's first output sample in the stacked output."""
        return np.concatenate([[0], np.cumsum(self.n_out)[:-1]]).astype(np.int64)


def _numpy_group(plan: StepPlan, idx: np.ndarray, Y: np.ndarray) -> None:
    """RK4 for the runs idx (same n_rk and equations), vectorized over them; rows written into Y."""
    f = numpy_rhs(bool(plan.single[idx[0]]))
    nrk = int(plan.n_rk[idx[0]])
    stride = nrk // plan.sub
    h = plan.cycle_s / nrk
    m1, m2, L2, g, zeta = (plan.par[idx, j] for j in range(5))
    n_out = plan.n_out[idx]
    out_row = plan.out_off[idx]
    tr_off, tr_last = plan.tr_off[idx], plan.tr_n[idx] - 1
    ho_off, ho_last = plan.ho_off[idx], plan.ho_n[idx] - 1
    L0 = plan.ho_L0[idx]
    y = [plan.y0[idx, i].copy() for i in range(4)]
    steps = int((n_out.max() - 1) * stride)

    def rhs(z, a, L, u, al, tau):
        return f(z[0], z[1], z[2], z[3], a, L + u * tau + 0.5 * al * tau * tau, u + al * tau, al, m1, m2, L2, g, zeta)

    for s in range(steps + 1):
        if s % stride == 0:
            j = s // stride
            live = j < n_out
            Y[out_row[live] + j] = np.stack(y, axis=1)[live]
        if s == steps:
            break
        k = s // nrk
        kt = tr_off + np.minimum(k, tr_last)
        kh = ho_off + np.minimum(k, ho_last)
        a, L, u, al = plan.tr_a[kt], L0 + plan.ho_L[kh], plan.ho_v[kh], plan.ho_a[kh]
        tau0 = float(s % nrk) * h
        tau1, tau2 = tau0 + 0.5 * h, tau0 + h
        k1 = rhs(y, a, L, u, al, tau0)
        k2 = rhs([y[i] + 0.5 * h * k1[i] for i in range(4)], a, L, u, al, tau1)
        k3 = rhs([y[i] + 0.5 * h * k2[i] for i in range(4)], a, L, u, al, tau1)
        k4 = rhs([y[i] + h * k3[i] for i in range(4)], a, L, u, al, tau2)
        y = [y[i] + h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]) for i in range(4)]


def _run_numpy(plan: StepPlan) -> np.ndarray:
    Y = np.empty((int(plan.n_out.sum()), 4))
    keys = plan.single * (1 << 40) + plan.n_rk
    for key in np.unique(keys):
        _numpy_group(plan, np.flatnonzero(keys == key), Y)
    return Y


def _run_compiled(plan: StepPlan, kernel) -> np.ndarray:
    ffi, lib = kernel
    Y = np.empty((int(plan.n_out.sum()), 4))

    def d(a):
        return ffi.from_buffer("double[]", np.ascontiguousarray(a, dtype=np.float64))

    def i(a):
        return ffi.from_buffer("int64_t[]", np.ascontiguousarray(a, dtype=np.int64))

    lib.shk_sim_batch(len(plan.n_rk), plan.cycle_s, plan.sub, d(plan.par), i(plan.single), i(plan.n_rk),
                      i(plan.n_out), i(plan.out_off), d(plan.tr_a), i(plan.tr_off), i(plan.tr_n),
                      d(plan.ho_L0), d(plan.ho_L), d(plan.ho_v), d(plan.ho_a), i(plan.ho_off), i(plan.ho_n), d(plan.y0),
                      ffi.from_buffer("double[]", Y, require_writable=True))
    return Y


def run_steps(plan: StepPlan, engine: str = "auto") -> tuple[np.ndarray, str]:
    """Integrate every run of the plan.

    Parameters
    ----------
    plan : StepPlan
    engine : {"auto", "compiled", "numpy"}
        "auto" uses the compiled kernel when it builds on this machine, else numpy.

    Returns
    -------
    (Y, used) : ndarray of shape (sum(n_out), 4), str
        States at the output samples, run after run (rows ``plan.out_off[r]`` on); the engine used.
    """
    kernel = kernel_for(engine)
    return (_run_numpy(plan), "numpy") if kernel is None else (_run_compiled(plan, kernel), "compiled")
