"""Envelope maps and bands."""

import numpy as np
import pytest

from stillhook.errors import RigError
from stillhook.model.envelope import Envelope
from stillhook.model.rig import Rig


def test_frequency_map_matches_pointwise_modes():
    env = Envelope(340.0, 3.1, (1.2, 9.5), (70.0, 1600.0))
    Ls, ms = env.grid(5, 4)
    F = env.frequency_map_hz(Ls, ms)
    assert F.shape == (5, 4, 2)
    for i, L in enumerate(Ls):
        for j, m in enumerate(ms):
            f = [mode.frequency_hz for mode in Rig(340.0, m, L, 3.1).modes()]
            np.testing.assert_allclose(F[i, j], f, rtol=1e-10)


def test_bands_enclose_the_map_and_sit_at_corners():
    env = Envelope(340.0, 3.1, (1.2, 9.5), (70.0, 1600.0))
    bands = env.mode_bands_hz()
    F = env.frequency_map_hz(*env.grid(101, 101))
    for i, (lo, hi) in enumerate(bands):
        assert F[..., i].min() >= lo - 1e-12 and F[..., i].max() <= hi + 1e-12
    # low mode: highest at short rope and light payload, lowest at long rope and heavy payload
    corner = [m.frequency_hz for m in Rig(340.0, 70.0, 1.2, 3.1).modes()]
    assert bands[0][1] == pytest.approx(corner[0], rel=1e-12)


def test_single_mode_envelope():
    env = Envelope(200.0, 0.0, (2.0, 8.0), (0.0, 500.0))
    assert not env.has_two_modes
    assert len(env.mode_bands_hz()) == 1


def test_bad_envelope():
    with pytest.raises(RigError, match="min > max"):
        Envelope(200.0, 1.0, (8.0, 2.0), (0.0, 500.0))
    with pytest.raises(RigError, match="nominal_rope_length_m"):
        Envelope(200.0, 1.0, (2.0, 8.0), (0.0, 500.0), nominal_rope_length_m=9.0)
