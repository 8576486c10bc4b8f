"""The one half-drive-rate rule and its use by every design stage."""

from __future__ import annotations

import pytest

from stillhook.errors import DesignError
from stillhook.notch.design import design_notches
from stillhook.shaping.band_design import band_shaper
from stillhook.shaping.request import shaper_request
from stillhook.sim.drive_rate import check_below_half_rate, half_rate_hz


def test_half_rate_is_the_sampling_limit():
    # sampling theorem (Shannon, Proc. IRE 37(1), 1949): a sequence at 1/T carries frequencies up to 1/(2T)
    assert half_rate_hz(0.005) == 100.0


def test_shapers_may_reach_the_half_rate_notches_may_not():
    check_below_half_rate([100.0], 0.005)  # a shaper at f_half is fine
    with pytest.raises(DesignError, match=r"frequency 100\.5 Hz is above half the drive rate \(100 Hz"):
        check_below_half_rate([50.0, 100.5], 0.005)
    with pytest.raises(DesignError, match=r"notch frequency 100 Hz is at or above .* drive cycle below 0\.005 s"):
        check_below_half_rate([100.0], 0.005, what="notch frequency", strict=True)


def test_every_design_stage_uses_the_rule():
    for make in (lambda: band_shaper(0.5, 30.0, cycle_s=0.05),
                 lambda: shaper_request(method="zv", freqs_hz=[30.0], cycle_s=0.05),
                 lambda: design_notches(80.0, 0.01),
                 lambda: design_notches(3.0, 0.01, bands_hz=[(2.0, 60.0)])):
        with pytest.raises(DesignError, match="half the drive rate"):
            make()
