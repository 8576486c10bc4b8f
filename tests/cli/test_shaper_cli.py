"""``stillhook shaper``: method options, two-mode, drive cycle, project design, clear errors."""

from __future__ import annotations

import json

import pytest

from stillhook.cli import main


def run_json(capsys, *argv):
    assert main(["shaper", *argv, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_zvd_json_has_impulses_and_duration(capsys):
    out = run_json(capsys, "--method", "zvd", "--frequency-hz", "0.5")
    assert [r["time_s"] for r in out["impulses"]] == pytest.approx([0.0, 1.0, 2.0])
    # ZVD [1, 2, 1]/4 undamped (Singer & Seering, ASME JDSMC 112(1):76-82, 1990)
    assert [r["amplitude"] for r in out["impulses"]] == pytest.approx([0.25, 0.5, 0.25])
    assert out["duration_s"] == pytest.approx(2.0)
    assert out["modes"][0]["insensitivity_width"] == pytest.approx(0.2871, abs=1e-4)
    assert out["drive_cycle"] is None and out["overshoots_command"] is False


def test_two_frequencies_give_a_two_mode_shaper_and_drive_cycle_report(capsys):
    out = run_json(capsys, "--method", "ei", "--frequency-hz", "0.3", "--frequency-hz", "0.9",
                   "--tolerance-pct", "5", "--damping-ratio", "0.01", "--cycle-s", "0.01", "--band-hz", "0.27", "0.33")
    assert len(out["impulses"]) == 9 and len(out["modes"]) == 2
    dc = out["drive_cycle"]
    assert set(dc) >= {"round", "split", "resolve", "original", "impulses", "remedy"}
    assert all(isinstance(r["delay_cycles"], int) for r in dc["impulses"])
    orig, rnd, res = (dc[k]["vibration_at_design"] for k in ("original", "round", "resolve"))
    for o, a, b in zip(orig, rnd, res, strict=True):
        assert abs(b - o) < 1e-3 * o and abs(b - o) < abs(a - o)  # re-solving keeps H at both poles
    assert out["bands"][0]["worst_vibration"] <= 0.05 + 1e-9


def test_band_method_two_bands_reports_direct_and_convolved(capsys):
    out = run_json(capsys, "--method", "band", "--band-hz", "0.25", "0.3", "--band-hz", "0.6", "0.8",
                   "--cycle-s", "0.02")
    tm = out["two_mode"]
    assert tm["direct"]["duration_s"] <= tm["convolved"]["duration_s"]
    assert out["duration_s"] == tm["direct"]["duration_s"]
    assert all(b["worst_vibration"] <= 0.05 * (1 + 1e-6) for b in out["bands"])


def test_umzv_is_flagged_in_json_and_text(capsys):
    out = run_json(capsys, "--method", "umzv", "--frequency-hz", "0.5")
    assert out["overshoots_command"] and out["speed_range_factor"] == [-1.0, 2.0]
    assert main(["shaper", "--method", "umzv", "--frequency-hz", "0.5"]) == 0
    assert "WARNING" in capsys.readouterr().out


def test_project_design_json_and_text(capsys, minimal_project_file):
    out = run_json(capsys, str(minimal_project_file))
    assert out["meets_tolerance"] and out["worst_residual_ratio"] <= 0.05
    assert out["impulses"][0]["delay_cycles"] == 0 and out["schedule"]["lookup_rule"] == "nearest"
    assert out["cautions"] and "reason" in out
    assert main(["shaper", str(minimal_project_file)]) == 0
    text = capsys.readouterr().out
    assert "Length schedule" in text and "Cautions" in text


@pytest.mark.parametrize("argv, fragment", [
    (["--method", "zv", "--frequency-hz", "0.5", "--tolerance-pct", "0"], "tolerance"),
    (["--method", "ei", "--frequency-hz", "0.5", "--tolerance-pct", "-3"], "tolerance"),
    (["--method", "band", "--band-hz", "0.8", "0.5"], "LO < HI"),
    (["--method", "band", "--band-hz", "0.5", "0.5"], "LO < HI"),
    (["--method", "zv", "--frequency-hz", "30", "--cycle-s", "0.05"], "half the drive rate"),
    (["--method", "band", "--band-hz", "1", "12", "--cycle-s", "0.05"], "half the drive rate"),
    (["--method", "zvd", "--frequency-hz", "0.5", "--damping-ratio", "1"], "damping"),
    (["--method", "zvd", "--frequency-hz", "-1"], "frequency"),
    (["--method", "zvd"], "--frequency-hz"),
    (["--method", "band"], "--band-hz"),
    (["--frequency-hz", "0.5"], "--method"),
    (["demo", "--method", "zv"], "not both"),
])
def test_impossible_requests_exit_2_with_one_line(capsys, argv, fragment):
    assert main(["shaper", *argv]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("stillhook: error:") and fragment in err


def test_project_with_implausible_rope_is_refused_with_the_reason(capsys, tmp_path):
    # 1 mm of rope used to reach the half-drive-rate check; the plausibility bound now stops it first
    p = tmp_path / "fast.toml"
    p.write_text("[rig]\nhook_mass_kg = 100.0\nrigging_length_m = 0.0\nrope_length_m = [0.001, 0.01]\n"
                 "payload_mass_kg = 10.0\n[drive]\ncycle_s = 0.1\nmax_speed_m_s = 0.5\nmax_accel_m_s2 = 0.3\n")
    assert main(["shaper", str(p)]) == 2
    err = capsys.readouterr().err
    assert "[rig] rope_length_m = 0.001 is too small; allowed: at least 0.1 m" in err and err.count("\n") == 1
