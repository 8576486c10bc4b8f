"""``stillhook notch`` command line."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from stillhook.cli import main


def _run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_plain_call_with_frequencies_and_cycle(capsys):
    code, out, err = _run(capsys, "notch", "--frequency-hz", "0.4", "--frequency-hz", "0.9", "--cycle-s", "0.01",
                          "--json")
    assert code == 0 and err == ""
    data = json.loads(out)
    assert data["cycle_s"] == 0.01
    sos = np.array(data["sos"])
    assert sos.shape == (2, 6) and np.all(sos[:, 3] == 1.0)
    # the null sits at each frequency: b0 z^2 + b1 z + b2 = 0 at z = exp(j 2 pi f T)
    # (Tustin with prewarping, Oppenheim & Schafer, Discrete-Time Signal Processing, 2010, section 7.2)
    for row, f in zip(sos, (0.4, 0.9), strict=True):
        z = np.exp(2j * math.pi * f * 0.01)
        assert abs(row[0] * z * z + row[1] * z + row[2]) < 1e-9
    assert set(data["quantization"]) == {"q15", "q31"}
    assert isinstance(data["warnings"], list)
    assert data["cautions"]


def test_width_and_depth_options(capsys):
    code, out, _ = _run(capsys, "notch", "--frequency-hz", "0.5", "--cycle-s", "0.02", "--width-hz", "0.2",
                        "--depth-db", "40", "--json")
    assert code == 0
    sec = json.loads(out)["sections"][0]
    assert sec["width_hz"] == pytest.approx(0.2) and sec["depth_db"] == 40.0


def test_project_and_demo(capsys, minimal_project_file):
    code, out, _ = _run(capsys, "notch", str(minimal_project_file), "--json")
    assert code == 0
    data = json.loads(out)
    assert len(data["sos"]) == 2 and data["project"] == "minimal"
    code, text, _ = _run(capsys, "notch", "demo")
    assert code == 0
    assert "Second-order sections" in text and "Cautions" in text


def test_json_is_deterministic(capsys):
    args = ("notch", "demo", "--json")
    assert _run(capsys, *args)[1] == _run(capsys, *args)[1]


@pytest.mark.parametrize("argv, words", [
    (("notch",), "--frequency-hz"),
    (("notch", "--frequency-hz", "0.4"), "--cycle-s"),
    (("notch", "--frequency-hz", "80", "--cycle-s", "0.01"), "half the drive rate"),
    (("notch", "demo", "--frequency-hz", "0.4"), "not both"),
    (("notch", "--frequency-hz", "0.4", "--cycle-s", "0.01", "--depth-db", "2"), "--depth-db = 2.0 is too small"),
    (("notch", "--frequency-hz", "0.4", "--cycle-s", "0.01", "--tolerance-pct", "0"), "tolerance"),
    (("notch", "no_such_file.toml"), "not found"),
])
def test_errors_are_one_line_exit_2(capsys, argv, words):
    code, out, err = _run(capsys, *argv)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and err.startswith("stillhook: error:") and words in err
