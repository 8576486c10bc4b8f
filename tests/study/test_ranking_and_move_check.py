"""Summaries rank by sway AND time; the project's design is checked on the project's own move (issue 11)."""

from __future__ import annotations

import tomllib

import pytest

from stillhook.project import project_from_dict
from stillhook.shaping.envelope_design import design_for_project
from stillhook.study.compare import compare_project
from stillhook.study.move_check import CANCELLED_SHARE, check_design_on_move
from stillhook.study.ranking import rank_designs, ranking_sentence
from tests.conftest import MINIMAL_TOML


def test_a_design_that_stops_much_later_is_never_recommended():
    # invented figures shaped like the demo: the notch leaves least sway but adds 96 s
    rows = [("zv", "ZV", 0.30, 1.2), ("two_mode", "two-mode", 0.045, 2.5), ("notch", "notch", 0.01, 96.0),
            ("band", "band", 0.049, 3.0), ("zvd", "ZVD", 0.12, None)]
    ranked = rank_designs(rows, 0.05)
    assert [r.key for r in ranked] == ["two_mode", "band", "notch", "zvd", "zv"]
    assert [r.slow for r in ranked] == [False, False, True, False, False]
    text = ranking_sentence(ranked, 0.05)
    assert text.startswith("recommended: two-mode") and "notch (adds 96 s)" in text


def test_no_design_meeting_the_tolerance_is_said():
    ranked = rank_designs([("a", "A", 0.0524, 2.0), ("b", "B", 0.2, 1.0)], 0.05)
    assert ranking_sentence(ranked, 0.05) == "no design meets the 5 % tolerance; closest: A at 5.24 %"


@pytest.fixture(scope="module")
def hoisting_project():
    data = tomllib.loads(MINIMAL_TOML)
    data["move"] = {"distance_m": 2.0, "hoist_to_m": 3.0, "hoist_start_s": 0.5}
    return project_from_dict(data)


def test_move_check_agrees_with_the_comparison_at_the_nominal_rig(hoisting_project):
    p = hoisting_project
    design = design_for_project(p)
    check = check_design_on_move(p, design.shaper)
    env = p.envelope
    assert len(check.points) == 5 and check.hoist  # nominal rig + 4 corners, hoisting included
    assert (check.points[0]["rope_length_m"], check.points[0]["payload_mass_kg"]) == (
        env.nominal_rope_length_m, env.nominal_payload_mass_kg)
    # the comparison runs the same move through its own code path at the nominal rig
    row = compare_project(p, methods=("two_mode",)).row("two_mode")
    assert check.points[0]["ratio"] == pytest.approx(row.residual_pct / 100.0, rel=1e-3)
    assert check.holds == (max(q["ratio"] for q in check.points) <= check.tolerance)
    assert ("tolerance holds" if check.holds else "does NOT hold") in check.sentence()


@pytest.mark.parametrize(("periods", "cancels"), [(4.0, True), (4.5, False)])
def test_a_move_whose_start_and_stop_swings_cancel_is_said(periods, cancels):
    # Linear superposition of the start and stop swings of a pendulum (derived): a trapezoid's acceleration
    # and braking begin D = distance / speed apart, so the low mode's residual goes as |sin(w D / 2)|: nearly
    # nothing when D is a whole number of its periods, about the peak sway when D is a half period off.
    data = tomllib.loads(MINIMAL_TOML)
    data["rig"].update(rope_length_m=5.0, payload_mass_kg=300.0)  # one rig: the check runs the nominal only
    p = project_from_dict(data)
    low = p.envelope.nominal_rig.modes()[0]
    data["move"] = {"distance_m": p.drive["max_speed_m_s"] * periods * low.period_s}
    p = project_from_dict(data)
    check = check_design_on_move(p, design_for_project(p).shaper)
    point = check.points[0]
    assert len(check.points) == 1
    assert check.unshaped_cancels is cancels
    assert (point["unshaped_m"] < CANCELLED_SHARE * point["unshaped_peak_m"]) is cancels
    assert ("largely cancel" in check.sentence()) is cancels


def test_the_comparison_notes_a_cancelled_unshaped_move():
    # the same rule as the move check, on the comparison's unshaped run (whole-period case of the test above)
    data = tomllib.loads(MINIMAL_TOML)
    data["rig"].update(rope_length_m=5.0, payload_mass_kg=300.0)
    low = project_from_dict(data).envelope.nominal_rig.modes()[0]
    data["move"] = {"distance_m": 0.6 * 4.0 * low.period_s}
    cmp = compare_project(project_from_dict(data), methods=("zv",))
    base = cmp.row("unshaped")
    assert base.residual_sway_m < CANCELLED_SHARE * base.peak_sway_m
    assert any(n.startswith("unshaped: the unshaped move leaves little sway") for n in cmp.notes)
