"""Calibration: recovery of the simulator's true parameters, identifiability, the calibrated project file."""

from __future__ import annotations

import json
import tomllib
from dataclasses import replace

import numpy as np
import pytest

from stillhook.cli import main
from stillhook.commission.calibrate import Observation, calibrate, observations_from_segments, predicted_hz
from stillhook.commission.demo_logs import TRUE_CRANE, demo_log_bytes
from stillhook.commission.logs import parse_log
from stillhook.commission.project_file import BLOCK_BEGIN, calibrated_project_text
from stillhook.commission.session import calibrate_logs, identify_logs
from stillhook.errors import ConfigError
from stillhook.model.rig import Rig
from stillhook.project import demo_project_text, project_from_dict
from stillhook.sim.dynamics import simulate

TRUE = {"hook_mass_kg": 410.0, "rigging_length_m": 3.4, "rope_offset_m": 0.3, "damping_ratio": 0.005}


def _free_sway_log(rope_m: float, payload_kg: float, seed: int) -> bytes:
    """Nonlinear simulator, true crane, released from small angles (both modes), 100 Hz hook inclinometer:
    white noise 1e-4 rad, 5e-5 rad quantization."""
    rig = Rig(TRUE["hook_mass_kg"], payload_kg, rope_m + TRUE["rope_offset_m"], TRUE["rigging_length_m"],
              damping_ratio=TRUE["damping_ratio"])
    sim = simulate(rig, np.zeros(2), 0.01, settle_s=40.0, initial_angles_rad=(0.01, -0.012))
    rng = np.random.default_rng(seed)
    y = np.round((sim.theta1_rad + rng.normal(0, 1e-4, sim.t_s.size)) / 5e-5) * 5e-5
    rows = "\n".join(f"{t:.2f},{a:.5f},{rope_m:.3f},{payload_kg:g}" for t, a in zip(sim.t_s, y, strict=True))
    return ("time_s,hook_angle_rad,rope_length_m,payload_mass_kg\n" + rows + "\n").encode()


@pytest.fixture(scope="module")
def sim_logs():
    return [parse_log(_free_sway_log(L, m, s), f"rope_{L:g}.csv")
            for L, m, s in ((2.0, 150.0, 1), (5.0, 300.0, 2), (8.5, 150.0, 3))]


def test_recovers_the_simulators_true_parameters_within_the_reported_uncertainty(demo_project, sim_logs):
    cal, text, _ = calibrate_logs(demo_project, demo_project_text(), sim_logs)
    assert all(cal.free.values()) and not cal.notes
    for key, true in TRUE.items():
        # within 3 reported standard deviations (99.7 % for a Gaussian estimate)
        assert abs(cal.values[key] - true) <= 3 * cal.sds[key], (key, cal.values[key], cal.sds[key])
    assert set(tomllib.loads(text)["calibration"]) >= {"measured_hz", "nominal_hook_mass_kg"}


def test_the_demo_logs_calibrate_to_the_invented_true_crane(demo_project):
    logs = [parse_log(raw, name) for name, raw in demo_log_bytes().items()]
    cal, _, _ = calibrate_logs(demo_project, demo_project_text(), logs)
    assert sorted((o.rope_length_m, o.mode) for o in cal.observations) == [(L, k) for L in (2.0, 5.0, 8.5)
                                                                            for k in (1, 2)]
    for key, true in TRUE_CRANE.items():
        assert cal.values[key] == pytest.approx(true, rel=0.01), key


def _obs(envelope, points):
    values = {k: getattr(envelope, k) for k in ("hook_mass_kg", "rigging_length_m", "rope_offset_m")}
    base = [Observation("x", L, m, k, 1.0, 1e-4, 0.005, 1e-4) for L, m, k in points]
    f = predicted_hz(values, envelope.gravity_m_s2, base)
    return [replace(o, measured_hz=float(v)) for o, v in zip(base, f, strict=True)]


def test_one_rope_length_fixes_the_rope_offset_and_says_why(demo_project):
    env = replace(demo_project.envelope, **TRUE)
    cal = calibrate(demo_project.envelope, _obs(env, [(5.0, 150.0, 1), (5.0, 150.0, 2)]))
    assert cal.free["rope_offset_m"] is False and cal.sds["rope_offset_m"] is None
    assert cal.values["rope_offset_m"] == demo_project.envelope.rope_offset_m
    assert any("one rope length" in n for n in cal.notes)


def test_one_mode_at_two_lengths_cannot_fix_three_parameters(demo_project):
    env = replace(demo_project.envelope, **TRUE)
    cal = calibrate(demo_project.envelope, _obs(env, [(3.0, 150.0, 1), (8.0, 150.0, 1)]))
    fixed = [k for k in ("hook_mass_kg", "rigging_length_m", "rope_offset_m") if not cal.free[k]]
    assert fixed and len(fixed) == len(cal.notes)
    assert all("fixed at the project's" in n for n in cal.notes)


def test_exact_frequencies_give_back_the_parameters(demo_project):
    env = replace(demo_project.envelope, **TRUE)
    pts = [(L, 150.0, k) for L in (2.0, 5.0, 8.5) for k in (1, 2)]
    cal = calibrate(demo_project.envelope, _obs(env, pts), free=("hook_mass_kg", "rigging_length_m",
                                                                 "rope_offset_m"))
    for key in ("hook_mass_kg", "rigging_length_m", "rope_offset_m"):
        assert cal.values[key] == pytest.approx(TRUE[key], rel=1e-6)
    assert cal.values["damping_ratio"] == demo_project.envelope.damping_ratio


def test_calibrated_file_keeps_comments_reads_back_and_recalibrates_cleanly(demo_project, sim_logs):
    cal, text, results = calibrate_logs(demo_project, demo_project_text(), sim_logs)
    assert text.count(BLOCK_BEGIN) == 1
    for r in results:
        assert r.log.sha256 in text
    assert "# stillhook demo project: an invented scenario" in text
    project = project_from_dict(tomllib.loads(text))
    assert project.envelope.rope_offset_m == pytest.approx(cal.values["rope_offset_m"], rel=1e-5)
    again = calibrated_project_text(text, cal, [("a.csv", "0" * 64)])
    assert again.count(BLOCK_BEGIN) == 1 and again.count("[calibration]") == 1
    # the values before the first calibration are kept
    assert tomllib.loads(again)["calibration"]["nominal_hook_mass_kg"] == demo_project.envelope.hook_mass_kg


def test_calibrate_cli_json_never_overwrites_without_force(tmp_path, capsys, sim_logs):
    paths = []
    for log in sim_logs:
        p = tmp_path / log.name
        L = {"rope_2.csv": 2.0, "rope_5.csv": 5.0, "rope_8.5.csv": 8.5}[log.name]
        m = 300.0 if L == 5.0 else 150.0
        p.write_bytes(_free_sway_log(L, m, {2.0: 1, 5.0: 2, 8.5: 3}[L]))
        paths.append(str(p))
    out = tmp_path / "cal.toml"
    assert main(["calibrate", "demo", *paths, "--out", str(out), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert set(data["parameters"]["rope_offset_m"]) == {"value", "sd", "free"}
    assert set(data["predicted_vs_measured"][0]) == {"rope_length_m", "payload_mass_kg", "mode", "measured_hz",
                                                     "predicted_hz"}
    assert any("re-verify on the crane at low speed" in c for c in data["cautions"])
    before = out.read_bytes()
    assert main(["calibrate", "demo", *paths, "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--force" in err[0]
    assert out.read_bytes() == before
    assert main(["calibrate", "demo", *paths, "--out", str(out), "--force", "--free", "hook_mass_kg"]) == 0
    assert "rigging_length_m = 3.1" in out.read_text()


def test_identify_cli_json_has_the_issues_fields(tmp_path, capsys):
    p = tmp_path / "log.csv"
    p.write_bytes(demo_log_bytes()["commissioning_rope_5m.csv"])
    assert main(["identify", str(p), "--project", "demo", "--json", "--out", str(tmp_path / "id")]) == 0
    data = json.loads(capsys.readouterr().out)
    (seg,) = data["segments"]
    assert set(seg) == {"start_s", "end_s", "rope_length_m", "modes", "fit_rms_ratio"}
    assert set(seg["modes"][0]) == {"frequency_hz", "frequency_sd_hz", "damping_ratio", "damping_ratio_sd",
                                    "amplitude", "signal"}
    f = [m["frequency_hz"] for m in seg["modes"]]
    assert f == sorted(f) and len(f) == 2
    assert (tmp_path / "id" / "figures" / "segment_1.png").is_file()


def test_identify_needs_the_logs_rope_length_for_calibration(tmp_path, demo_project):
    text = demo_log_bytes()["commissioning_rope_5m.csv"].decode()
    lines = [",".join(c for i, c in enumerate(r.split(",")) if i != 2) for r in text.splitlines()]
    log = parse_log(("\n".join(lines) + "\n").encode(), "norope.csv")
    (r,) = identify_logs([log], envelope=demo_project.envelope)
    assert r.segments[0].rope_length_m is None
    with pytest.raises(ConfigError, match="--rope-length-m norope.csv=METRES"):
        observations_from_segments("norope.csv", r.segments)


def test_simulate_out_writes_a_log_that_identify_reads(tmp_path, capsys, minimal_project_file):
    # the loop on simulated data: the nonlinear simulator's record identifies to the linear model's modes
    # (within the large-angle effect, about amplitude^2 / 16 of frequency; common practice for the pendulum)
    out = tmp_path / "sim"
    assert main(["simulate", str(minimal_project_file), "--out", str(out)]) == 0
    capsys.readouterr()
    assert main(["identify", str(out / "sim.csv"), "--project", str(minimal_project_file), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    project = project_from_dict(tomllib.loads(minimal_project_file.read_text()))
    model = [m.frequency_hz for m in project.envelope.nominal_rig.modes()]
    (seg,) = data["segments"]
    assert seg["rope_length_m"] == pytest.approx(project.envelope.nominal_rope_length_m)
    np.testing.assert_allclose([m["frequency_hz"] for m in seg["modes"]], model, rtol=2e-3)


def test_a_parameter_without_effect_is_fixed_and_damping_alone_can_be_fitted(demo_project):
    # with a vanishing payload the frequencies are sqrt(g / L1) and sqrt(g / L2) (Kibble & Berkshire 2004, the
    # double pendulum's limit): the hook mass does not enter them
    env = replace(demo_project.envelope, **TRUE)
    pts = [(L, 1e-9, k) for L in (2.0, 5.0, 8.5) for k in (1, 2)]
    cal = calibrate(demo_project.envelope, _obs(env, pts))
    assert not cal.free["hook_mass_kg"] and any("does not change the frequencies" in n for n in cal.notes)
    assert cal.values["rigging_length_m"] == pytest.approx(TRUE["rigging_length_m"], rel=1e-6)
    only = calibrate(demo_project.envelope, _obs(env, pts), free=("damping_ratio",))
    assert only.free == {"hook_mass_kg": False, "rigging_length_m": False, "rope_offset_m": False,
                         "damping_ratio": True}
    assert only.values["damping_ratio"] == pytest.approx(0.005)
