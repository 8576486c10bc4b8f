"""CI never lets a gate skip silently: with STILLHOOK_REQUIRE_TOOLS=1 (set by .ci/run) a skip fails."""

import os
import subprocess
import sys

from tests.paths import REPO_ROOT


def _run(tmp_path, require: bool) -> subprocess.CompletedProcess:
    (tmp_path / "test_tool.py").write_text(
        "import pytest\n\ndef test_needs_a_tool():\n    pytest.skip('frobnicator is not installed')\n")
    env = {**os.environ, "STILLHOOK_REQUIRE_TOOLS": "1" if require else "0"}
    return subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "tests.conftest", "-p", "no:cacheprovider",
                           str(tmp_path / "test_tool.py")], cwd=REPO_ROOT, env=env, capture_output=True, text=True)


def test_a_skip_fails_when_tools_are_required(tmp_path):
    r = _run(tmp_path, require=True)
    assert r.returncode == 1 and "frobnicator is not installed" in r.stdout, r.stdout[-2000:]


def test_ci_script_installs_cppcheck_and_requires_tools():
    text = (REPO_ROOT / ".ci" / "run").read_text()
    assert "apt-get install -y cppcheck" in text and "export STILLHOOK_REQUIRE_TOOLS=1" in text
    assert text.index("STILLHOOK_REQUIRE_TOOLS=1") < text.index("python -m pytest")
