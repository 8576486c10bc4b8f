"""The emitted README answers a firmware engineer's first questions, with numbers that hold."""

import re

import numpy as np
import pytest

from stillhook.firmware.plan import plan_for_project, render_files
from stillhook.firmware.render_c import STEP_INSTRUCTIONS, headroom
from stillhook.firmware.shaper_model import ShaperModel
from tests.firmware.test_plan import two_mode_schedule
from tests.paths import FIRMWARE_EXAMPLES_DIR


@pytest.fixture(scope="module")
def plan(demo_project):
    # synthetic schedule (fast); rows 3 and 4 use UM-ZV, whose negative impulses make sum |A| > 1
    return plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 12, negative_rows=(3, 4)))


def test_readme_has_the_integration_sections(plan):
    text = render_files(plan)[f"{plan.prefix}_README.md"]
    for heading in ("## Chaining", "## Emergency stop, drive disable, fault", "## Calling contexts",
                    "## Full scale and headroom", "## Status values", "## Payload mass", "## Cost per step"):
        assert heading in text
    for status in ("SHK_OK", "SHK_CLAMPED_LOW", "SHK_CLAMPED_HIGH", "SHK_ERR_ARGUMENT", "SHK_ERR_TABLE", "clipped"):
        assert f"`{status}`" in text
    assert f"shk_shaper_{plan.fmt}_init" in text and "not a runtime input" in text


def test_step_cost_model_reproduces_the_measured_cortex_m_figures():
    # the figures measured on the Cortex-M3 example (qemu instruction counts), firmware_examples/README.md
    text = (FIRMWARE_EXAMPLES_DIR / "README.md").read_text()
    row = next(line for line in text.splitlines() if line.startswith("| Instructions per shaper step"))
    taps = [int(t) for t in re.search(r"rows of ([\d / ]+) taps", row).group(1).split("/")]
    cells = [c.strip() for c in row.strip("|").split("|")][1:]
    for fmt, cell in zip(("q15", "q31"), cells, strict=True):
        per_tap, base = STEP_INSTRUCTIONS[fmt]
        assert [per_tap * n + base for n in taps] == [int(v) for v in cell.split("/")]


def _steady_with_switch(plan, x: int, a: int, b: int) -> int:
    """Clipped count of the integer reference: x held on row a until the ring is full, then row b."""
    model = ShaperModel(plan.shaper)
    n = plan.shaper.ring_len
    model.run(np.full(n, x), a)
    model.run(np.full(n, x), b)
    model.run(np.zeros(n, dtype=np.int64), b)
    return model.clipped


def test_stated_headroom_keeps_every_row_switch_unclipped(plan):
    # the bound y <= X sum|A| (1 + t) is checked on the bit-exact integer model of the C runtime
    row_abs, t, x_max = headroom(plan)
    assert row_abs > 1 and t > 0 and x_max < 1
    full = 2 ** 15 - 1 if plan.fmt == "q15" else 2 ** 31 - 1
    x = int(x_max * full)
    rows = plan.shaper.n_rows
    pairs = [(r, r + 1) for r in range(rows - 1)] + [(r + 1, r) for r in range(rows - 1)]
    assert all(_steady_with_switch(plan, x, a, b) == 0 for a, b in pairs)
    # and the headroom is needed: at full scale some switch clips
    assert any(_steady_with_switch(plan, full, a, b) > 0 for a, b in pairs)
