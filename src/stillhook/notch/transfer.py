"""The notch cascade as a python-control transfer function (kept apart: python-control loads slowly)."""

from __future__ import annotations

import control
import numpy as np

__all__ = ["cascade_tf"]


def cascade_tf(design):
    """The cascade of ``design`` (a :class:`stillhook.notch.cascade.NotchDesign`) as a TransferFunction in z.

    dt = ``design.cycle_s``. The expanded polynomials are ill-conditioned near z = 1 when f0 << 1/T
    (their sums at z = 1 are ~(w T)^4): their DC gain is 1 only to ~1e-7. Filter with ``sos``, not
    with this.
    """
    num, den = np.array([1.0]), np.array([1.0])
    for row in design.sos:
        num, den = np.polymul(num, row[:3]), np.polymul(den, row[3:])
    return control.tf(num, den, design.cycle_s)
