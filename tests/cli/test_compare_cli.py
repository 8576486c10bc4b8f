"""``stillhook compare`` command line."""

from __future__ import annotations

import json

from stillhook.cli import main

# Invented two-mode rig (light payload under a heavy hook block on long rigging), coarse 50 ms drive cycle
# so the command-line runs stay short.
PROJECT = """
[rig]
hook_mass_kg = 400.0
rigging_length_m = 4.0
rope_length_m = [5.5, 6.5]
payload_mass_kg = [50.0, 70.0]
nominal_rope_length_m = 6.0
nominal_payload_mass_kg = 60.0

[drive]
cycle_s = 0.05
max_speed_m_s = 0.5
max_accel_m_s2 = 0.3

[move]
distance_m = 3.0
hoist_to_m = 5.5
"""


def test_compare_json_and_text(tmp_path, capsys):
    p = tmp_path / "rig.toml"
    p.write_text(PROJECT)
    assert main(["compare", str(p), "--distance-m", "2", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["distance_m"] == 2.0 and data["hoist_during_move"] is True
    assert [r["method"] for r in data["rows"]] == ["unshaped", "zv", "zvd", "ei", "band", "two_mode", "notch"]
    assert data["cautions"]
    # ranked by meeting the tolerance, then the time added (stillhook.study.ranking); the verdict says which
    ranking = data["ranking"]
    assert sorted(r["key"] for r in ranking) == ["band", "ei", "notch", "two_mode", "zv", "zvd"]
    meets = [r for r in ranking if r["meets"]]
    assert ranking[:len(meets)] == meets and [r["added_s"] for r in meets] == sorted(r["added_s"] for r in meets)
    assert data["verdict"].startswith("recommended: " if meets else "no design meets")
    # every command above the drive's limits is named (physical limit of the drive, issue 11)
    over = {r["label"] for r in data["rows"] if r["peak_speed_m_s"] > 0.5 * (1 + 1e-9)}
    assert all(any(w.startswith(label) for w in data["over_drive_limits"]) for label in over)
    assert main(["compare", str(p), "--distance-m", "2", "--no-hoist"]) == 0
    text = capsys.readouterr().out
    for word in ("unshaped", "ZVD", "notch", "added delay", "Cautions"):
        assert word in text


def test_compare_errors(tmp_path, capsys):
    p = tmp_path / "rig.toml"
    p.write_text(PROJECT)
    assert main(["compare", str(p), "--distance-m", "-1"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("stillhook: error:") and err.count("\n") == 1 and "distance" in err
    assert main(["compare", str(tmp_path / "missing.toml")]) == 2
    assert "not found" in capsys.readouterr().err
