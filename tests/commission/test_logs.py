"""Sway log reader: mapping, scaling, and one clear line (exit 2) for each bad log (issue 13, section 1)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from stillhook.cli import main
from stillhook.commission.identify import identify_log
from stillhook.commission.logs import parse_log, read_log
from stillhook.errors import InputFileError


def _csv(columns: dict) -> bytes:
    names = list(columns)
    rows = zip(*(columns[n] for n in names), strict=True)
    return (",".join(names) + "\n" + "\n".join(",".join(f"{v:.9g}" for v in r) for r in rows) + "\n").encode()


def _sway(n=4000, dt=0.01, f=0.3, zeta=0.004):
    t = np.arange(n) * dt
    w = 2 * np.pi * f
    return t, 0.02 * np.exp(-zeta * w * t) * np.cos(w * np.sqrt(1 - zeta**2) * t)


def test_mapping_and_scaling_read_a_foreign_column_in_si_units():
    t, y = _sway()
    raw = _csv({"time_s": t, "cam_x_mm": 1000 * y, "other": 0 * t})
    log = parse_log(raw, "cam.csv", columns={"payload_offset_m": "cam_x_mm"}, scales={"payload_offset_m": 0.001})
    assert log.signals == ("payload_offset_m",)
    np.testing.assert_allclose(log.columns["payload_offset_m"], y, atol=1e-12)
    assert log.sample_rate_hz == pytest.approx(100.0)
    assert len(log.sha256) == 64


def _bad_logs():
    t, y = _sway()
    yield "missing time_s", _csv({"t": t, "hook_angle_rad": y}), "missing column 'time_s'"
    yield "no signal", _csv({"time_s": t, "rope_length_m": 0 * t + 5}), "no sway signal column"
    t2 = t.copy()
    t2[100] = t2[99]
    yield "time not increasing", _csv({"time_s": t2, "hook_angle_rad": y}), "row 102, column time_s"
    y2 = y.copy()
    y2[500:520] = np.nan
    yield "NaN gap", _csv({"time_s": t, "hook_angle_rad": y2}), "rows 502-521, column hook_angle_rad: gap of 20"
    yield "constant", _csv({"time_s": t, "hook_angle_rad": 0 * t + 0.1}), "constant (0.1)"
    text = _csv({"time_s": t, "hook_angle_rad": y}).decode().replace("\n0.5,", "\n0.5x,", 1)
    yield "bad number", text.encode(), "is not a number"


@pytest.mark.parametrize("label,raw,expected", list(_bad_logs()), ids=[b[0] for b in _bad_logs()])
def test_each_bad_log_gives_one_clear_line_with_exit_2(tmp_path, capsys, label, raw, expected):
    p = tmp_path / "bad.csv"
    p.write_bytes(raw)
    assert main(["identify", str(p)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("stillhook: error: bad.csv")
    assert expected in err[0]


def test_a_record_too_short_for_the_lowest_mode_says_the_minimum(tmp_path, capsys):
    # the demo project's low mode at 5 m rope and 150 kg is near 0.2 Hz: 3 periods need about 15 s
    t, y = _sway(n=500, f=0.2)
    p = tmp_path / "short.csv"
    p.write_bytes(_csv({"time_s": t, "hook_angle_rad": y, "rope_length_m": 0 * t + 5.0}))
    assert main(["identify", str(p), "--project", "demo"]) == 2
    err = capsys.readouterr().err.strip()
    assert "record too short" in err and "needs at least 15" in err and "3 periods" in err
    assert len(err.splitlines()) == 1


def test_clipped_sensor_and_moving_trolley_in_a_forced_window_are_warned():
    t, y = _sway(f=0.5, zeta=0.0)
    clipped = np.clip(y, -0.015, 0.015)
    speed = np.where((t > 10) & (t < 12), 0.2, 0.0)
    log = parse_log(_csv({"time_s": t, "hook_angle_rad": clipped, "trolley_speed_m_s": speed}), "c.csv")
    assert any("flat tops" in w for w in log.warnings)
    identify_log(log, window_s=(5.0, 39.0))
    assert any("trolley moves inside the window 5-39 s" in w for w in log.warnings)


def test_a_decaying_quantized_sway_is_not_called_clipped():
    t, y = _sway()
    q = np.round((y + np.random.default_rng(0).normal(0, 2e-4, t.size)) / 1e-4) * 1e-4
    assert not parse_log(_csv({"time_s": t, "hook_angle_rad": q}), "q.csv").warnings


def test_a_log_file_that_is_missing_is_one_line(tmp_path):
    with pytest.raises(InputFileError, match="not found"):
        read_log(tmp_path / "nope.csv")


def test_cli_maps_scales_and_windows_a_camera_log(tmp_path, capsys):
    t, y = _sway(n=6000, f=0.3)
    p = tmp_path / "cam.csv"
    p.write_bytes(_csv({"time_s": t, "cam_x": 1000 * y}))
    argv = ["identify", str(p), "--column", "payload_offset_m=cam_x", "--scale", "payload_offset_m=0.001",
            "--window-s", "10", "50", "--json"]
    assert main(argv) == 0
    (seg,) = json.loads(capsys.readouterr().out)["segments"]
    assert seg["start_s"] == pytest.approx(10.0) and seg["end_s"] == pytest.approx(50.0)
    (mode,) = seg["modes"]
    assert mode["signal"] == "payload_offset_m" and mode["frequency_hz"] == pytest.approx(0.3, rel=1e-6)
    assert mode["amplitude"] == pytest.approx(0.02 * np.exp(-0.004 * 2 * np.pi * 0.3 * 10), rel=1e-3)
    assert main(["identify", str(p), "--scale", "payload_offset_m=0"]) == 2
    assert "a scale of 0" in capsys.readouterr().err
