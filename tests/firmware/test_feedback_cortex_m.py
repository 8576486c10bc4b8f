"""The feedback example on a Cortex-M3 under qemu: shaper + feedback per cycle, byte-identical with the host
and the Python integer reference, with instruction counts and the feedback block's flash / RAM."""

from __future__ import annotations

import re
import shutil
import subprocess
import sys

import pytest

from stillhook.firmware.feedback_tables import FeedbackTables
from stillhook.firmware.plan import plan_for_project
from stillhook.firmware.render_feedback import FEEDBACK_INSTRUCTIONS_PER_PRODUCT, feedback_products
from stillhook.project import load_project
from tests.paths import REPO_ROOT

FOLDER = REPO_ROOT / "firmware_examples" / "feedback"
TOOLS = ("make", "cc", "arm-none-eabi-gcc", "arm-none-eabi-size", "qemu-system-arm")


@pytest.fixture(scope="module")
def cortex_run(tmp_path_factory):
    missing = [t for t in TOOLS if shutil.which(t) is None]
    if missing:
        pytest.skip(f"needs {', '.join(missing)} on PATH (firmware_examples/scripts/install-toolchain.sh)")
    build = tmp_path_factory.mktemp("fb_cm")
    r = subprocess.run(["make", "--no-print-directory", "-C", str(FOLDER), "cortex-m-check", f"BUILD={build}",
                        f"PYTHON={sys.executable}"], capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stdout[-3000:] + r.stderr[-3000:]
    return build, r.stdout


@pytest.fixture(scope="module")
def feedback_tables() -> FeedbackTables:
    """The example project's feedback tables, designed once for this module."""
    return plan_for_project(load_project(FOLDER / "project.toml")).feedback


def _figures(text: str, what: str) -> tuple[float, float, float]:
    m = re.search(r"^# cortex-m3: " + re.escape(what) + r" instructions per cycle: min (\d+) mean ([\d.]+) max (\d+)$",
                  text, re.MULTILINE)
    assert m, f"no '{what}' line in the Cortex-M report"
    return float(m.group(1)), float(m.group(2)), float(m.group(3))


def test_cortex_m_output_is_the_python_reference_byte_for_byte(cortex_run):
    build, out = cortex_run
    assert "Cortex-M3 output identical to the host's" in out
    # compared here directly with the Python integer reference, not only with the host build
    assert (build / "cortex-m" / "output.csv").read_bytes() == (build / "expected.csv").read_bytes()
    statuses = [int(line.split(",")[2]) for line in (build / "expected.csv").read_text().splitlines()]
    off = sum(1 for s in statuses if s & 0x70)  # SHK_FB_RANGE | SHK_FB_STALE | SHK_FB_JUMP
    assert f"# cortex-m3: cycles with feedback off (sensor fault): {off}" in out
    assert f"# cortex-m3: cycles run: {len(statuses)}" in out


def test_instructions_per_cycle_shaper_alone_and_with_feedback(cortex_run, feedback_tables):
    build, out = cortex_run
    s_min, s_mean, s_max = _figures(out, "shaper alone (lookup, select, step)")
    b_min, b_mean, b_max = _figures(out, "shaper + feedback")
    # min / max are single cycles to the nearest SysTick tick (40 instructions): allow one tick
    assert s_min - 40 <= s_mean <= s_max + 40 and b_min - 40 <= b_mean <= b_max + 40
    assert b_mean > s_mean and b_max > s_max
    fb_mean = float(re.search(r"feedback step alone, mean instructions per cycle: ([\d.]+)", out).group(1))
    assert fb_mean == pytest.approx(b_mean - s_mean, abs=0.02)
    # the cost the emitted header states (products x a per-product figure) matches this measurement; the
    # measured mean includes the cycles with the feedback off, so weight by the cycles it was on
    t = feedback_tables
    header = (build / "emit" / "sway_feedback.h").read_text()
    stated = FEEDBACK_INSTRUCTIONS_PER_PRODUCT * feedback_products(t)
    assert f"about {stated} Cortex-M3 instructions" in header
    statuses = [int(line.split(",")[2]) for line in (build / "expected.csv").read_text().splitlines()]
    on = sum(1 for s in statuses if not s & 0x70) / len(statuses)
    assert stated * on == pytest.approx(fb_mean, rel=0.15)


def test_feedback_block_flash_holds_its_tables_and_needs_no_static_ram(cortex_run, feedback_tables):
    _, out = cortex_run
    m = re.search(r"feedback block flash: (\d+) bytes \(const tables (\d+)\), static RAM: (\d+) bytes", out)
    assert m
    flash, tables, ram = (int(g) for g in m.groups())
    t = feedback_tables
    table_bytes = 4 * (t.obs_next.size + t.du_row.size + t.vhat_row.size + t.ref_next.size)  # int32 entries
    assert flash > tables >= table_bytes and ram == 0
    inst = int(re.search(r"RAM of the feedback instance bytes: (\d+)", out).group(1))
    assert inst >= 4 * (6 + 2 + 5)  # observer, deviation model and reference-model states, int32 each
