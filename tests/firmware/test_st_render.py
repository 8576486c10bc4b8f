"""The PLC folder as text: README (cycle, scaling, status values, stop/reset, cost per row, cautions),
manifest, the ST's portable subset, the emit-target dispatch."""

from __future__ import annotations

import json
import re

import pytest

from stillhook.cautions import CAUTIONS
from stillhook.errors import ConfigError
from stillhook.firmware.plan import EMIT_TARGETS, render_target
from stillhook.firmware.render_plc_readme import OPERATION_KEYS
from stillhook.firmware.render_st import render_st_files, st_blocks, st_file_names, st_pous
from stillhook.firmware.st_pou import st_text
from stillhook.firmware.st_shaper import STATUS_VALUES, shaper_cost


@pytest.fixture(scope="module", params=["sa", "sb", "sc", "se"])
def folder(request, st_plans):
    plan = st_plans[request.param]
    return plan, render_st_files(plan), st_file_names(plan)


def test_readme_says_cycle_scaling_status_stop_and_cautions(folder):
    plan, files, names = folder
    text = files[names["readme"]]
    assert f"{plan.cycle_s:g} s" in text and f"counts of {plan.schedule.lsb_m:g} m" in text
    assert f"{plan.schedule.length_min} .. {plan.schedule.length_max} counts" in text
    for value in STATUS_VALUES.values():
        assert re.search(rf"^\| {value} \|", text, re.M)
    assert "## Stop and reset" in text and f"{plan.shaper.ring_len - 1} cycles" in text
    for c in CAUTIONS:
        assert c in text and c in files[names["st"]]


def test_readme_cost_table_has_one_line_per_row_with_the_plan_counts(folder):
    plan, files, names = folder
    text = files[names["readme"]]
    shaper = st_blocks(plan)[0].pou.name
    lines = [ln for ln in text.splitlines() if ln.startswith(f"| {shaper} | row ")]
    assert len(lines) == len(plan.rows)
    for ln, row in zip(lines, plan.rows, strict=True):
        cells = [c.strip() for c in ln.strip("|").split("|")]
        ops = shaper_cost(plan, len(row.amplitudes)).as_dict()
        assert int(cells[2]) == len(row.amplitudes) and [int(c) for c in cells[3:]] == [ops[k] for k in OPERATION_KEYS]
    if plan.notch is not None:
        assert any(ln.startswith(f"| {plan.prefix.upper()}_NOTCH |") for ln in text.splitlines())


def test_manifest_lists_the_files_and_the_operation_counts(folder):
    plan, files, names = folder
    m = json.loads(files[names["manifest"]])
    assert m["files"] == sorted(files) and m["input_digest_sha256"] == plan.digest
    assert m["cautions"] == list(CAUTIONS)
    rows = m["plc"]["operations_per_cycle"]["shaper"]
    assert [r["taps"] for r in rows] == [len(r.amplitudes) for r in plan.rows]


def test_st_keeps_to_the_portable_subset(folder):
    plan, files, names = folder
    st = files[names["st"]]
    code = re.sub(r"\(\*.*?\*\)", "", st, flags=re.S)  # comments may mention anything
    assert "{" not in code and "}" not in code  # no pragmas
    for word in ("REAL", "POINTER", "REF_TO", "SHL", "SHR", "__NEW", "VAR_GLOBAL", "AT %", "LREAL"):
        assert word not in code
    bounds = re.findall(r"ARRAY\[0\.\.(\S+)\]", code)
    assert bounds and all(b.isdigit() for b in bounds)  # literal bounds only
    assert st.isascii()


def test_unknown_target_is_refused(st_plans):
    assert set(EMIT_TARGETS) == {"c", "st"}
    with pytest.raises(ConfigError, match="allowed: c, st"):
        render_target(st_plans["se"], "plc")


def test_q15_shaper_needs_no_64_bit_type(st_plans):
    """Many PLCs lack LINT: the Q15 shaper (and the helper it calls) must not use it."""
    for key in ("sa", "sb", "se"):
        pous = {p.name: p for p in st_pous(st_plans[key])}
        shaper = pous[f"{key.upper()}_SHAPER"]
        assert "LINT" not in st_text(shaper)
        assert f"{key.upper()}_FLOOR_DIV_DINT" in shaper.body
