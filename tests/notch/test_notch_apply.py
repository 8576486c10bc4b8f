"""The notch's command filtering (NotchDesign.apply) against scipy.signal.sosfilt, with either simulator engine."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import sosfilt

from stillhook.notch.design import design_notches
from stillhook.sim import kernel
from stillhook.sim.profiles import trapezoid


@pytest.mark.parametrize("engine", ["compiled", "numpy"])
def test_notch_command_filter_output_unchanged(engine, monkeypatch):
    # The notch's apply() (now through sos_filter) gives what scipy.signal.sosfilt gave before, with
    # either engine (the numpy one as the tool runs where no compiler is present).
    monkeypatch.setenv("STILLHOOK_SIM_ENGINE", "numpy" if engine == "numpy" else "auto")
    kernel.reset_kernel()
    try:
        assert (kernel.load_kernel() is None) == (engine == "numpy")
        T = 0.005
        notch = design_notches([0.21, 0.63], T)
        v = trapezoid(12.0, 1.0, 0.5, T)
        padded = np.concatenate([v, np.zeros(notch.ring_out_samples())])
        out = notch.apply(v, T)
        assert len(out) == len(padded)
        np.testing.assert_allclose(out, sosfilt(notch.sos, padded), rtol=0, atol=1e-15)
    finally:
        kernel.reset_kernel()
