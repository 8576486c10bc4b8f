"""Shared fixtures. Tests run against the installed package (CI installs it non-editable)."""

from __future__ import annotations

import contextlib
import io
import json
import os

# One BLAS thread per test worker: pytest-xdist already runs one worker per core, and BLAS threads on
# top of that oversubscribe the cores (small Riccati solves ran ~10x slower). Set before numpy loads.
os.environ["OPENBLAS_NUM_THREADS"] = os.environ.get("OPENBLAS_NUM_THREADS", "1")
os.environ["OMP_NUM_THREADS"] = os.environ.get("OMP_NUM_THREADS", "1")
os.environ["MKL_NUM_THREADS"] = os.environ.get("MKL_NUM_THREADS", "1")
# Likewise one process per parallel step (design rows, sweep chunks, figures) under pytest-xdist; tests of
# the pools pin their worker counts.
if os.environ.get("PYTEST_XDIST_WORKER"):
    os.environ.setdefault("STILLHOOK_WORKERS", "1")

import pytest

from stillhook.cli import main

# Every test session designs afresh (the design code is what is under test); tests of the disk store
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


@pytest.fixture(scope="session")
def pipeline_runs(tmp_path_factory):
    """The two full pipelines, each run once per session and shared by every test that reads them.

    ``"demo"``: ``stillhook demo`` on the demo project (reduced 3 x 4 sweep grid): (folder, exit status,
    stdout). ``"report"``: ``stillhook report`` on the minimal project ([rig] and [drive] only, 3 x 3 grid,
    no spot checks): (folder, exit status, the JSON it printed). Both run in one process, so they also
    share the design cache (stillhook.shaping.design_cache).
    """
    root = tmp_path_factory.mktemp("pipelines")
    demo_out = root / "demo"
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        demo_status = main(["demo", "--out", str(demo_out), "--grid", "3", "4"])
    minimal = root / "minimal.toml"
    minimal.write_text(MINIMAL_TOML)
    report_out = root / "report"
    buf_report = io.StringIO()
    with contextlib.redirect_stdout(buf_report):
        report_status = main(["report", str(minimal), "--out", str(report_out), "--grid", "3", "3", "--no-check",
                              "--json"])
    return {"demo": (demo_out, demo_status, buf.getvalue()),
            "report": (report_out, report_status, json.loads(buf_report.getvalue()) if report_status == 0 else None)}


#: Set by .ci/run: a test that would skip because a tool is missing fails instead (CI installs every tool).
REQUIRE_TOOLS = os.environ.get("STILLHOOK_REQUIRE_TOOLS") == "1"


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_makereport(item, call):
    """With STILLHOOK_REQUIRE_TOOLS=1 a skip is a failure: a gate that matters never silently skips in CI."""
    outcome = yield
    report = outcome.get_result()
    if REQUIRE_TOOLS and report.skipped and not hasattr(report, "wasxfail"):
        reason = report.longrepr[2] if isinstance(report.longrepr, tuple) else str(report.longrepr)
        report.outcome = "failed"
        report.longrepr = f"skipped although STILLHOOK_REQUIRE_TOOLS=1 (CI must have the tool): {reason}"
