"""A cascade of biquads (second-order sections, SOS) applied to a sampled signal, zero initial state.

Section s holds [b0, b1, b2, a0, a1, a2] with a0 = 1 (scipy's SOS layout); its input x is the output of
section s - 1 (the signal itself for s = 0). Direct form II transposed, per sample k:

    y[k] = b0 x[k] + z0
    z0   = (b1 x[k] - a1 y[k]) + z1
    z1   = b2 x[k] - a2 y[k]

with z0 = z1 = 0 before the first sample. These are the operations of ``scipy.signal.sosfilt`` in its
order, so both give the same doubles (the compiled kernel is built without multiply-add contraction);
scipy.signal itself is not imported here: it costs 0.5-1 s of start-up for one loop.

Notes
-----
Transposed direct form II: A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*,
3rd ed., Pearson, 2010, section 6.4 (from memory). The compiled loop is ``shk_sos_filter`` in the
simulator kernel (:mod:`stillhook.sim.kernel`, ``_kernel.c``); the Python loop below is the reference
and the fallback where no C compiler works (or ``STILLHOOK_SIM_ENGINE=numpy``).
"""

from __future__ import annotations

import numpy as np

from stillhook.errors import ConfigError
from stillhook.sim.kernel import kernel_for

__all__ = ["sos_filter"]


def _filter_python(sos: np.ndarray, x: np.ndarray) -> np.ndarray:
    """The recursion of the module docstring in Python floats (IEEE doubles, same operations and order)."""
    y = x.tolist()
    for b0, b1, b2, _a0, a1, a2 in sos.tolist():
        z0 = z1 = 0.0
        for k, xk in enumerate(y):
            yk = b0 * xk + z0
            z0 = b1 * xk - a1 * yk + z1
            z1 = b2 * xk - a2 * yk
            y[k] = yk
    return np.array(y, dtype=float)


def _filter_compiled(sos: np.ndarray, x: np.ndarray, kernel) -> np.ndarray:
    ffi, lib = kernel
    y = np.empty_like(x)
    lib.shk_sos_filter(len(sos), ffi.from_buffer("double[]", sos), len(x), ffi.from_buffer("double[]", x),
                       ffi.from_buffer("double[]", y, require_writable=True))
    return y


def sos_filter(sos, x, engine: str = "auto") -> np.ndarray:
    """Filter a 1-D signal through a biquad cascade from zero state (module docstring).

    Parameters
    ----------
    sos : array_like, shape (n_sections, 6)
        Rows [b0, b1, b2, a0, a1, a2] with a0 = 1, finite; n_sections >= 1.
    x : array_like, 1-D
        Samples (any unit; the output has the same unit times the cascade's gain).
    engine : {"auto", "compiled", "numpy"}
        "auto": the compiled kernel when it builds on this machine, else the Python loop.

    Returns
    -------
    ndarray, same length as x
    """
    sos = np.ascontiguousarray(sos, dtype=float)
    x = np.ascontiguousarray(x, dtype=float)
    if sos.ndim != 2 or sos.shape[1] != 6 or len(sos) == 0 or not np.all(np.isfinite(sos)):
        raise ConfigError(f"sos has shape {sos.shape}; allowed: finite rows [b0, b1, b2, a0, a1, a2], "
                          "at least one")
    if not np.all(sos[:, 3] == 1.0):
        raise ConfigError(f"sos has a0 = {sos[:, 3].tolist()}; allowed: a0 = 1 in every section")
    if x.ndim != 1:
        raise ConfigError(f"x has {x.ndim} dimensions; allowed: a 1-D signal")
    kernel = kernel_for(engine)
    return _filter_python(sos, x) if kernel is None else _filter_compiled(sos, x, kernel)
