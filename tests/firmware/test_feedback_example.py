"""The feedback firmware example: shaper + feedback in a host cyclic task, byte-identical with Python."""

from __future__ import annotations

import shutil
import subprocess
import sys

import pytest

from tests.paths import REPO_ROOT


@pytest.mark.skipif(shutil.which("make") is None or shutil.which("cc") is None, reason="make or cc is not installed")
def test_feedback_example_output_is_identical_to_the_reference(tmp_path):
    folder = REPO_ROOT / "firmware_examples" / "feedback"
    res = subprocess.run(["make", "-C", str(folder), "check", f"BUILD={tmp_path}", f"PYTHON={sys.executable}"],
                         capture_output=True, text=True)
    assert res.returncode == 0, res.stdout[-2000:] + res.stderr[-2000:]
    assert "C output identical to the Python reference" in res.stdout
    statuses = [int(line.split(",")[2]) for line in (tmp_path / "output.csv").read_text().splitlines()]
    assert statuses[-1] & 0x20                  # the frozen sensor switched the feedback off (stale)
    assert not any(s & 0x70 for s in statuses[:1000])  # and nothing faulted while the sensor was live early on
