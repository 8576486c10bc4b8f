"""Nonlinear least squares of damped sinusoids on the raw samples, with standard deviations.

Model (one offset, K modes, t from the segment start)::

    y(t) = c + sum_k exp(-sigma_k t) (a_k cos(wd_k t) + b_k sin(wd_k t))

    wn_k = sqrt(wd_k^2 + sigma_k^2),  f_k = wn_k / (2 pi),  zeta_k = sigma_k / wn_k

f_k is the undamped natural frequency (the modulus of the pole), the quantity the rig model predicts.

Standard deviations: Gauss-Newton covariance s^2 (J^T J)^-1 at the optimum, s^2 = RSS / (N - p), propagated
to f and zeta by their first derivatives (delta method), and inflated by the residual's correlation
(1 + 2 sum rho_k, summed while rho_k > 0.05): correlated residuals carry fewer independent samples.

Notes
-----
Least squares with an analytic Jacobian: scipy.optimize.least_squares (Levenberg-Marquardt, MINPACK).
Covariance of nonlinear least squares: Seber & Wild, *Nonlinear Regression*, Wiley 1989, ch. 2 (from
memory). Effective sample size of an autocorrelated series: Bayley & Hammersley, J. R. Stat. Soc. Suppl.
8(2):184-197, 1946 (from memory). For one undamped tone in white noise the frequency variance this gives
matches the Cramer-Rao bound 12 sigma^2 / (A^2 N (N^2 - 1)) dt^-2 (Kay 1993, Example 3.14): the test suite
checks that.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

__all__ = ["DampedFit", "MAX_CORRELATION_LAGS", "fit_damped_sinusoids"]

#: Lags summed at most for the residual-correlation inflation.
MAX_CORRELATION_LAGS = 200


@dataclass(frozen=True)
class DampedFit:
    """Refined modes of one record, low frequency first.

    Attributes
    ----------
    frequency_hz, frequency_sd_hz, damping_ratio, damping_ratio_sd : ndarray (K,)
    amplitude : ndarray (K,)
        sqrt(a^2 + b^2), the mode's amplitude at t = 0, in the signal's unit.
    amplitude_sd : ndarray (K,)
    phase_rad : ndarray (K,)
        phi in A exp(-sigma t) cos(wd t + phi).
    offset : float
    fitted : ndarray (N,)
        The model at the samples.
    rms_ratio : float
        rms(residual) / rms(y - offset).
    inflation : float >= 1
        The residual-correlation factor applied to the covariance.
    """

    frequency_hz: np.ndarray
    frequency_sd_hz: np.ndarray
    damping_ratio: np.ndarray
    damping_ratio_sd: np.ndarray
    amplitude: np.ndarray
    amplitude_sd: np.ndarray
    phase_rad: np.ndarray
    offset: float
    fitted: np.ndarray
    rms_ratio: float
    inflation: float


def _model(p: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Model values and Jacobian for p = [c, wd_1, sigma_1, a_1, b_1, ...]."""
    K = (p.size - 1) // 4
    J = np.empty((t.size, p.size))
    J[:, 0] = 1.0
    y = np.full(t.size, p[0])
    for k in range(K):
        wd, sigma, a, b = p[1 + 4 * k: 5 + 4 * k]
        e = np.exp(-sigma * t)
        C, S = e * np.cos(wd * t), e * np.sin(wd * t)
        yk = a * C + b * S
        y += yk
        J[:, 1 + 4 * k] = t * (b * C - a * S)  # d/d wd
        J[:, 2 + 4 * k] = -t * yk               # d/d sigma
        J[:, 3 + 4 * k] = C
        J[:, 4 + 4 * k] = S
    return y, J


def _inflation(r: np.ndarray) -> float:
    """1 + 2 sum rho_k over the lags where the residual autocorrelation rho_k stays above 0.05."""
    r = r - r.mean()
    n = r.size
    spec = np.fft.rfft(r, 2 * n)
    acf = np.fft.irfft(spec * np.conj(spec))[: min(n, MAX_CORRELATION_LAGS + 1)]
    if acf[0] <= 0:
        return 1.0
    rho = acf[1:] / acf[0]
    stop = int(np.argmax(rho < 0.05)) if np.any(rho < 0.05) else rho.size
    return float(max(1.0, 1.0 + 2.0 * rho[:stop].sum()))


def fit_damped_sinusoids(t_s, y, poles_rad_s, amplitudes, offset: float = 0.0) -> DampedFit:
    """Refine damped sinusoids on the raw samples by nonlinear least squares.

    Parameters
    ----------
    t_s : array (N,)
        Sample times from the segment start (s), increasing.
    y : array (N,)
    poles_rad_s : complex array (K,)
        Starting poles -sigma + j wd, wd > 0 (one per mode).
    amplitudes : complex array (K,)
        Starting complex amplitudes c_k of y = 2 Re(c_k exp(s_k t)).
    offset : float
        Starting offset c.

    Returns
    -------
    DampedFit
        Modes in increasing frequency.
    """
    t, y = np.asarray(t_s, dtype=float), np.asarray(y, dtype=float)
    s, c = np.asarray(poles_rad_s, dtype=complex), np.asarray(amplitudes, dtype=complex)
    p0 = [offset]
    for sk, ck in zip(s, c, strict=True):
        p0 += [sk.imag, -sk.real, 2.0 * ck.real, -2.0 * ck.imag]
    res = least_squares(lambda p: _model(p, t)[0] - y, np.array(p0), jac=lambda p: _model(p, t)[1],
                        method="lm", x_scale="jac", ftol=1e-12, xtol=1e-12, gtol=1e-12, max_nfev=200)
    p = res.x
    fitted, J = _model(p, t)
    r = y - fitted
    dof = max(1, t.size - p.size)
    inflation = _inflation(r)
    JtJ = J.T @ J
    cov = np.linalg.pinv(JtJ) * (float(r @ r) / dof) * inflation
    K = s.size
    out = {k: np.empty(K) for k in ("f", "fsd", "z", "zsd", "A", "Asd", "phi")}
    for k in range(K):
        i = 1 + 4 * k
        wd, sigma, a, b = p[i: i + 4]
        wn = float(np.hypot(wd, sigma))
        # f = wn / 2pi; zeta = sigma / wn; A = hypot(a, b): gradients in (wd, sigma) and (a, b)
        gf = np.array([wd / wn, sigma / wn]) / (2 * np.pi)
        gz = np.array([-sigma * wd, wd * wd]) / wn**3
        A = float(np.hypot(a, b))
        gA = np.array([a, b]) / A if A > 0 else np.zeros(2)
        Cw, Ca = cov[i: i + 2, i: i + 2], cov[i + 2: i + 4, i + 2: i + 4]
        out["f"][k], out["z"][k], out["A"][k] = wn / (2 * np.pi), sigma / wn, A
        out["fsd"][k] = np.sqrt(max(gf @ Cw @ gf, 0.0))
        out["zsd"][k] = np.sqrt(max(gz @ Cw @ gz, 0.0))
        out["Asd"][k] = np.sqrt(max(gA @ Ca @ gA, 0.0))
        out["phi"][k] = np.arctan2(-b, a)
    order = np.argsort(out["f"])
    centred = y - p[0]
    rms_ratio = float(np.sqrt(np.mean(r * r)) / max(np.sqrt(np.mean(centred * centred)), 1e-300))
    return DampedFit(out["f"][order], out["fsd"][order], out["z"][order], out["zsd"][order], out["A"][order],
                     out["Asd"][order], out["phi"][order], float(p[0]), fitted, rms_ratio, inflation)
