"""``stillhook demo`` end to end (reduced sweep grid, real pipeline) and the report it writes."""

from __future__ import annotations

import hashlib
import json
import shutil
import tomllib
from html.parser import HTMLParser
from pathlib import Path

import pytest

from stillhook.cautions import CAUTIONS
from stillhook.cli import main


class _Collect(HTMLParser):
    """Tags, attribute values and text of an HTML page (stdlib parser)."""

    def __init__(self):
        super().__init__()
        self.tags, self.attrs, self.text, self.open = [], [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs.extend(attrs)
        if tag not in ("meta", "img", "br"):
            self.open.append(tag)

    def handle_endtag(self, tag):
        assert self.open and self.open[-1] == tag, f"</{tag}> closes <{self.open[-1] if self.open else None}>"
        self.open.pop()

    def handle_data(self, data):
        self.text.append(data)


@pytest.fixture(scope="module")
def demo_out(pipeline_runs):
    """``stillhook demo --grid 3 4``: (folder, exit status, stdout), run once per session (tests/conftest.py)."""
    return pipeline_runs["demo"]


def test_demo_writes_the_whole_job(demo_out):
    out, status, stdout = demo_out
    assert status == 0
    for name in ("report.html", "report.json", "firmware/manifest.json", "firmware/sway_tables.c",
                 "figures/residual_maps.png", "figures/residual_maps.svg", "figures/sensitivity.svg"):
        assert (out / name).is_file(), name
    for step in ("1 modes", "2 design", "3 comparison", "4 sweep", "5 firmware", "6 report", "Cautions"):
        assert step in stdout
    manifest = json.loads((out / "firmware/manifest.json").read_text())
    assert {"format", "cycle_s", "shaper_rows"} <= set(manifest)
    rows = manifest["shaper_rows"]
    assert [r["rope_length_m"] for r in rows] == sorted(r["rope_length_m"] for r in rows)


def test_selftest_ran_when_a_compiler_exists(demo_out):
    out, _, stdout = demo_out
    data = json.loads((out / "report.json").read_text())
    st = data["selftest"]
    if shutil.which("cc") or shutil.which("gcc") or shutil.which("clang"):
        assert st["ran"] and st["passed"] and st["exit_status"] == 0
        assert "self-test: passed" in stdout
    else:
        assert not st["ran"] and "skipped" in st["summary"]


def test_report_html_is_self_contained_and_complete(demo_out):
    out, _, _ = demo_out
    page = (out / "report.html").read_text(encoding="utf-8")
    p = _Collect()
    p.feed(page)
    p.close()
    assert p.open == []  # every element closed
    assert "script" not in p.tags and "link" not in p.tags and "iframe" not in p.tags
    srcs = [v for k, v in p.attrs if k in ("src", "href")]
    assert srcs and all(v.startswith("data:image/png;base64,") for v in srcs)
    assert "http://" not in page and "https://" not in page
    text = " ".join(" ".join(p.text).split())
    for heading in ("Rig and envelope", "Sway modes", "Chosen design and why", "Comparison on the project",
                    "Over the whole envelope", "Firmware files", "Cautions"):
        assert heading in text
    for c in CAUTIONS:
        assert c in text
    # provenance digest: SHA-256 of the project file's bytes (FIPS 180-4, via hashlib); the demo designs from
    # the project calibrated against its commissioning logs, written beside the report
    digest = hashlib.sha256((out / "commissioning/demo_project_calibrated.toml").read_bytes()).hexdigest()
    assert digest in text
    manifest = json.loads((out / "firmware/manifest.json").read_text())
    assert manifest["input_digest_sha256"] == digest
    # every emitted file listed with its real size
    for f in sorted((out / "firmware").iterdir()):
        assert f"{f.name} {f.stat().st_size}" in text, f.name


def test_report_json_holds_every_figure(demo_out):
    out, _, _ = demo_out
    data = json.loads((out / "report.json").read_text())
    figs = data["figures"]
    assert set(figs) == {p.stem for p in (out / "figures").glob("*.png")}
    assert {"frequency_maps", "sensitivity", "time_response", "residual_maps"} <= set(figs)
    rm = figs["residual_maps"]
    assert len(rm["rope_length_m"]) == 3 and len(rm["payload_mass_kg"]) == 4
    assert [m["key"] for m in rm["maps"]][:3] == ["unshaped", "shaper", "schedule"]
    assert data["cautions"] == list(CAUTIONS) and data["problems"] == {}
    files = {f["name"]: f for f in data["firmware"]["files"]}
    tables = (out / "firmware/sway_tables.c").read_bytes()
    assert files["sway_tables.c"]["sha256"] == hashlib.sha256(tables).hexdigest()


def test_rendering_the_same_study_gives_the_same_bytes(demo_out):
    # the files on disk against a fresh rendering of the same figures and HTML from report.json's data
    from stillhook.report.figures import render_formats

    out, _, _ = demo_out
    figs = json.loads((out / "report.json").read_text())["figures"]
    drawn = render_formats(figs["frequency_maps"])  # drawn here, in this process; the demo drew it in a worker
    assert drawn["png"] == (out / "figures/frequency_maps.png").read_bytes()
    assert drawn["svg"] == (out / "figures/frequency_maps.svg").read_bytes()


def test_bad_demo_options_fail_early_and_write_nothing(tmp_path, capsys):
    out = tmp_path / "d"
    assert main(["demo", "--out", str(out), "--grid", "1", "3"]) == 2
    err = capsys.readouterr().err
    assert "grid" in err and err.count("\n") == 1 and not out.exists()
    blocker = tmp_path / "file"
    blocker.write_text("x")
    assert main(["demo", "--out", str(blocker)]) == 2
    assert "not a folder" in capsys.readouterr().err and blocker.read_text() == "x"


def test_report_cli_refuses_a_missing_project(tmp_path, capsys):
    out = tmp_path / "r"
    assert main(["report", str(tmp_path / "missing.toml"), "--out", str(out)]) == 2
    assert "not found" in capsys.readouterr().err and not out.exists()
    assert main(["report", "demo", "--out", str(out), "--grid", "2", "0"]) == 2
    assert not Path(out).exists()


def test_demo_commissioning_shows_the_calibrated_design_holds_where_the_nominal_does_not(demo_out):
    out, status, text = demo_out
    data = json.loads((out / "report.json").read_text())
    c = data["commissioning"]
    tol = c["tolerance_pct"]
    on_true = c["residuals"]["true crane (invented demo)"]
    assert on_true["nominal design"]["worst_pct"] > tol >= on_true["calibrated design"]["worst_pct"]
    assert on_true["calibrated design"]["share_within_tolerance_pct"] == 100.0
    for name in ("demo_project_calibrated.toml", "calibration.json", "logs/commissioning_rope_5m.csv"):
        assert (out / "commissioning" / name).is_file()
    html = (out / "report.html").read_text()
    assert "Commissioning: the rig calibrated against sway logs" in html and "re-verify on the crane" in html
    assert "0 commission 3 logs identified" in text


def test_demo_firmware_states_the_rope_offset_it_was_designed_with(demo_out):
    out, _, _ = demo_out
    cal = tomllib.loads((out / "commissioning/demo_project_calibrated.toml").read_text())
    header = (out / "firmware/sway_tables.h").read_text()
    assert f"encoder rope + {cal['rig']['rope_offset_m']:g} m" in header
