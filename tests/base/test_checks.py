"""The shared number check: wrong types and values become the module's own one-line error."""

import numpy as np
import pytest

from stillhook.checks import finite_number
from stillhook.errors import ConfigError, DesignError, RigError
from stillhook.model.rig import Rig
from stillhook.shaping.closed_forms import zv
from stillhook.sim.dynamics import simulate
from stillhook.sim.profiles import pendant_steps


@pytest.mark.parametrize("value, words", [(None, "not a number"), ("x", "not a number"), (True, "not a number"),
                                          (float("nan"), "not finite"), (0.0, "out of range"), (2.0, "out of range")])
def test_finite_number_names_value_and_allowed(value, words):
    with pytest.raises(DesignError, match=words) as info:
        finite_number("gain", value, allowed="0 < gain <= 1", error=DesignError, lo=0.0, lo_ok=False, hi=1.0)
    assert str(info.value).startswith(f"gain = {value!r}") and str(info.value).endswith("allowed: 0 < gain <= 1")
    assert finite_number("gain", 1.0, allowed="", lo=0.0, hi=1.0) == 1.0


def test_inputs_that_used_to_escape_as_type_errors():
    with pytest.raises(ConfigError, match="settle_s"):
        simulate(Rig(100.0, 50.0, 3.0, 1.0), np.zeros(3), 0.01, settle_s=None)
    with pytest.raises(ConfigError, match="speed_m_s"):
        pendant_steps([(1.0, None)], 0.2, 0.01)
    with pytest.raises(DesignError, match="frequency"):
        zv(None)
    with pytest.raises(RigError, match="hook_mass_kg"):
        Rig(True, 50.0, 3.0, 1.0)
