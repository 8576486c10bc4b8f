"""``stillhook report`` on a project file: the folder it writes and its JSON summary."""

from __future__ import annotations

import json


def test_report_cli_writes_the_folder(pipeline_runs):
    # the smallest project a user can write ([rig] and [drive] only) must give a full report
    # (stillhook report --grid 3 3 --no-check --json, run once per session in tests/conftest.py)
    out, status, data = pipeline_runs["report"]
    assert status == 0
    assert data["problems"] == {}
    assert {"report.html", "report.json", "figures/sensitivity.png", "figures/time_response.svg"} <= set(data["files"])
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "minimal" in page and "Firmware files" in page
    rep = json.loads((out / "report.json").read_text())
    assert rep["project"] == "minimal" and rep["sweep"]["accuracy"]["spot_checks"] == []
    assert rep["firmware"]["files"] and rep["selftest"] is None
    # the design is checked on the project's own move and the verdict box says how it fares (issue 11)
    mc = rep["design_on_move"]
    assert len(mc["points"]) == 5 and mc["holds"] == (mc["worst"]["ratio"] <= mc["tolerance"])
    assert "tolerance holds" in page if mc["holds"] else "does NOT hold" in page
