"""Matrix pencil: poles and amplitudes of a sum of damped sinusoids from uniform samples.

A record y[n] = sum_k c_k z_k^n + noise, n = 0..N-1, z_k = exp(s_k dt), fills the Hankel matrix

    Y = [[y0, y1, ..., yL], [y1, y2, ..., yL+1], ..., [yN-L-1, ..., yN-1]]     (N-L) x (L+1)

whose rank is the number of exponentials M. With Y = U S V^T truncated to the M largest singular
values and V1, V2 the rows 0..L-1 and 1..L of V, the poles are the eigenvalues of pinv(V1) V2
(the total-least-squares matrix pencil). The amplitudes c_k are then the least-squares solution of
the Vandermonde system y[n] = sum_k c_k z_k^n.

Notes
-----
Hua & Sarkar, "Matrix pencil method for estimating parameters of exponentially damped/undamped
sinusoids in noise", IEEE Trans. ASSP 38(5):814-824, 1990; the SVD (TLS) form: Sarkar & Pereira,
"Using the matrix pencil method to estimate the parameters of a sum of complex exponentials", IEEE
Antennas Propag. Mag. 37(1):48-55, 1995. Pencil parameter L between N/3 and N/2 is best for noise
(Hua & Sarkar 1990); it is capped here at :data:`MAX_PENCIL` columns to bound the SVD's cost — the
nonlinear refinement that follows recovers the accuracy.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["MAX_ORDER", "MAX_PENCIL", "NOISE_FACTOR", "PencilResult", "matrix_pencil"]

#: Largest model order (exponentials, counting each conjugate pair twice): two modes, an offset, a drift, spares.
MAX_ORDER = 8
#: Largest pencil parameter L (columns - 1 of the Hankel matrix).
MAX_PENCIL = 250
#: A singular value counts as signal when it exceeds this many times the noise floor.
NOISE_FACTOR = 3.0


@dataclass(frozen=True)
class PencilResult:
    """Poles s_k (rad/s, continuous), complex amplitudes c_k (y = sum c_k exp(s_k t)), singular values, order."""

    poles_rad_s: np.ndarray
    amplitudes: np.ndarray
    singular_values: np.ndarray
    order: int


def matrix_pencil(y, dt_s: float, *, max_order: int = MAX_ORDER) -> PencilResult:
    """Matrix pencil estimate of the exponentials in ``y`` (see module docstring).

    Parameters
    ----------
    y : array (N,), N >= 8
        Uniformly sampled record.
    dt_s : float > 0
        Sample interval.
    max_order : int >= 1
        Largest model order tried.

    Returns
    -------
    PencilResult
        The order M is the number of singular values above NOISE_FACTOR times the noise floor (the
        singular value at index max_order + 2, beyond any signal), at most max_order.
    """
    y = np.asarray(y, dtype=float)
    N = y.size
    L = int(min(MAX_PENCIL, max(2, N // 3)))
    Y = np.ascontiguousarray(np.lib.stride_tricks.sliding_window_view(y, L + 1))  # Y[i, j] = y[i + j]
    # right singular vectors and singular values of Y from the eigenproblem of Y^T Y ((L+1) x (L+1)): a few
    # times faster than the SVD of the tall Y; it resolves singular values down to ~1e-8 of the largest,
    # far below any sensor's noise floor
    lam, V_all = np.linalg.eigh(Y.T @ Y)
    order = np.argsort(lam)[::-1]
    sv = np.sqrt(np.maximum(lam[order], 0.0))
    Vt = V_all[:, order].T
    floor_index = min(max_order + 2, sv.size - 1)
    floor = max(sv[floor_index], 1e-12 * sv[0])
    M = int(np.count_nonzero(sv[:max_order] > NOISE_FACTOR * floor))
    M = max(1, min(M, max_order, L - 1))
    V = Vt[:M].T  # (L + 1, M)
    V1, V2 = V[:-1], V[1:]
    z = np.linalg.eigvals(np.linalg.lstsq(V1, V2, rcond=None)[0])
    z = z[np.abs(z) > 0]
    s = np.log(z.astype(complex)) / dt_s
    Z = np.exp(np.outer(np.arange(N) * dt_s, s))  # Vandermonde, (N, M)
    c = np.linalg.lstsq(Z, y.astype(complex), rcond=None)[0]
    return PencilResult(s, c, sv, M)
