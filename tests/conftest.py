"""Shared fixtures. Tests run against the installed package (CI installs it non-editable)."""

from __future__ import annotations

import os

import pytest

# Every test session designs afresh (the design code is what is under test); tests of the disk cache
# turn it on in a temporary folder.
os.environ["STILLHOOK_DESIGN_CACHE"] = "off"

from stillhook.project import load_demo_project


@pytest.fixture(scope="session")
def demo_project():
    """The built-in demo project (an invented scenario)."""
    return load_demo_project()


MINIMAL_TOML = """
[rig]
hook_mass_kg = 180.0
rigging_length_m = 2.4
rope_length_m = [2.0, 8.0]
payload_mass_kg = [40.0, 900.0]

[drive]
cycle_s = 0.004
max_speed_m_s = 0.6
max_accel_m_s2 = 0.3
"""


@pytest.fixture()
def minimal_project_file(tmp_path):
    """A project file with only [rig] and [drive] (every later command must accept it)."""
    p = tmp_path / "minimal.toml"
    p.write_text(MINIMAL_TOML)
    return p
