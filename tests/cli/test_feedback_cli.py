"""stillhook feedback, simulate --controller and compare --controller on a small project."""

from __future__ import annotations

import json

import pytest

from stillhook.cli import main

PROJECT = """
[rig]
hook_mass_kg = 200.0
rigging_length_m = 1.5
rope_length_m = [3.0, 4.0]
payload_mass_kg = [280.0, 320.0]
damping_ratio = 0.002

[drive]
cycle_s = 0.01
max_speed_m_s = 0.5
max_accel_m_s2 = 0.3
speed_loop_time_constant_s = 0.05

[move]
distance_m = 1.5

[sensor]
kind = "hook_angle_rad"
noise_sd = 0.0005
delay_cycles = 1

[feedback]
rows = 2
target_damping_ratio = 0.08
"""


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    p = tmp_path_factory.mktemp("fb") / "p.toml"
    p.write_text(PROJECT)
    return str(p)


def test_feedback_json_has_the_issue_keys(project, capsys):
    assert main(["feedback", project, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert {"rows", "worst_closed_loop_damping_ratio", "worst_at", "delay_margin_cycles", "cautions"} <= set(out)
    assert set(out["worst_at"]) == {"rope_length_m", "payload_mass_kg"}
    assert len(out["rows"]) == 2 and {"rope_length_m", "gains", "observer_gains"} <= set(out["rows"][0])
    assert any("sensor" in c for c in out["cautions"])


def test_simulate_with_feedback_json(project, capsys):
    assert main(["simulate", project, "--controller", "feedback", "--initial-sway-rad", "0.02", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert {"residual_payload_sway_m", "settle_s", "peak_speed_m_s", "end_error_m"} <= set(out)
    assert out["peak_speed_m_s"] <= 0.5 + 1e-9


def test_unknown_sensor_kind_is_one_clear_error(tmp_path, capsys):
    p = tmp_path / "bad.toml"
    p.write_text(PROJECT.replace('kind = "hook_angle_rad"', 'kind = "laser"'))
    assert main(["feedback", str(p)]) == 2
    err = capsys.readouterr().err
    assert "[sensor] kind" in err and "hook_angle_rad" in err


def test_compare_controllers_json(project, capsys):
    assert main(["compare", project, "--controller", "none", "--controller", "feedback", "--initial-sway-rad", "0.03",
                 "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    c = out["controllers"]
    assert set(c) == {"none", "feedback"}
    assert c["feedback"]["residual_payload_sway_m"] < c["none"]["residual_payload_sway_m"]
    assert out["scenario"]["initial_sway_rad"] == 0.03


def test_cli_controller_choices_are_the_studys():
    # the CLI keeps its choices light (no study import at start-up); they must be the study's own list
    from stillhook.cli._controllers import CONTROLLER_CHOICES
    from stillhook.study.controllers import CONTROLLERS

    assert CONTROLLER_CHOICES == CONTROLLERS
