"""Notch-filtered moves on the nonlinear hook-and-payload model."""

from __future__ import annotations

import numpy as np
import pytest

from stillhook.notch.design import notch_for_project
from stillhook.project import project_from_dict
from stillhook.sim.dynamics import simulate
from stillhook.sim.profiles import trapezoid

# Invented rig: a light payload (60 kg) under a heavy hook block (400 kg) on long rigging (4 m), so both
# sway modes show in the payload's motion (0.188 Hz and 0.289 Hz at the nominal point).
TWO_MODE_RIG = {
    "rig": {"hook_mass_kg": 400.0, "rigging_length_m": 4.0, "rope_length_m": [5.5, 6.5],
            "payload_mass_kg": [50.0, 70.0], "nominal_rope_length_m": 6.0, "nominal_payload_mass_kg": 60.0},
    "drive": {"cycle_s": 0.02, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
}


@pytest.fixture(scope="module")
def runs():
    project = project_from_dict(TWO_MODE_RIG, name="two_mode")
    T = project.drive["cycle_s"]
    rig = project.envelope.nominal_rig
    design = notch_for_project(project)
    v = trapezoid(4.0, 0.5, 0.3, T)
    v_f = design.apply(v)
    # rtol 1e-7 keeps the run short; the residual measured is ~1e3 times above the integration error
    return (rig, design, v, v_f, simulate(rig, v, T, rtol=1e-7), simulate(rig, v_f, T, rtol=1e-7))


def test_both_modes_matter_on_this_rig(runs):
    # Payload participation of each mode (Kibble & Berkshire 2004 mode shapes via stillhook.model.rig): the
    # high mode carries more than 10 % of the low mode's payload amplitude, so a one-mode filter is not enough.
    rig = runs[0]
    low, high = rig.modes()
    assert abs(high.payload_participation_m_per_m_s2) > 0.1 * abs(low.payload_participation_m_per_m_s2)


def test_notch_cuts_residual_sway_to_10_percent(runs):
    # Issue requirement, checked on the nonlinear model (Lagrange equations of the double pendulum,
    # Kibble & Berkshire, Classical Mechanics, 5th ed., 2004): residual payload sway with the notch-filtered
    # trapezoid <= 10 % of the unfiltered trapezoid's at the nominal point.
    _, design, _, _, plain, filtered = runs
    assert plain.residual_payload_sway_m > 0.1  # the unfiltered move really leaves sway
    assert filtered.residual_payload_sway_m <= 0.10 * plain.residual_payload_sway_m
    # The linear prediction |H| at both modes is within the tolerance the widths were made for.
    modes = runs[0].modes()
    assert np.all(design.residual_vibration([m.omega_rad_s for m in modes]) <= design.tolerance)


def test_filtered_move_ends_at_the_target(runs):
    # DC gain 1: the trolley travels the commanded distance; the truncated filter tail leaves a small error.
    _, design, v, v_f, plain, filtered = runs
    assert plain.trolley_position_m[-1] == pytest.approx(4.0, abs=1e-9)
    assert filtered.trolley_position_m[-1] == pytest.approx(4.0, abs=2e-3)
    assert len(v_f) == len(v) + design.ring_out_samples()
