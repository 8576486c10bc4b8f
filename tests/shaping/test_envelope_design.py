"""Design from a project: bands, high-mode decision, envelope guarantee, length schedule."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from stillhook.model.lookup import schedule_rows
from stillhook.project import load_project, project_from_dict
from stillhook.shaping.design_cache import DESIGN_CACHE
from stillhook.shaping.envelope_design import (
    POOL_MIN_SECONDS,
    ROW_SECONDS_PER_IMPULSE,
    design_for_project,
    design_schedule,
    envelope_shaper_for_project,
    schedule_for_project,
    schedule_ratio,
    schedule_workers,
)
from stillhook.shaping.residual_map import mode_shares, payload_participations, residual_ratio
from stillhook.shaping.shaper import Shaper
from stillhook.workers import worker_count


@pytest.fixture(scope="module")
def demo_design(demo_project):
    return design_for_project(demo_project)


def dense_grid(env, nL=97, nm=89):
    """A grid that does not line up with the design's own check grid."""
    (a, b), (c, d) = env.rope_length_range_m, env.payload_mass_range_kg
    return np.linspace(a, b, nL), np.linspace(c, d, nm)


def test_participations_hold_the_quasi_static_lean_and_an_empty_hook_has_one_mode(demo_project):
    # The grid comes from the one batch decomposition (checked against Rig.modes() in
    # tests/model/test_modal_batch.py). Physical law: the static offsets of both modes add up to the
    # quasi-static lean -a (L1 + L2)/g.
    env = demo_project.envelope
    Ls, ms = np.array([1.2, 3.3, 9.5]), np.array([0.0, 70.0, 400.0, 1600.0])
    F, P = payload_participations(env, Ls, ms)
    assert F.shape == P.shape == (3, 4, 2)
    lean = -(Ls[:, None] + env.rigging_length_m) / env.gravity_m_s2 * np.ones((1, ms.size))
    np.testing.assert_allclose(P.sum(axis=-1), lean, rtol=1e-10)
    # an empty hook (0 kg): one mode, the rigging in line, as the Rig model has it
    assert np.all(P[:, 0, 1] == 0.0)
    _, shares = mode_shares(env, Ls, ms)
    assert np.all(shares[:, 0, 0] == 1.0)


def test_demo_treats_the_high_mode_and_says_why(demo_project, demo_design):
    d = demo_design
    assert d.high_mode_treated
    assert d.reason.startswith("high mode treated") and "%" in d.reason and "payload" in d.reason
    np.testing.assert_allclose(d.bands_hz, demo_project.envelope.mode_bands_hz(), rtol=1e-3)
    assert d.convolved is not None and d.shaper.duration_s <= d.convolved.duration_s


def test_demo_design_holds_the_tolerance_over_a_dense_envelope(demo_project, demo_design):
    env, d = demo_project.envelope, demo_design
    s = d.shaper
    assert s.on_grid(d.cycle_s) and np.all(s.amplitudes >= 0) and s.amplitudes.sum() == pytest.approx(1.0)
    ratio, _ = residual_ratio(env, s, *dense_grid(env))
    assert ratio.max() <= d.tolerance
    assert d.worst_ratio <= d.tolerance and d.meets_tolerance
    # each treated mode's V holds over its whole band (dense, numpy only)
    for lo, hi in d.bands_hz:
        assert s.vibration_at_hz(np.linspace(lo, hi, 50001), env.damping_ratio).max() <= d.tolerance


def test_demo_schedule_rows_lookup_and_between_rows(demo_project, demo_design):
    env, sched = demo_project.envelope, demo_design.schedule
    assert sched is not None and sched is schedule_for_project(demo_project)
    L = sched.rope_lengths_m
    assert L[0] == env.rope_length_range_m[0] and L[-1] == env.rope_length_range_m[1]
    assert np.all(np.diff(L) > 0) and 2 <= L.size <= demo_project.design["max_schedule_rows"]
    assert all(s.on_grid(sched.cycle_s) and np.all(s.amplitudes >= 0) for s in sched.shapers)
    # lookup: the one rule of stillhook.model.lookup (checked against its definition in test_lookup.py)
    probe = np.linspace(L[0] - 0.5, L[-1] + 0.5, 1001)
    np.testing.assert_array_equal(sched.row_for(probe), schedule_rows(L, probe, "nearest"))
    assert sched.row_for(0.5 * (L[0] + L[1])) == 1
    # the tolerance holds between rows too: dense rope lengths, each using its row
    Ls, ms = dense_grid(env, 401, 41)
    assert schedule_ratio(env, sched, Ls, ms).max() <= sched.tolerance
    # the point of scheduling: shorter shapers where the rope is short
    assert sched.shapers[0].duration_s < demo_design.shaper.duration_s


def test_design_as_dict_is_json_and_deterministic(demo_project, demo_design):
    a = json.dumps(demo_design.as_dict(), allow_nan=False, sort_keys=False)
    # empty the design caches so the second design is really computed again (restored afterwards)
    with DESIGN_CACHE.emptied():
        assert sum(DESIGN_CACHE.sizes().values()) == 0
        b = json.dumps(design_for_project(demo_project).as_dict(), allow_nan=False)
    assert a == b
    d = json.loads(a)
    assert d["impulses"][0] == {"time_s": 0.0, "amplitude": d["impulses"][0]["amplitude"], "delay_cycles": 0}
    assert d["schedule"]["lookup_rule"] == "nearest"
    assert "cautions" not in d  # added at the output edge (CLI, report, emitted files), not by the design


def test_minimal_project_default_keeps_sway_within_five_percent(minimal_project_file):
    # A project with only [rig] and [drive]: the default design (auto, 5 %, schedule) must keep residual
    # payload sway within 5 % of unshaped over the whole envelope, single shaper and schedule alike.
    p = load_project(minimal_project_file)
    d = design_for_project(p)
    env = p.envelope
    assert d.tolerance == 0.05 and d.schedule is not None
    grid = dense_grid(env)
    assert residual_ratio(env, d.shaper, *grid)[0].max() <= 0.05
    assert schedule_ratio(env, d.schedule, np.linspace(*env.rope_length_range_m, 301), grid[1]).max() <= 0.05


PAYLOAD_DOMINATED = {
    "rig": {"hook_mass_kg": 40.0, "rigging_length_m": 1.0, "rope_length_m": [4.0, 8.0],
            "payload_mass_kg": [1500.0, 3000.0]},
    "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
    "design": {"schedule": False},
}


def test_payload_dominated_rig_skips_the_high_mode_with_numbers():
    p = project_from_dict(PAYLOAD_DOMINATED)
    d = design_for_project(p)
    assert not d.high_mode_treated and d.schedule is None
    assert d.reason.startswith("high mode not treated") and "within the 5 % tolerance" in d.reason
    env = p.envelope
    ratio, contrib = residual_ratio(env, d.shaper, *dense_grid(env))
    assert ratio.max() <= 0.05 and contrib[..., 1].max() < 0.01
    # the shaper covers the low band only: its V over the high band is not held to the tolerance
    lo, hi = d.bands_hz[0]
    assert d.shaper.vibration_at_hz(np.linspace(lo, hi, 20001), env.damping_ratio).max() <= 0.05


@pytest.mark.parametrize("method", ["zvd", "ei"])
def test_closed_form_methods_are_on_grid_and_report_their_coverage(method):
    data = {**PAYLOAD_DOMINATED, "design": {"schedule": False, "method": method}}
    d = design_for_project(project_from_dict(data))
    assert d.method == method and d.shaper.on_grid(0.01)
    ratio, _ = residual_ratio(project_from_dict(data).envelope, d.shaper, *dense_grid(project_from_dict(data).envelope))
    assert d.worst_ratio == pytest.approx(ratio.max(), rel=0.02)


def test_mode_above_half_the_drive_rate_is_refused():
    from stillhook.errors import DesignError

    # within the plausibility bounds only a high mode can pass half the drive rate: a light hook on 2 cm of
    # rigging (7.6-9.2 Hz) at the slowest cycle (0.1 s: 5 Hz), and a tolerance so tight that it needs treatment
    data = {"rig": {"hook_mass_kg": 5.0, "rigging_length_m": 0.02, "rope_length_m": [0.1, 0.2],
                    "payload_mass_kg": 20.0},
            "drive": {"cycle_s": 0.1, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
            "design": {"tolerance_pct": 0.005}}
    with pytest.raises(DesignError, match="high sway mode.s highest frequency .* above half the drive rate"):
        design_for_project(project_from_dict(data))


@pytest.mark.parametrize("rig, n_bands", [
    ({"hook_mass_kg": 400.0, "rigging_length_m": 0.0, "rope_length_m": [2.0, 8.0], "payload_mass_kg": [0.0, 500.0]}, 1),
    ({"hook_mass_kg": 400.0, "rigging_length_m": 4.0, "rope_length_m": 5.0, "payload_mass_kg": 60.0}, 2),
])
def test_single_mode_and_single_point_envelopes(rig, n_bands):
    p = project_from_dict({"rig": rig, "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
                           "design": {"schedule": False}})
    d = design_for_project(p)
    assert len(d.bands_hz) == n_bands and d.shaper.on_grid(0.01) and d.meets_tolerance
    for lo, hi in d.bands_hz:  # a single point still gets a +-2 % band (robustness to the estimate)
        assert hi / lo >= 1.04 * (1 - 1e-9)


def test_design_reports_its_stages_as_they_finish():
    # the work is known up front (the whole-envelope shaper, then each schedule row) and reported in order
    from stillhook.project import project_from_dict
    from stillhook.shaping.envelope_design import schedule_row_count

    p = project_from_dict({"rig": {"hook_mass_kg": 300.0, "rigging_length_m": 2.0, "rope_length_m": [2.0, 3.5],
                                   "payload_mass_kg": 400.0},
                           "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
                           "design": {"tolerance_pct": 4.5}})
    seen = []
    d = design_for_project(p, progress=lambda done, total: seen.append((done, total)))
    total = 1 + schedule_row_count(p)
    assert schedule_row_count(p) == len(d.schedule.shapers) >= 2
    assert seen == [(k, total) for k in range(1, total + 1)]


def test_schedule_rows_are_independent_so_any_worker_count_gives_the_same_schedule():
    # each row is designed from its own span alone (no hint from its neighbour): the rows run in
    # parallel processes and the schedule is byte-identical for one worker or several
    p = project_from_dict({"rig": {"hook_mass_kg": 300.0, "rigging_length_m": 2.0, "rope_length_m": [2.0, 3.5],
                                   "payload_mass_kg": 400.0},
                           "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
                           "design": {"tolerance_pct": 4.5}})
    d = design_for_project(p)
    one = design_schedule(p, d.shaper, workers=1)
    two = design_schedule(p, d.shaper, workers=2)
    assert json.dumps(one.as_dict()) == json.dumps(two.as_dict()) == json.dumps(d.schedule.as_dict())
    assert worker_count(1) == 1 and worker_count(100) >= 1 and worker_count(5, 2) == 2 and worker_count(1, 8) == 1


def test_small_schedules_stay_in_this_process_and_large_ones_go_to_the_pool():
    # the pool costs ~0.1 s of CPU to start: rows estimated below POOL_MIN_SECONDS in total run here
    def shaper_of(n):
        return Shaper.from_impulses(np.arange(n) * 0.01, np.full(n, 1.0 / n), "test")

    few = math.floor(POOL_MIN_SECONDS / ROW_SECONDS_PER_IMPULSE / 10) - 1  # impulses: 10 rows stay below the bound
    many = math.ceil(POOL_MIN_SECONDS / ROW_SECONDS_PER_IMPULSE / 10) + 1
    assert schedule_workers(10, shaper_of(few)) == 1
    assert schedule_workers(10, shaper_of(many)) == worker_count(10)
    assert schedule_workers(10, shaper_of(few), workers=2) == 2  # an explicit count wins
    assert schedule_workers(1, shaper_of(many), workers=4) == 1


def test_the_shaper_only_design_is_the_full_designs_shaper(demo_project, demo_design):
    # designed afresh without the schedule rows, then taken from the full design once that exists
    with DESIGN_CACHE.emptied():
        alone = envelope_shaper_for_project(demo_project)
        assert alone.schedule is None
        np.testing.assert_array_equal(alone.shaper.times_s, demo_design.shaper.times_s)
        np.testing.assert_array_equal(alone.shaper.amplitudes, demo_design.shaper.amplitudes)
        assert (alone.reason, alone.high_mode_treated, alone.worst_ratio) == (
            demo_design.reason, demo_design.high_mode_treated, demo_design.worst_ratio)
        full = design_for_project(demo_project)
        assert envelope_shaper_for_project(demo_project) is full
