"""``stillhook emit`` command line: the C target stays the default; ``--target st`` writes the PLC folder."""

from __future__ import annotations

import json

import pytest

from stillhook.cautions import CAUTIONS
from stillhook.cli import main
from stillhook.outputs import MARKER
from tests.conftest import MINIMAL_TOML

#: A quick design (closed-form ZVD rows, few of them) with a notch, so the command runs in about a second.
QUICK_TOML = MINIMAL_TOML + """
[design]
method = "zvd"
max_schedule_rows = 4

[notch]
"""


@pytest.fixture()
def quick_project(tmp_path):
    p = tmp_path / "quick.toml"
    p.write_text(QUICK_TOML)
    return str(p)


def _run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_target_st_writes_the_plc_folder_and_prints_the_cautions(capsys, tmp_path, quick_project):
    code, out, err = _run(capsys, "emit", quick_project, "--target", "st", "--out", str(tmp_path / "plc"),
                          "--prefix", "crab")
    assert code == 0 and err == ""
    # every folder stillhook writes also holds its marker (stillhook.outputs.MARKER)
    assert sorted(p.name for p in (tmp_path / "plc").iterdir()) == [MARKER, "crab.st", "crab_README.md",
                                                                     "crab_plcopen.xml", "manifest.json"]
    assert "CRAB_SHAPER" in out and CAUTIONS[0] in out
    st = (tmp_path / "plc" / "crab.st").read_text()
    assert "FUNCTION_BLOCK CRAB_SHAPER" in st and "FUNCTION_BLOCK CRAB_NOTCH" in st
    manifest = json.loads((tmp_path / "plc" / "manifest.json").read_text())
    assert manifest["target"] == "iec61131-3-st" and manifest["plc"]["call_order"][0] == "CRAB_SHAPER"
    assert manifest["files"] == sorted(p.name for p in (tmp_path / "plc").iterdir() if p.name != MARKER)


def test_default_target_is_c_and_json_names_the_target(capsys, tmp_path, quick_project):
    code, out, _ = _run(capsys, "emit", quick_project, "--out", str(tmp_path / "c"), "--json")
    data = json.loads(out)
    assert code == 0 and data["target"] == "c" and data["cautions"] == list(CAUTIONS)
    assert any(name.endswith("_tables.c") for name in data["files"])


def test_a_prefix_st_cannot_use_is_refused_before_any_work(capsys, tmp_path):
    code, out, err = _run(capsys, "emit", "demo", "--target", "st", "--out", str(tmp_path / "x"), "--prefix", "a__b")
    assert code == 2 and err.startswith("stillhook: error: prefix 'a__b'") and "single underscores" in err
    assert not (tmp_path / "x").exists()
