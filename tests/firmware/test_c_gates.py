"""Compile gates on the emitted folder: strict warnings, sanitizers, cppcheck, no floating point,
the version #error, the static asserts, and a self-test that really fails on a wrong table."""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from stillhook.firmware.plan import plan_for_project, render_files
from stillhook.firmware.runtime import RUNTIME_FILES, RUNTIME_VERSION
from stillhook.outputs import write_files
from tests.firmware.test_plan import two_mode_schedule

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
        pytest.skip("cppcheck is not installed (.ci/run installs it with apt-get; STILLHOOK_REQUIRE_TOOLS=1 "
                    "turns this skip into a failure)")
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
    old = f"#define SHK_RUNTIME_VERSION {RUNTIME_VERSION}\n"
    assert old in h.read_text()
    h.write_text(h.read_text().replace(old, f"#define SHK_RUNTIME_VERSION {RUNTIME_VERSION + 1}\n"))
    r = subprocess.run(["gcc", "-std=c99", "-c", f"{plan.prefix}_tables.c"], cwd=bad, capture_output=True, text=True)
    assert r.returncode != 0 and f"runtime version {RUNTIME_VERSION}" in r.stderr


def _copy_tables(folders, tmp_path):
    """A copy of the emitted Q15 folder to spoil: (folder, plan, tables.c path, its text, start of delays)."""
    folder, plan = folders["q15"]
    bad = tmp_path / "bad"
    shutil.copytree(folder, bad)
    c = bad / f"{plan.prefix}_tables.c"
    text = c.read_text()
    return bad, plan, c, text, text.index(f"const uint32_t {plan.prefix}_shaper_delays[] = {{")


def test_static_assert_catches_a_size_the_generator_did_not_make(folders, tmp_path):
    bad, plan, c, text, start = _copy_tables(folders, tmp_path)
    # drop the last delay: the array is one element short of ROWS x TAPS_STRIDE
    end = text.index("};", start)
    body = text[start:end].rstrip().rstrip(",")
    body = body[: body.rfind(",")] + ","
    c.write_text(text[:start] + body + "\n" + text[end:])
    r = subprocess.run(["gcc", "-std=c99", "-c", c.name], cwd=bad, capture_output=True, text=True)
    assert r.returncode != 0 and "delays_size" in r.stderr


def test_self_test_fails_on_a_wrong_table(folders, tmp_path):
    bad, plan, c, text, start = _copy_tables(folders, tmp_path)
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


def test_ring_capacity_edge_under_sanitizers(folders, tmp_path):
    """The worst case the ring's capacity check allows (255 one-impulse rows, sum |A| = 255 x full
    scale, limit 255.99), driven by the row sequence that piles full-scale samples into one slot, then
    random full-range samples with a random row every cycle: built WITHOUT -fwrapv and under UBSan, so
    any signed overflow in the runtime stops the program; outputs must equal the reference's."""
    import numpy as np

    from stillhook.firmware.shaper_model import ShaperModel, ShaperTable

    folder, _ = folders["q15"]
    rng = np.random.default_rng(17)
    n_rows = 255
    rows = np.concatenate([254 - np.arange(255), np.arange(300) % 255, 254 - np.arange(255),
                           rng.integers(0, n_rows, 2000)])
    body = []
    expected = []
    for fmt, F, st in (("q15", 15, "int16_t"), ("q31", 31, "int32_t")):
        lo, hi = -(2**F), 2**F - 1
        x = np.concatenate([np.full(255, lo), np.full(300, lo), np.full(255, hi),
                            rng.integers(lo, hi, 2000, endpoint=True)])
        table = ShaperTable.from_rows([(np.array([2**F]), np.array([r])) for r in range(n_rows)], fmt)
        model = ShaperModel(table)
        expected += [str(v) for v in model.run(x, rows)] + [f"{model.remainder} {model.clipped}"]
        amp = "INT64_C(2147483648)" if fmt == "q31" else "32768"
        xs = ", ".join(("INT32_MIN" if v == -(2**31) else str(v)) for v in x)
        body.append(f"""
static const {st} x_{fmt}[] = {{{xs}}};
static {"int64_t" if fmt == "q31" else "int32_t"} amps_{fmt}[N_ROWS], ring_{fmt}[N_ROWS];
static void run_{fmt}(void)
{{
    shk_shaper_{fmt}_table_t t;
    shk_shaper_{fmt}_t s;
    uint32_t k;
    for (k = 0u; k < N_ROWS; ++k) {{
        amps_{fmt}[k] = {amp};
    }}
    t.n_rows = N_ROWS; t.taps_stride = 1u; t.ring_len = N_ROWS; t.n_taps = n_taps;
    t.amplitudes = amps_{fmt}; t.delays = delays;
    if (shk_shaper_{fmt}_init(&s, &t, ring_{fmt}, N_ROWS) != SHK_OK) {{
        printf("init failed\\n");
        return;
    }}
    for (k = 0u; k < N_X; ++k) {{
        (void)shk_shaper_{fmt}_select(&s, rows[k]);
        printf("%ld\\n", (long)shk_shaper_{fmt}_step(&s, x_{fmt}[k]));
    }}
    printf("%ld %lu\\n", (long)s.remainder, (unsigned long)s.clipped);
}}
""")
    src = "\n".join([
        "#include <stdio.h>", '#include "shk_shaper.h"', f"#define N_ROWS {n_rows}u", f"#define N_X {rows.size}u",
        "static uint32_t n_taps[N_ROWS], delays[N_ROWS];",
        "static const uint32_t rows[N_X] = {" + ", ".join(f"{int(r)}u" for r in rows) + "};",
        *body,
        "int main(void)\n{\n    uint32_t k;\n    for (k = 0u; k < N_ROWS; ++k) {\n        n_taps[k] = 1u;\n"
        "        delays[k] = k;\n    }\n    run_q15();\n    run_q31();\n    return 0;\n}\n"])
    (tmp_path / "edge.c").write_text(src)
    flags = ["-std=c99", "-O1", "-fsanitize=address,undefined", "-fno-sanitize-recover=all", f"-I{folder}"]
    r = subprocess.run(["gcc", *flags, "-o", str(tmp_path / "edge"), str(tmp_path / "edge.c"),
                        str(folder / "shk_shaper.c")], capture_output=True, text=True)
    if r.returncode != 0 and "sanitizer" in r.stderr.lower():
        pytest.skip(f"sanitizer runtime not available: {r.stderr.strip()[:200]}")
    assert r.returncode == 0, r.stderr
    run = subprocess.run([str(tmp_path / "edge")], capture_output=True, text=True)
    assert run.returncode == 0 and "runtime error" not in run.stderr, run.stderr
    assert run.stdout.split("\n")[:-1] == expected
