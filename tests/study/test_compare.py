"""Comparison of shapers and the notch on a project's move (nonlinear simulation)."""

from __future__ import annotations

import json

import pytest

from stillhook.errors import ConfigError
from stillhook.project import project_from_dict
from stillhook.study.compare import METHODS, compare_project

# Invented two-mode rig: a light payload (60 kg) under a heavy hook block (400 kg) on 4 m of rigging;
# a small envelope around the nominal point and a 20 ms drive cycle keep the runs short.
TWO_MODE = {
    "rig": {"hook_mass_kg": 400.0, "rigging_length_m": 4.0, "rope_length_m": [5.5, 6.5],
            "payload_mass_kg": [50.0, 70.0], "nominal_rope_length_m": 6.0, "nominal_payload_mass_kg": 60.0},
    "drive": {"cycle_s": 0.02, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
    "move": {"distance_m": 4.0},
}


@pytest.fixture(scope="module")
def table():
    return compare_project(project_from_dict(TWO_MODE, name="two_mode"), rtol=1e-7)


def test_rows_in_order_and_unshaped_is_the_reference(table):
    assert [r.method for r in table.rows] == list(METHODS)
    base = table.row("unshaped")
    assert base.duration_s == 0.0
    assert table.rest_threshold_m == pytest.approx(0.05 * base.residual_sway_m)
    # undamped rig: the unshaped residual sway never falls to 5 % of itself
    assert base.added_delay_s is None


def test_unshaped_peak_includes_the_lean(table):
    # In the trolley's accelerating frame the hanging load leans by tan(theta) = a / g (quasi-static
    # equilibrium; Kibble & Berkshire, Classical Mechanics, 5th ed., 2004); starting from rest the sway
    # swings about that lean, so the peak payload offset is at least a (L1 + L2) / g.
    lean = 0.3 * (6.0 + 4.0) / 9.80665
    assert table.row("unshaped").peak_sway_m >= lean


def test_notch_and_two_mode_shaper_cut_residual_sway(table):
    # Issue requirement for the notch (<= 10 % of unshaped on the nonlinear model); the project design is
    # made for 5 % over both bands (Singer & Seering, ASME JDSMC 112(1), 1990 residual-vibration measure),
    # so on the nonlinear model it stays well inside 10 %.
    assert table.row("notch").residual_pct <= 10.0
    assert table.row("two_mode").residual_pct <= 10.0
    for method in ("notch", "two_mode"):
        r = table.row(method)
        assert r.added_delay_s is not None


def test_durations_and_final_position(table):
    # Shapers have unity gain (amplitudes sum to 1, Singer & Seering 1990), so the trapezoid-rule distance is
    # unchanged; the notch's DC gain is 1 but its padded tail is cut, a small error.
    for method in ("zv", "zvd", "ei", "band", "two_mode"):
        r = table.row(method)
        assert abs(r.final_position_error_m) < 1e-9
        assert r.duration_s > 0 and 0 < r.centroid_delay_s <= r.duration_s
        assert r.peak_speed_m_s <= 0.5 * (1 + 1e-9)  # positive impulses never exceed the command
    notch = table.row("notch")
    assert abs(notch.final_position_error_m) < 2e-3
    assert notch.duration_s > 0 and notch.centroid_delay_s > 0
    # ZV lasts half a period of the mode it is tuned to, ZVD a whole one (Singer & Seering 1990)
    assert table.row("zvd").duration_s == pytest.approx(2 * table.row("zv").duration_s, abs=2 * table.cycle_s)


def test_json_ready(table):
    text = json.dumps(table.as_dict(), indent=2, allow_nan=False)
    data = json.loads(text)
    assert [r["method"] for r in data["rows"]] == list(METHODS)
    assert "added_delay_s" in data["definitions"]
    assert data["hoist_during_move"] is False


def test_unknown_method_is_an_error():
    with pytest.raises(ConfigError, match="allowed"):
        compare_project(project_from_dict(TWO_MODE), methods=("unshaped", "fancy"))


def test_at_rest_needs_the_payload_at_the_destination():
    # A payload hanging still 0.5 m short of the destination is not at rest there; the definition measures
    # the payload's place (trolley + offset), not only its sway.
    from types import SimpleNamespace

    import numpy as np

    from stillhook.study.compare import time_at_rest_s

    t = np.linspace(0.0, 10.0, 101)
    trolley = np.minimum(t, 5.0)                       # arrives at 5 m at t = 5 s
    sway = np.where(t < 7.0, 0.2 * np.sin(t), 0.001)    # sway dies at t = 7 s
    res = SimpleNamespace(t_s=t, trolley_position_m=trolley, payload_offset_m=sway)
    assert time_at_rest_s(res, 5.0, 0.01) == pytest.approx(7.0)
    assert time_at_rest_s(res, 5.5, 0.01) is None        # never within 1 cm of 5.5 m
    assert time_at_rest_s(res, 5.0, 10.0) == 0.0
