"""[uncertainty]: ranges of hook mass, rigging length and damping ratio; errors name key, value, allowed."""

import pytest

from stillhook.cli import main
from stillhook.errors import ConfigError
from stillhook.project import project_from_bytes
from tests.conftest import MINIMAL_TOML

RANGES = """
[uncertainty]
hook_mass_kg = [160.0, 200.0]
rigging_length_m = [2.2, 2.6]
damping_ratio = [0.0, 0.01]
"""


def _project(extra: str):
    return project_from_bytes((MINIMAL_TOML + extra).encode(), "uncertain.toml")


def test_ranges_are_read_and_the_rig_keeps_its_nominal_values():
    p = _project(RANGES)
    u = p.uncertainty
    assert u.ranges == {"hook_mass_kg": (160.0, 200.0), "rigging_length_m": (2.2, 2.6), "damping_ratio": (0.0, 0.01)}
    assert u.uncertain == ("hook_mass_kg", "rigging_length_m", "damping_ratio")
    assert u.nominal == {"hook_mass_kg": 180.0, "rigging_length_m": 2.4, "damping_ratio": 0.0}
    assert p.envelope.hook_mass_kg == 180.0  # the design's rig is unchanged
    assert _project("").uncertainty is None


def test_each_range_is_optional_and_a_zero_width_range_is_known():
    u = _project("\n[uncertainty]\nhook_mass_kg = [180.0, 180.0]\nrigging_length_m = [2.0, 3.0]\n").uncertainty
    assert u.uncertain == ("rigging_length_m",)
    assert u.ranges["damping_ratio"] == (0.0, 0.0)


@pytest.mark.parametrize("line, words", [
    ("hook_mass_kg = [0.5, 200.0]", ["[uncertainty] hook_mass_kg", "0.5", "at least 1 kg"]),
    ("hook_mass_kg = [200.0, 160.0]", ["[uncertainty] hook_mass_kg", "min > max"]),
    ("hook_mass_kg = 170.0", ["[uncertainty] hook_mass_kg", "not a list [min, max]"]),
    ("hook_mass_kg = [190.0, 200.0]", ["[uncertainty] hook_mass_kg", "does not contain", "180", "min <= 180 <= max"]),
    ("damping_ratio = [0.0, 0.9]", ["[uncertainty] damping_ratio", "0.9", "at most 0.7"]),
    ("rigging_length_m = [2.0, 2.5, 3.0]", ["[uncertainty] rigging_length_m", "3 items"]),
    ("rope_length_m = [1.0, 2.0]", ["unknown key [uncertainty] rope_length_m", "allowed keys"]),
    ("calibration_sd = 3.0", ["[uncertainty] calibration_sd = 3", "needs standard deviations in [calibration]"]),
    ("calibration_sd = 0.0", ["[uncertainty] calibration_sd", "more than 0"]),
])
def test_bad_ranges_raise_one_clear_line(line, words):
    with pytest.raises(ConfigError) as exc:
        _project(f"\n[uncertainty]\n{line}\n")
    text = str(exc.value)
    assert "\n" not in text
    for w in words:
        assert w in text, (w, text)


def test_cli_reports_a_bad_range_in_one_line(tmp_path, capsys):
    path = tmp_path / "bad.toml"
    path.write_text(MINIMAL_TOML + "\n[uncertainty]\nhook_mass_kg = [190.0, 200.0]\n")
    assert main(["sweep", str(path), "--samples", "10", "--no-check"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("stillhook: error:") and err.count("\n") == 1 and "does not contain" in err


CALIBRATED = """
[calibration]
hook_mass_sd_kg = 4.0
rigging_length_sd_m = 0.05
damping_ratio_sd = 0.003
"""


def test_ranges_from_the_calibration_standard_deviations():
    # [rig] damping_ratio 0.002 +- 3 x 0.003 would go below 0: bounded by the limit (0)
    text = MINIMAL_TOML.replace("payload_mass_kg = [40.0, 900.0]", "payload_mass_kg = [40.0, 900.0]\n"
                                "damping_ratio = 0.002")
    p = project_from_bytes((text + CALIBRATED + "\n[uncertainty]\ncalibration_sd = 3.0\n"
                            "rigging_length_m = [2.0, 2.5]\n").encode(), "cal.toml")
    r = p.uncertainty.ranges
    assert r["hook_mass_kg"] == pytest.approx((168.0, 192.0))
    assert r["rigging_length_m"] == (2.0, 2.5)  # its own range wins over the calibration's
    assert r["damping_ratio"] == pytest.approx((0.0, 0.011))
    assert "calibration" in p.uncertainty.sources["hook_mass_kg"]
