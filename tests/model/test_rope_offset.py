"""[rig] rope_offset_m: the pendulum length is the encoder rope length plus the offset, everywhere the model is
used (rigs, frequency maps, residual maps, the sweep's modal batch) while rope lengths stay the encoder's."""

from __future__ import annotations

import tomllib
from dataclasses import replace

import numpy as np
import pytest

from stillhook.errors import ConfigError, RigError
from stillhook.model.envelope import Envelope
from stillhook.project import demo_project_text, project_from_dict
from stillhook.shaping.residual_map import payload_participations
from stillhook.study.modal_sweep import ModalBatch

OFFSET = 0.45


@pytest.fixture()
def pair():
    """The same crane described twice: encoder lengths + offset, and the pendulum lengths themselves."""
    env = Envelope(400.0, 3.0, (2.0, 9.0), (100.0, 900.0), 0.004, rope_offset_m=OFFSET)
    shifted = Envelope(400.0, 3.0, (2.0 + OFFSET, 9.0 + OFFSET), (100.0, 900.0), 0.004)
    return env, shifted


def test_the_rig_of_an_encoder_length_hangs_at_length_plus_offset(pair):
    env, shifted = pair
    assert env.rig(4.0, 300.0).rope_length_m == pytest.approx(4.0 + OFFSET)
    assert env.rig(4.0, 300.0).modes()[0].frequency_hz == shifted.rig(4.0 + OFFSET, 300.0).modes()[0].frequency_hz


def test_maps_and_the_sweep_see_the_offset_once(pair):
    env, shifted = pair
    L, m = np.array([2.0, 5.0, 9.0]), np.array([100.0, 500.0])
    np.testing.assert_allclose(env.frequency_map_hz(L, m), shifted.frequency_map_hz(L + OFFSET, m), rtol=1e-13)
    np.testing.assert_allclose(payload_participations(env, L, m)[1], payload_participations(shifted, L + OFFSET, m)[1],
                               rtol=1e-12)
    a = ModalBatch.from_envelope(env, L, np.full(3, 300.0))
    b = ModalBatch.from_envelope(shifted, L + OFFSET, np.full(3, 300.0))
    np.testing.assert_allclose(a.omega_rad_s, b.omega_rad_s, rtol=1e-13)
    np.testing.assert_array_equal(a.rope_length_m, L)  # the sweep still reports encoder lengths
    np.testing.assert_allclose(env.mode_bands_hz(), shifted.mode_bands_hz(), rtol=1e-12)


def test_the_project_key_reaches_the_envelope_and_is_checked():
    data = tomllib.loads(demo_project_text())
    assert project_from_dict(data).envelope.rope_offset_m == 0.0
    data["rig"]["rope_offset_m"] = OFFSET
    assert project_from_dict(data).envelope.rope_offset_m == OFFSET
    data["rig"]["rope_offset_m"] = -1.5  # shortest rope 1.2 m: the pendulum would have negative length
    with pytest.raises(ConfigError, match="rope_offset_m = -1.5 makes the pendulum length"):
        project_from_dict(data)


def test_an_offset_that_is_not_a_number_is_refused(pair):
    with pytest.raises(RigError, match="rope_offset_m"):
        replace(pair[0], rope_offset_m=float("nan"))
