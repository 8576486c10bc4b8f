"""Biquad cascade filter: agreement with scipy.signal.sosfilt (the reference library), both engines."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import sosfilt

from stillhook.errors import ConfigError
from stillhook.sim.sos_filter import sos_filter

ENGINES = ["compiled", "numpy"]


def random_stable_cascade(rng, n_sections: int) -> np.ndarray:
    """Random SOS: complex or real pole pairs of radius < 0.995, arbitrary zeros and gains, a0 = 1."""
    rows = []
    for _ in range(n_sections):
        if rng.random() < 0.7:
            r, th = rng.uniform(0.2, 0.995), rng.uniform(0.0, np.pi)
            a = [1.0, -2.0 * r * np.cos(th), r * r]
        else:
            p1, p2 = rng.uniform(-0.99, 0.99, 2)
            a = [1.0, -(p1 + p2), p1 * p2]
        rows.append(list(rng.normal(size=3) * rng.uniform(0.1, 3.0)) + a)
    return np.array(rows)


@pytest.mark.parametrize("engine", ENGINES)
@pytest.mark.parametrize("seed", range(12))
def test_matches_scipy_sosfilt_on_random_stable_cascades(engine, seed):
    # Reference: scipy.signal.sosfilt (same direct form II transposed recursion, same operation order).
    rng = np.random.default_rng(seed)
    sos = random_stable_cascade(rng, int(rng.integers(1, 6)))
    x = rng.normal(size=int(rng.integers(1, 3000))) * 10.0 ** rng.uniform(-3, 3)
    ref = sosfilt(sos, x)
    y = sos_filter(sos, x, engine=engine)
    assert y.shape == x.shape
    np.testing.assert_allclose(y, ref, rtol=0, atol=1e-15 * max(1.0, np.max(np.abs(ref))))


def test_engines_agree_bit_for_bit():
    rng = np.random.default_rng(99)
    sos, x = random_stable_cascade(rng, 4), rng.normal(size=5000)
    assert np.array_equal(sos_filter(sos, x, engine="compiled"), sos_filter(sos, x, engine="numpy"))


def test_empty_signal_and_identity_section():
    assert sos_filter([[1.0, 0, 0, 1.0, 0, 0]], []).shape == (0,)
    x = np.arange(5.0)
    assert np.array_equal(sos_filter([[1.0, 0, 0, 1.0, 0, 0]], x, engine="numpy"), x)


@pytest.mark.parametrize("sos, x, engine, match", [
    ([[1.0, 0, 0, 1.0, 0]], [1.0], "auto", "shape"),
    (np.zeros((0, 6)), [1.0], "auto", "at least one"),
    ([[1.0, 0, 0, 2.0, 0, 0]], [1.0], "auto", "a0 = 1"),
    ([[np.nan, 0, 0, 1.0, 0, 0]], [1.0], "auto", "finite"),
    ([[1.0, 0, 0, 1.0, 0, 0]], [[1.0]], "auto", "1-D"),
    ([[1.0, 0, 0, 1.0, 0, 0]], [1.0], "fortran", "engine"),
])
def test_bad_input_gives_one_clear_error(sos, x, engine, match):
    with pytest.raises(ConfigError, match=match):
        sos_filter(sos, x, engine=engine)
