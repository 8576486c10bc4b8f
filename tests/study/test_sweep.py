"""Envelope sweep: designs over the envelope, schedule row picking, results, spot checks, CLI."""

from __future__ import annotations

import io
import json
import math

import numpy as np
import pytest

from stillhook.cli import main
from stillhook.errors import ConfigError
from stillhook.model.envelope import Envelope
from stillhook.model.lookup import lookup_thresholds, schedule_rows
from stillhook.shaping.closed_forms import zv, zvd
from stillhook.shaping.shaper import Shaper
from stillhook.sim.profiles import trapezoid
from stillhook.study.modal_sweep import ModalBatch
from stillhook.study.sweep import (
    SweepDesign,
    grid_points,
    random_points,
    residuals,
    sweep_project,
)


@pytest.fixture(scope="module")
def demo_sweep(demo_project):
    """A small grid of every design on the demo project, corners re-run on the nonlinear simulator."""
    return sweep_project(demo_project, grid=(4, 3), check=True)


# -- row picking ----------------------------------------------------------------------------------
@pytest.mark.parametrize("rule", ["nearest", "at_or_below"])
def test_schedule_rows_follow_the_firmware_lookup(rule):
    # The emitted runtime's lookup (stillhook.firmware.qformat.ScheduleTable, mirrored bit for bit by the
    # C runtime) on thresholds from stillhook.model.lookup.lookup_thresholds, fed rope lengths in counts.
    from stillhook.firmware.qformat import ScheduleTable

    rows_m = np.array([1.2, 1.9, 2.75, 4.1, 6.0, 9.5])
    lsb = 0.001
    table = ScheduleTable(lookup_thresholds(rows_m, rule, lsb), 1200, 9500, lsb)
    L = np.random.default_rng(3).uniform(1.2, 9.5, 2000)
    firmware_rows, _ = table.lookup(table.counts(L))
    design = SweepDesign("schedule", "s", 0.0, tuple(np.zeros(1) for _ in rows_m), rows_m, rule, lsb)
    np.testing.assert_array_equal(design.rows_for(L), firmware_rows)
    # without the input resolution the float rule agrees except within one count of a switch point
    edges = 0.5 * (rows_m[:-1] + rows_m[1:]) if rule == "nearest" else rows_m[1:]
    far = np.min(np.abs(L[:, None] - edges[None, :]), axis=1) > lsb
    np.testing.assert_array_equal(schedule_rows(rows_m, L[far], rule), firmware_rows[far])


def test_schedule_rows_rejects_an_unknown_rule():
    with pytest.raises(ConfigError, match="lookup rule"):
        schedule_rows([1.0, 2.0], [1.5], "closest")


# -- shapers on single-pendulum rigs: the sweep's ratio is Singer & Seering's V ------------------------
def test_sweep_ratio_equals_residual_vibration_for_single_mode_rigs():
    # Singer & Seering, "Preshaping command inputs to reduce system vibration", ASME JDSMC
    # 112(1):76-82, 1990: for one undamped mode the shaped residual amplitude is V times the
    # unshaped one. A single pendulum (no rigging) has one mode, w = sqrt(g / L1).
    env = Envelope(500.0, 0.0, (1.0, 12.0), (200.0, 200.0))
    T = 0.005
    v = trapezoid(5.0, 0.5, 0.25, T)
    f0 = 0.25
    shaper = zvd(f0)
    k = np.round(shaper.times_s / T)
    on_grid = Shaper(k * T, shaper.amplitudes, "zvd")
    L = np.linspace(1.0, 12.0, 23)
    batch = ModalBatch.from_envelope(env, L, np.full(L.size, 200.0))
    designs = [SweepDesign("unshaped", "u", 0.0, (v,)), SweepDesign("shaper", "s", 0.0, (on_grid.apply(v, T),))]
    res = residuals(batch, designs, T)
    w = np.sqrt(env.gravity_m_s2 / L)
    np.testing.assert_allclose(res["shaper"] / res["unshaped"], on_grid.residual_vibration(w), rtol=1e-6, atol=1e-9)


def test_zv_tuned_exactly_leaves_no_residual():
    # Half-cycle posicast = ZV (O.J.M. Smith, Proc. IRE 45(9):1249-1255, 1957): impulses half a
    # period apart cancel an undamped mode exactly. L chosen so that the half period is 0.700 s.
    g = 9.80665
    half_period_s = 0.7
    L = g * (half_period_s / math.pi) ** 2
    env = Envelope(500.0, 0.0, (L, L), (0.0, 0.0))
    T = 0.005
    v = trapezoid(3.0, 0.5, 0.25, T)
    sh = zv(1.0 / (2.0 * half_period_s))
    assert sh.on_grid(T)
    batch = ModalBatch.from_envelope(env, [L], [0.0])
    res = residuals(batch, [SweepDesign("unshaped", "u", 0.0, (v,)), SweepDesign("zv", "zv", 0.0, (sh.apply(v, T),))],
                    T)
    assert res["unshaped"][0] > 0.01
    assert res["zv"][0] < 1e-9 * res["unshaped"][0]


def test_chunks_and_worker_processes_do_not_change_the_results(demo_project, monkeypatch):
    # Streaming over rigs in chunks (bounded memory) and spreading the chunks over processes must give
    # the very numbers of one pass: chunks are whole blocks of the peak search.
    from stillhook.study import sweep

    env, T = demo_project.envelope, demo_project.drive["cycle_s"]
    L, m = random_points(env, 700, seed=5)
    v = trapezoid(2.0, 0.5, 0.25, T)
    designs = [SweepDesign("unshaped", "u", 0.0, (v,)), SweepDesign("zv", "zv", 0.0, (zv(0.25).apply(v, T),))]
    batch = ModalBatch.from_envelope(env, L, m)
    whole = residuals(batch, designs, T, workers=1)
    monkeypatch.setattr(sweep, "CHUNK_RIGS", 256)
    seen = []
    chunked = residuals(batch, designs, T, workers=2, progress=lambda done, total: seen.append((done, total)))
    assert seen == [(256, 700), (512, 700), (700, 700)]
    for key in ("unshaped", "zv"):
        np.testing.assert_array_equal(whole[key], chunked[key])


# -- points ---------------------------------------------------------------------------------------------
def test_grid_and_random_points_cover_the_envelope(demo_project):
    env = demo_project.envelope
    L, m = grid_points(env, 3, 4)
    assert L.size == 12 and L[0] == 1.2 and L[-1] == 9.5 and m[0] == 70.0 and m[-1] == 1600.0
    Lr, mr = random_points(env, 500, seed=7)
    assert np.all((Lr >= 1.2) & (Lr <= 9.5)) and np.all((mr >= 70.0) & (mr <= 1600.0))
    np.testing.assert_array_equal(Lr, random_points(env, 500, seed=7)[0])
    with pytest.raises(ConfigError, match="number of samples"):
        random_points(env, 0)


# -- the project sweep ------------------------------------------------------------------------------------
def test_project_sweep_has_every_design_and_a_json_form(demo_sweep):
    r = demo_sweep
    assert r.keys[0] == "unshaped" and {"shaper", "notch"} <= set(r.keys)
    assert r.grid("unshaped").shape == (4, 3)
    d = r.as_dict()
    assert len(d["points"]) == 12
    p = d["points"][0]
    assert set(p) == {"rope_length_m", "payload_mass_kg", "residual_payload_sway_m"}
    assert set(p["residual_payload_sway_m"]) == set(r.keys)
    for s in d["summary"].values():
        assert 0.0 <= s["share_within_tolerance"] <= 1.0
    json.dumps(d, allow_nan=False)
    # the shapers cut the sway everywhere on this grid; the default notch is -3 dB at its band edges, so on a
    # single mode it leaves at most 1/sqrt(2) inside the band (|H|^2 = u / (u + zeta_p^2), notch.design)
    for k in r.keys[1:]:
        assert np.all(r.ratio(k) < (0.75 if k == "notch" else 0.5))


def test_spot_checks_agree_with_the_nonlinear_simulator(demo_sweep):
    # nonlinear reference (stillhook.sim.dynamics) at the four envelope corners, every design including
    # the notch: the linear sweep's error is second order in the sway angle; within 1.5 % of the
    # unshaped residual at the demo's speeds.
    assert len(demo_sweep.spot_checks) == 4
    assert "notch" in demo_sweep.spot_checks[0].linear_m
    assert 0.0 < demo_sweep.max_disagreement() < 0.015
    # on the scale of the nonlinear terms (the peak sway during the move) the error is much smaller
    assert demo_sweep.max_disagreement_of_peak() < 0.005


def test_sweep_rejects_bad_requests(demo_project):
    with pytest.raises(ConfigError, match="grid"):
        sweep_project(demo_project, grid=(0, 3), keys=("unshaped",), check=False)
    with pytest.raises(ConfigError, match="unknown design"):
        sweep_project(demo_project, grid=(2, 2), keys=("unshaped", "posicast"), check=False)
    with pytest.raises(ConfigError, match="distance"):
        sweep_project(demo_project, grid=(2, 2), keys=("unshaped",), distance_m=-1.0, check=False)
    with pytest.raises(ConfigError, match="samples = 1000001 is too large; allowed: at most 1000000 rigs"):
        sweep_project(demo_project, samples=1_000_001, keys=("unshaped",), check=False)


# -- CLI ---------------------------------------------------------------------------------------------------
def test_cli_json_is_deterministic_and_quiet_on_stderr(capsys):
    argv = ["sweep", "demo", "--grid", "3", "2", "--designs", "unshaped,shaper", "--no-check", "--json"]
    assert main(argv) == 0
    first = capsys.readouterr()
    assert first.err == ""  # no progress bar when stderr is not a terminal or with --json
    assert main(argv) == 0
    assert capsys.readouterr().out == first.out
    data = json.loads(first.out)
    # the sweep's move is the project's [move]: the demo's 7.5 m trapezoid (issue 11: sweep ignored it)
    assert len(data["points"]) == 6 and data["move"]["distance_m"] == 7.5 and data["move"]["profile"] == "trapezoid"
    assert set(data["points"][0]["residual_payload_sway_m"]) == {"unshaped", "shaper"}
    assert data["cautions"]


def test_cli_text_table(capsys):
    assert main(["sweep", "demo", "--samples", "5", "--designs", "unshaped,notch", "--no-check"]) == 0
    out = capsys.readouterr().out
    assert "5 random rigs" in out and "notch" in out and "Cautions" in out


@pytest.mark.parametrize("argv, text", [
    (["--grid", "0", "3"], "grid"),
    (["--grid", "3", "3", "--samples", "4"], "not both"),
    (["--designs", "unshaped,foo"], "unknown design"),
])
def test_cli_errors_are_one_line(capsys, argv, text):
    assert main(["sweep", "demo", "--no-check", *argv]) == 2
    err = capsys.readouterr().err
    assert text in err and err.count("\n") == 1 and "Traceback" not in err


def test_progress_bar_draws_on_its_stream():
    from stillhook.cli.sweep import Progress

    buf = io.StringIO()
    bar = Progress(buf)
    bar(5, 10)
    bar(10, 10)
    assert "5/10 rigs" in buf.getvalue() and buf.getvalue().endswith("10/10 rigs\n")


# -- issue 11: the sweep's move and single-point envelopes ----------------------------------------------
def _one_point_project(profile: str):
    import tomllib

    from stillhook.project import project_from_dict
    from tests.conftest import MINIMAL_TOML

    data = tomllib.loads(MINIMAL_TOML)
    data["rig"].update(rope_length_m=5.0, payload_mass_kg=300.0)
    data["move"] = {"distance_m": 4.0, "profile": profile}
    return project_from_dict(data)


def test_single_point_envelope_is_one_rig_and_the_move_is_the_projects():
    trap = sweep_project(_one_point_project("trapezoid"), grid=(21, 21), keys=("unshaped",), check=False)
    assert trap.rope_length_m.size == 1 and trap.grid_shape == (1, 1)  # not 441 copies of one rig
    scurve = sweep_project(_one_point_project("scurve"), grid=(21, 21), keys=("unshaped",), check=False)
    assert scurve.move["profile"] == "scurve" and scurve.move["distance_m"] == 4.0
    # the jerk limit's moving average lengthens the command (s_curve docstring)
    assert scurve.move["command_end_s"] > trap.move["command_end_s"]
