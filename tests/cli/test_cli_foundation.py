"""CLI: modes and simulate; errors are one line on stderr, exit 2, nothing half-written."""

import json
import math
import subprocess
import sys

import pytest

from stillhook.cli import main


def test_modes_json_low_mode_first(capsys):
    assert main(["modes", "--hook-mass-kg", "7", "--payload-mass-kg", "7", "--rope-length-m", "2.5",
                 "--rigging-length-m", "2.5", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    w = [m["omega_rad_s"] for m in out["modes"]]
    # Kibble & Berkshire, Classical Mechanics, 5th ed., 2004: w^2 = (2 -+ sqrt 2) g/L for equal masses/lengths
    assert w[0] ** 2 == pytest.approx((2 - math.sqrt(2)) * 9.80665 / 2.5)
    assert w[1] ** 2 == pytest.approx((2 + math.sqrt(2)) * 9.80665 / 2.5)
    for key in ("frequency_hz", "period_s", "damping_ratio", "payload_to_hook_ratio"):
        assert key in out["modes"][0]


def test_modes_of_a_project_show_bands(capsys, minimal_project_file):
    assert main(["modes", str(minimal_project_file), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["bands"]) == 2
    assert out["bands"][0]["frequency_lo_hz"] < out["bands"][0]["frequency_hi_hz"]
    assert main(["modes", "demo"]) == 0
    assert "Bands over the envelope" in capsys.readouterr().out


def test_simulate_writes_csv_and_plot(tmp_path, capsys, minimal_project_file):
    out = tmp_path / "sim"
    assert main(["simulate", str(minimal_project_file), "--distance-m", "3", "--out", str(out), "--json"]) == 0
    metrics = json.loads(capsys.readouterr().out)["metrics"]
    assert metrics["residual_payload_sway_m"] > 0
    header = (out / "sim.csv").read_text().splitlines()[0]
    assert header.startswith("time_s,trolley_position_m")  # the sway-log columns identify reads
    assert (out / "sim.png").read_bytes()[:4] == b"\x89PNG"


@pytest.mark.parametrize("argv,words", [
    (["modes", "--hook-mass-kg", "1", "--payload-mass-kg", "-1", "--rope-length-m", "1", "--rigging-length-m", "1"],
     "--payload-mass-kg = -1.0 is too small"),
    (["modes", "--hook-mass-kg", "nan", "--payload-mass-kg", "1", "--rope-length-m", "1", "--rigging-length-m", "1"],
     "not finite"),
    (["modes", "--hook-mass-kg", "1"], "missing --payload-mass-kg"),
    (["modes", "no_such_file.toml"], "not found"),
    (["simulate", "demo", "--distance-m", "-2"], "--distance-m = -2.0 is too small"),
    (["simulate", "demo", "--distance-m", "1e6"], "--distance-m = 1000000.0 is too large; allowed: at most 1000 m"),
    (["modes", "--hook-mass-kg", "1e-9", "--payload-mass-kg", "100", "--rope-length-m", "5",
      "--rigging-length-m", "2"], "--hook-mass-kg = 1e-09 is too small; allowed: at least 1 kg"),
    (["sweep", "demo", "--grid", "1001", "5"], "--grid = 1001 is too large; allowed: at most 1000"),
    (["emit", "demo", "--out", "never_written", "--prefix", "shk"], "--prefix = 'shk' collides"),
    (["emit", "demo", "--out", "never_written", "--prefix", "_Bool"], "--prefix = '_Bool' is not allowed"),
    (["emit", "demo", "--out", "never_written", "--prefix", "int"], "--prefix = 'int' is not allowed"),
])
def test_errors_are_one_line(capsys, argv, words):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and words in err and "Traceback" not in err


def test_bad_project_writes_nothing(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text("[rig]\nhook_mass_kg = 1.0\n")
    out = tmp_path / "out"
    assert main(["simulate", str(bad), "--out", str(out)]) == 2
    assert not out.exists()
    assert "missing" in capsys.readouterr().err


def test_console_script_runs_without_traceback(tmp_path):
    # the installed entry point, as a user runs it
    r = subprocess.run([sys.executable, "-m", "stillhook", "modes", str(tmp_path / "missing.toml")],
                       capture_output=True, text=True)
    assert r.returncode == 2
    assert r.stderr.startswith("stillhook: error:") and "Traceback" not in r.stderr


def test_every_design_output_carries_the_cautions(capsys):
    from stillhook.cautions import CAUTIONS

    assert main(["shaper", "--method", "zv", "--frequency-hz", "0.5", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["cautions"] == list(CAUTIONS)
    assert main(["shaper", "--method", "zv", "--frequency-hz", "0.5"]) == 0
    assert CAUTIONS[0] in capsys.readouterr().out
    # the project design, JSON and text
    assert main(["shaper", "demo", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["cautions"] == list(CAUTIONS)
    assert main(["shaper", "demo"]) == 0
    text = capsys.readouterr().out
    assert all(c in text for c in CAUTIONS)
