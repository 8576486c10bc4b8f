"""Discrete LQR and steady-state Kalman gains from the discrete algebraic Riccati equation (DARE).

Regulator: x[k+1] = A x[k] + B u[k], u = -K x, minimizing sum x' Q x + u' R u. S solves the DARE

    S = A' S A - A' S B (R + B' S B)^-1 B' S A + Q,      K = (R + B' S B)^-1 B' S A,

and the closed-loop poles are the eigenvalues of A - B K.

Estimator (the dual problem): x[k+1] = A x[k] + G w[k], y[k] = C x[k] + v[k], E[w w'] = QN,
E[v v'] = RN, w and v uncorrelated. The a-priori error covariance P solves

    P = A P A' - A P C' (C P C' + RN)^-1 C P A' + G QN G',

the predictor gain is L = A P C' (C P C' + RN)^-1 (x^[k+1|k] = A x^[k|k-1] + B u + L (y - C x^[k|k-1]))
and the estimator poles are the eigenvalues of A - L C.

Both solve the DARE with ``scipy.linalg.solve_discrete_are`` (scipy.linalg loads anyway: the rig's modes
use it) and make the gain as python-control's ``dlqr`` / ``dlqe`` do with their scipy method, operation
for operation; python-control itself (with scipy.signal, ~1-2 s of import) stays out of the design path
and serves as the tests' reference.

Notes
-----
G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of Dynamic Systems*, 3rd ed.,
Addison-Wesley, 1998, sections 9.2 (LQR) and 9.4 (steady-state Kalman filter), from memory;
B. D. O. Anderson and J. B. Moore, *Optimal Filtering*, Prentice Hall, 1979, chapter 4 (from memory).
Solver: W. F. Arnold and A. J. Laub, "Generalized eigenproblem algorithms and software for algebraic
Riccati equations", Proc. IEEE 72(12):1746-1754, 1984 (the method scipy cites).
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import eigvals, solve, solve_discrete_are

__all__ = ["kalman_predictor", "lqr_gain"]


def lqr_gain(A, B, Q, R) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(K, S, poles) of the discrete LQR (module docstring).

    Parameters
    ----------
    A : ndarray (n, n)
    B : ndarray (n, m)
    Q : ndarray (n, n), symmetric >= 0
    R : ndarray (m, m), symmetric > 0

    Returns
    -------
    K : ndarray (m, n)
        u = -K x.
    S : ndarray (n, n)
        The DARE's stabilizing solution.
    poles : ndarray (n,), complex
        Eigenvalues of A - B K.

    Raises
    ------
    numpy.linalg.LinAlgError, ValueError
        No stabilizing solution (e.g. the Hamiltonian pencil has eigenvalues on the unit circle).
    """
    # fresh copies as python-control makes them: BLAS rounds by memory layout, and the same layout gives
    # the same doubles as dlqr (checked on the design plants)
    A, B, Q, R = (np.array(m, ndmin=2, dtype=float) for m in (A, B, Q, R))
    S = solve_discrete_are(A, B, Q, R)
    K = solve(B.T @ S @ B + R, B.T @ S @ A)
    return K, S, eigvals(A - B @ K)


def kalman_predictor(A, G, C, QN, RN) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(L, P, poles) of the steady-state Kalman filter in predictor form (module docstring).

    Parameters
    ----------
    A : ndarray (n, n)
    G : ndarray (n, p)
        How the process noise w enters the state.
    C : ndarray (r, n)
    QN : ndarray (p, p), symmetric >= 0
        Covariance of w.
    RN : ndarray (r, r), symmetric > 0
        Covariance of the measurement noise v.

    Returns
    -------
    L : ndarray (n, r)
        Predictor gain.
    P : ndarray (n, n)
        A-priori error covariance (the dual DARE's solution); the current-estimator gain is
        M = P C' (C P C' + RN)^-1 with L = A M.
    poles : ndarray (n,), complex
        Eigenvalues of A - L C.

    Raises
    ------
    numpy.linalg.LinAlgError, ValueError
        No stabilizing solution.
    """
    A, G, C, QN, RN = (np.array(m, ndmin=2, dtype=float) for m in (A, G, C, QN, RN))
    # the regulator equations of the dual system (A', C', G QN G', RN): K_dual = L'
    L_T, P, poles = lqr_gain(A.T, C.T, G @ QN @ G.T, RN)
    return L_T.T, P, poles
