"""Compile gates on the emitted folder: strict warnings, sanitizers, cppcheck, no floating point,
the version #error, the static asserts, and a self-test that really fails on a wrong table."""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from stillhook.emit import RUNTIME_FILES, plan_for_project, render_files
from stillhook.outputs import write_files
from tests.test_emit import two_mode_schedule

STRICT = ["-std=c99", "-Wall", "-Wextra", "-Wconversion", "-Wsign-conversion", "-Wshadow", "-pedantic",
          "-Werror"]
EXTRA = ["-Wvla", "-Wstrict-prototypes", "-Wmissing-prototypes", "-Wcast-qual", "-Wundef"]

pytestmark = pytest.mark.skipif(shutil.which("gcc") is None, reason="gcc is not installed")


@pytest.fixture(scope="module")
def folders(tmp_path_factory, demo_project):
    """Q15 without notch, and Q31 with the project's notch (escalated) and UM-ZV rows."""
    root = tmp_path_factory.mktemp("gates")
    out = {}
    for name, kwargs in (("q15", {"fmt": "q15"}),
                         ("q31", {"include_notch": True})):
        sched = two_mode_schedule(demo_project, 10, negative_rows=(2,) if name == "q31" else ())
        plan = plan_for_project(demo_project, schedule=sched, prefix=f"g{name}", **kwargs)
        write_files(root / name, render_files(plan))
        out[name] = (root / name, plan)
    return out


def _sources(folder, prefix):
    return [str(folder / n) for n in RUNTIME_FILES if n.endswith(".c")] + [
        str(folder / f"{prefix}_tables.c"), str(folder / f"{prefix}_selftest.c")]


def _build(folder, prefix, flags, exe="selftest"):
    cmd = ["gcc", *flags, "-o", str(folder / exe), *_sources(folder, prefix)]
    return subprocess.run(cmd, capture_output=True, text=True, cwd=folder)


@pytest.mark.parametrize("which", ["q15", "q31"])
def test_strict_build_and_self_test_pass(folders, which):
    folder, plan = folders[which]
    r = _build(folder, plan.prefix, [*STRICT, *EXTRA, "-O2"])
    assert r.returncode == 0, r.stderr
    run = subprocess.run([str(folder / "selftest")], capture_output=True, text=True)
    assert run.returncode == 0 and "passed" in run.stdout, run.stdout


@pytest.mark.parametrize("which", ["q15", "q31"])
def test_self_test_under_address_and_undefined_sanitizers(folders, which):
    # cffi builds with Python's flags, which include -fwrapv (signed overflow defined); this separate
    # build traps any signed overflow, shift error or out-of-bounds access instead.
    folder, plan = folders[which]
    flags = ["-std=c99", "-O1", "-g", "-fsanitize=address,undefined", "-fno-sanitize-recover=all",
             "-fno-omit-frame-pointer"]
    r = _build(folder, plan.prefix, flags, exe="selftest_san")
    if r.returncode != 0 and "sanitizer" in r.stderr.lower():
        pytest.skip(f"sanitizer runtime not available: {r.stderr.strip()[:200]}")
    assert r.returncode == 0, r.stderr
    run = subprocess.run([str(folder / "selftest_san")], capture_output=True, text=True)
    assert run.returncode == 0, run.stdout + run.stderr
    assert "runtime error" not in run.stderr


def test_no_floating_point_in_runtime_or_tables(folders):
    # -mgeneral-regs-only makes gcc reject any float/double arithmetic (x86: "SSE disabled" errors)
    folder, plan = folders["q31"]
    srcs = [s for s in _sources(folder, plan.prefix) if not s.endswith("_selftest.c")]
    r = subprocess.run(["gcc", "-std=c99", "-O2", "-mgeneral-regs-only", "-c", *srcs], cwd=folder,
                       capture_output=True, text=True)
    if "unrecognized command-line option" in r.stderr:
        pytest.skip("this gcc has no -mgeneral-regs-only")
    assert r.returncode == 0, r.stderr


def test_runtime_has_no_malloc_float_types_or_recursion(folders):
    folder, _ = folders["q15"]
    text = {n: (folder / n).read_text() for n in RUNTIME_FILES}
    code = {n: re.sub(r"/\*.*?\*/", "", t, flags=re.S) for n, t in text.items()}
    for n, t in code.items():
        assert not re.search(r"\b(malloc|calloc|realloc|free|float|double|goto)\b", t), n
        assert "#include <stdint.h>" in t or '#include "shk_' in t
    # call graph of the runtime's functions has no cycle (no direct or mutual recursion)
    calls = {}
    for t in code.values():
        for m in re.finditer(r"^\w[\w\s\*]*?\b(shk_\w+)\s*\([^;{]*\)\s*\{", t, flags=re.M):
            body = t[m.end():t.find("\n}", m.end())]
            calls[m.group(1)] = set(re.findall(r"\b(shk_\w+)\s*\(", body))
    assert len(calls) >= 20  # every function was found

    def reaches(start, node, seen):
        for callee in calls.get(node, ()):
            if callee == start:
                return True
            if callee not in seen:
                seen.add(callee)
                if reaches(start, callee, seen):
                    return True
        return False

    assert not [f for f in calls if reaches(f, f, set())]


def test_cppcheck_clean(folders):
    if shutil.which("cppcheck") is None:
        pytest.skip("cppcheck is not installed (the lead installs it with apt in CI)")
    folder, _ = folders["q31"]
    r = subprocess.run(["cppcheck", "--enable=warning,style,performance,portability", "--std=c99",
                        "--error-exitcode=1", "--quiet", "--inline-suppr", "--suppress=missingIncludeSystem",
                        "."], cwd=folder, capture_output=True, text=True)
    assert r.returncode == 0, r.stderr + r.stdout


def test_version_mismatch_stops_the_build(folders, tmp_path):
    folder, plan = folders["q15"]
    bad = tmp_path / "bad"
    shutil.copytree(folder, bad)
    h = bad / "shk_fixed.h"
    h.write_text(h.read_text().replace("#define SHK_RUNTIME_VERSION 1", "#define SHK_RUNTIME_VERSION 2"))
    r = subprocess.run(["gcc", "-std=c99", "-c", f"{plan.prefix}_tables.c"], cwd=bad, capture_output=True, text=True)
    assert r.returncode != 0 and "runtime version 1" in r.stderr


def test_static_assert_catches_a_size_the_generator_did_not_make(folders, tmp_path):
    folder, plan = folders["q15"]
    bad = tmp_path / "bad"
    shutil.copytree(folder, bad)
    c = bad / f"{plan.prefix}_tables.c"
    text = c.read_text()
    # drop the last delay: the array is one element short of ROWS x TAPS_STRIDE
    start = text.index(f"const uint32_t {plan.prefix}_shaper_delays[] = {{")
    end = text.index("};", start)
    body = text[start:end].rstrip().rstrip(",")
    body = body[: body.rfind(",")] + ","
    c.write_text(text[:start] + body + "\n" + text[end:])
    r = subprocess.run(["gcc", "-std=c99", "-c", c.name], cwd=bad, capture_output=True, text=True)
    assert r.returncode != 0 and "delays_size" in r.stderr


def test_self_test_fails_on_a_wrong_table(folders, tmp_path):
    folder, plan = folders["q15"]
    bad = tmp_path / "bad"
    shutil.copytree(folder, bad)
    c = bad / f"{plan.prefix}_tables.c"
    text = c.read_text()
    start = text.index(f"const uint32_t {plan.prefix}_shaper_delays[] = {{")
    row0 = text.index("/* row 0 */\n", start) + len("/* row 0 */\n")
    first = re.search(r"(\d+)u", text[row0:])
    assert first.group(1) == "0"  # every shaper's first impulse is at delay 0
    c.write_text(text[:row0 + first.start()] + "1u" + text[row0 + first.end():])  # delay it by a cycle
    r = _build(bad, plan.prefix, ["-std=c99", "-O1"])
    assert r.returncode == 0, r.stderr
    run = subprocess.run([str(bad / "selftest")], capture_output=True, text=True)
    assert run.returncode == 1 and "FAILED" in run.stdout


def test_single_row_schedule_builds_and_passes(demo_project, tmp_path):
    # one row: no threshold array (NULL in the table), every length maps to row 0
    plan = plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 1), prefix="one")
    write_files(tmp_path, render_files(plan))
    r = _build(tmp_path, "one", [*STRICT, "-O1"])
    assert r.returncode == 0, r.stderr
    run = subprocess.run([str(tmp_path / "selftest")], capture_output=True, text=True)
    assert run.returncode == 0, run.stdout
