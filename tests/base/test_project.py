"""Project file validation: every error names the key, the value and what is allowed."""

import pytest

from stillhook.errors import ConfigError, InputFileError
from stillhook.project import SCHEMA, load_demo_project, load_project, project_from_dict
from tests.conftest import MINIMAL_TOML


def test_minimal_file_gets_defaults(minimal_project_file):
    p = load_project(minimal_project_file)
    assert p.envelope.rope_length_range_m == (2.0, 8.0)
    assert p.design["tolerance_pct"] == 5.0
    assert p.move["distance_m"] == SCHEMA["move"]["distance_m"].default
    assert p.envelope.nominal_rope_length_m == 5.0
    assert len(p.digest) == 64


def test_demo_project_loads():
    p = load_demo_project()
    assert p.envelope.has_two_modes
    assert p.name == "demo_project"


def _edit(text, old, new):
    assert old in text
    return text.replace(old, new)


@pytest.mark.parametrize("old,new,words", [
    ("hook_mass_kg = 180.0", "hook_mass_kg = -5.0", ["[rig] hook_mass_kg", "-5.0", "at least 1 kg"]),
    ("rope_length_m = [2.0, 8.0]", "rope_length_m = [8.0, 2.0]", ["rope_length_m", "min > max"]),
    ("rope_length_m = [2.0, 8.0]", "rope_length_m = nan", ["rope_length_m", "nan"]),
    ("rope_length_m = [2.0, 8.0]", "rope_length_m = [2.0, 8.0, 9.0]", ["rope_length_m", "3 items"]),
    ("cycle_s = 0.004", "cycle_s = 0.0", ["[drive] cycle_s", "allowed"]),
    ("cycle_s = 0.004", "cycle_s = \"fast\"", ["[drive] cycle_s", "not a number"]),
    ("max_accel_m_s2 = 0.3", "max_accel = 0.3", ["unknown key [drive] max_accel", "allowed keys"]),
    ("hook_mass_kg = 180.0\n", "", ["missing key [rig] hook_mass_kg"]),
    ("[drive]", "[drives]", ["unknown section [drives]"]),
])
def test_bad_values_name_key_value_and_range(tmp_path, old, new, words):
    p = tmp_path / "bad.toml"
    p.write_text(_edit(MINIMAL_TOML, old, new))
    with pytest.raises(ConfigError) as info:
        load_project(p)
    for w in words:
        assert w in str(info.value)


def test_missing_and_malformed_files(tmp_path):
    with pytest.raises(InputFileError, match="not found"):
        load_project(tmp_path / "nope.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("[rig\nhook_mass_kg = 1")
    with pytest.raises(InputFileError, match="not valid TOML"):
        load_project(bad)


def test_missing_drive_section():
    with pytest.raises(ConfigError, match=r"missing section \[drive\]"):
        project_from_dict({"rig": {"hook_mass_kg": 1.0, "rigging_length_m": 1.0, "rope_length_m": 2.0,
                                   "payload_mass_kg": 1.0}})


def test_hoist_target_must_be_in_rope_range(tmp_path):
    p = tmp_path / "hoist.toml"
    p.write_text(MINIMAL_TOML + "\n[move]\nhoist_to_m = 12.0\n")
    with pytest.raises(ConfigError, match="hoist_to_m"):
        load_project(p)


def test_given_sections_record_what_the_file_holds(tmp_path):
    p = tmp_path / "with_notch.toml"
    p.write_text(MINIMAL_TOML + "\n[notch]\n")
    assert load_project(p).given_sections == ("rig", "drive", "notch")
