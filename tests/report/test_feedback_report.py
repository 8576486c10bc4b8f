"""The report's feedback section: damping map, scenario responses, cautions."""

from __future__ import annotations

import json
from types import SimpleNamespace

import numpy as np
import pytest

from stillhook.outputs import to_json
from stillhook.project import project_from_dict
from stillhook.report.feedback_section import feedback_figures, feedback_json, feedback_study, section_feedback
from stillhook.report.figures import figure_files
from stillhook.shaping.envelope_design import design_for_project

DATA = {"rig": {"hook_mass_kg": 200.0, "rigging_length_m": 1.5, "rope_length_m": [3.0, 4.0],
                "payload_mass_kg": [280.0, 320.0], "damping_ratio": 0.002},
        "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
        "move": {"distance_m": 1.5},
        "sensor": {"kind": "hook_angle_rad", "noise_sd": 0.0005},
        "feedback": {"rows": 2}}


@pytest.fixture(scope="module")
def section():
    project = project_from_dict(DATA, name="fbreport")
    fb = feedback_study(project, design_for_project(project))
    figs = feedback_figures(project, fb)
    png = {k[:-4]: v for k, v in figure_files(figs, formats=("png",)).items()}
    return fb, figs, section_feedback(SimpleNamespace(project=project, feedback=fb), png)


def test_feedback_section_shows_map_responses_and_cautions(section):
    fb, figs, html = section
    assert "Feedback: closed-loop sway damping" in html and "data:image/png" in html
    assert "must switch the feedback off" in html
    data = json.loads(to_json(feedback_json(fb)))
    # the map's least value is the reported worst case
    assert np.min(figs["feedback_damping_map"]["damping_ratio"]) == pytest.approx(
        data["worst_closed_loop_damping_ratio"])
    sway = data["scenarios"][0]["controllers"]
    assert sway["feedback"]["residual_payload_sway_m"] < sway["none"]["residual_payload_sway_m"]
