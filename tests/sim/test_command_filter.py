"""The command-filter interface: shapers, notch cascades and the identity answer the same four questions."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import sosfilt

from stillhook.errors import ConfigError
from stillhook.notch.design import design_notches
from stillhook.shaping.closed_forms import zvd
from stillhook.shaping.cycle_grid import to_cycle_grid
from stillhook.sim.command_filter import UNFILTERED, CommandFilter

T = 0.005


@pytest.fixture(scope="module")
def filters():
    shaper = to_cycle_grid(zvd(0.3, 0.01), T, freqs_hz=[0.3], damping_ratio=0.01)
    notch = design_notches([0.3, 0.9], T)
    return {"unfiltered": UNFILTERED, "shaper": shaper, "notch": notch}


@pytest.mark.parametrize("key", ["unfiltered", "shaper", "notch"])
def test_each_filter_is_a_command_filter(filters, key):
    assert isinstance(filters[key], CommandFilter)


@pytest.mark.parametrize("key", ["unfiltered", "shaper", "notch"])
def test_added_duration_is_the_extra_command_length(filters, key):
    v = np.linspace(0.0, 0.5, 400)
    y = filters[key].apply(v, T)
    assert (len(y) - len(v)) * T == pytest.approx(filters[key].added_duration_s, abs=1e-12)


@pytest.mark.parametrize("key", ["unfiltered", "shaper", "notch"])
def test_mean_delay_is_the_centroid_of_the_impulse_response(filters, key):
    # centroid sum_k k T h[k] / sum_k h[k] of the response to a unit sample, summed numerically
    # (for the notch via scipy.signal.sosfilt, independent of the closed-form group delay at DC)
    flt = filters[key]
    n = 200_000
    impulse = np.zeros(n)
    impulse[0] = 1.0
    h = sosfilt(flt.sos, impulse) if key == "notch" else flt.apply(impulse, T)
    k = np.arange(h.size)
    assert float(np.sum(k * T * h) / np.sum(h)) == pytest.approx(flt.mean_delay_s, rel=1e-6, abs=1e-12)


def test_residual_vibration_of_the_identity_is_one(filters):
    np.testing.assert_array_equal(UNFILTERED.residual_vibration([0.5, 2.0], 0.01), [1.0, 1.0])


def test_residual_vibration_is_small_at_the_design_frequency(filters):
    w = 2 * np.pi * 0.3
    assert filters["shaper"].residual_vibration(w, 0.01) < 1e-2
    assert filters["notch"].residual_vibration(w, 0.0) < 1e-6


def test_notch_refuses_a_command_at_another_cycle(filters):
    with pytest.raises(ConfigError, match="designed for a 0.005 s cycle"):
        filters["notch"].apply(np.ones(10), 0.01)
