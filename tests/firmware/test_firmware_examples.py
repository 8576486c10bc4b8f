"""firmware_examples/: the emitted demo shaper in a host cyclic task and on a Cortex-M3 under qemu.

The make targets are the product here (CI runs them too); these tests run them in a temporary build
folder and check what they print and write against definitions outside the project where one exists.
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from stillhook.model.lookup import lookup_thresholds, rows_for_counts
from tests.paths import FIRMWARE_EXAMPLES_DIR as FW

RECORDING = FW / "data" / "operator_recording.csv"

HAVE_HOST = shutil.which("make") is not None and shutil.which("cc") is not None
HAVE_ARM = all(shutil.which(t) for t in ("arm-none-eabi-gcc", "arm-none-eabi-size", "arm-none-eabi-nm",
                                         "qemu-system-arm"))
needs_host = pytest.mark.skipif(not HAVE_HOST, reason="needs make and a C compiler (cc) on PATH")
needs_arm = pytest.mark.skipif(not (HAVE_HOST and HAVE_ARM),
                               reason="needs arm-none-eabi-gcc/-size/-nm and qemu-system-arm "
                                      "(firmware_examples/scripts/install-toolchain.sh installs them)")


def _load_recording_module():
    spec = importlib.util.spec_from_file_location("fw_recording", FW / "scripts" / "recording.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


rec = _load_recording_module()


def make(build: Path, *targets: str, **variables: str) -> subprocess.CompletedProcess:
    cmd = ["make", "--no-print-directory", "-C", str(FW), *targets, f"BUILD={build}", f"PYTHON={sys.executable}",
           *[f"{k}={v}" for k, v in variables.items()]]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=600)


def _report(text: str, label: str) -> str:
    m = re.search(r"^# cortex-m3: " + re.escape(label) + r": (.+)$", text, re.MULTILINE)
    assert m, f"no '{label}' line in the Cortex-M report"
    return m.group(1)


@pytest.fixture(scope="module")
def host_build(tmp_path_factory):
    """`make check` once (emits the demo, builds and runs the host task); returns the build folder."""
    if not HAVE_HOST:
        pytest.skip("needs make and a C compiler (cc) on PATH")
    build = tmp_path_factory.mktemp("fw_build")
    r = make(build, "check")
    assert r.returncode == 0, r.stdout[-3000:] + r.stderr[-3000:]
    return build, r


@pytest.fixture(scope="module")
def cortex_build(host_build):
    """`make cortex-m-check` in the same folder (emitted tables and host output reused)."""
    if not HAVE_ARM:
        pytest.skip("needs arm-none-eabi-gcc and qemu-system-arm")
    build, _ = host_build
    r = make(build, "cortex-m-check")
    assert r.returncode == 0, r.stdout[-3000:] + r.stderr[-3000:]
    return build, r


# -- the committed recording ----------------------------------------------------------------------
def test_recording_is_what_the_generator_writes(tmp_path):
    out = tmp_path / "rec.csv"
    subprocess.run([sys.executable, str(FW / "scripts" / "make_recording.py"), "--out", str(out)], check=True,
                   timeout=120)
    assert out.read_bytes() == RECORDING.read_bytes(), "data/operator_recording.csv is stale: run `make recording`"


def test_recording_respects_the_drive_and_leaves_the_envelope():
    from stillhook.project import load_demo_project

    p = load_demo_project()
    speed, rope = rec.read_recording(RECORDING)
    Ts, v_max, a_max = p.drive["cycle_s"], p.drive["max_speed_m_s"], p.drive["max_accel_m_s2"]
    lsb = p.firmware["rope_length_lsb_m"]
    # kinematics: |dv| <= a_max Ts and |dL| <= hoist speed Ts per cycle, +1 count for rounding
    assert np.abs(np.diff(speed)).max() <= a_max * Ts / v_max * rec.SPEED_100PCT + 1
    assert np.abs(np.diff(rope)).max() <= p.drive["hoist_speed_m_s"] * Ts / lsb + 1
    assert np.abs(speed).max() <= rec.SPEED_100PCT
    assert speed[0] == 0 and speed[-1] == 0
    lo, hi = p.envelope.rope_length_range_m
    outside = (rope * lsb > hi) | (rope * lsb < lo)
    assert 0 < outside.sum() < rope.size  # the demo shows the clamp status, and normal running
    # full speed is commanded while the rope is still outside the envelope (the creep limit acts)
    assert np.any(outside & (np.abs(speed) > rec.CREEP_LIMIT))


def test_read_recording_names_the_bad_line(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("# c\nspeed_ref,rope_length\n0,5000\n40000,5000\n")
    with pytest.raises(ValueError, match=r"bad.csv:4: .*out of range"):
        rec.read_recording(bad)
    bad.write_text("speed,rope\n0,1\n")
    with pytest.raises(ValueError, match="header"):
        rec.read_recording(bad)


# -- host ---------------------------------------------------------------------------------------
@needs_host
def test_make_check_runs_host_task_bit_exact(host_build):
    build, r = host_build
    assert "every shaped value, row and status is bit-exact" in r.stdout
    assert "self-test passed" in r.stdout
    assert "provenance: the tables match the project" in r.stdout
    assert (build / "host_output.csv").read_bytes() == (build / "expected.csv").read_bytes()


@needs_host
def test_host_output_follows_the_shaper_definition(host_build):
    """Independent of stillhook's reference: the impulse sum in floating point, rows from the documented rule.

    Shaper output = impulse convolution (Singer & Seering, "Preshaping command inputs to reduce system
    vibration", ASME JDSMC 112(1), 1990), each command sample spread with the row selected when it arrives
    (the runtime's scatter form, shk_shaper.h), scaled by 2^-F. The runtime carries its rounding remainder,
    so each output is within 1 + (a + b) 2^(S-1-F) count of the exact sum (a, b: delayed parts leaving and
    arriving that cycle; S = 7), and the outputs add up EXACTLY to the (creep-limited) commands.
    """
    build, _ = host_build
    m = json.loads((build / "emit" / "manifest.json").read_text())
    speed, rope = rec.read_recording(RECORDING)
    out = np.loadtxt(build / "host_output.csv", delimiter=",", skiprows=1, dtype=np.int64)
    assert out.shape == (speed.size, 4) and np.array_equal(out[:, 0], np.arange(speed.size))
    y, rows, status = out[:, 1], out[:, 2], out[:, 3]

    li = m["rope_length_input"]
    row_m = np.array([r["rope_length_m"] for r in m["shaper_rows"]])
    # lookup status: 1 below the envelope, 2 above (shk_fixed.h); row by the manifest's rule
    assert np.array_equal(status, np.where(rope < li["min_counts"], 1, np.where(rope > li["max_counts"], 2, 0)))
    # row by the one lookup rule (stillhook.model.lookup, checked against its definition in
    # tests/shaping/test_lookup.py): the manifest's rows and rule give the manifest's thresholds
    assert lookup_thresholds(row_m, li["lookup_rule"], li["lsb_m"]).tolist() == li["thresholds_counts"]
    want_rows = rows_for_counts(li["thresholds_counts"], np.clip(rope, li["min_counts"], li["max_counts"]))
    assert np.array_equal(rows, want_rows)
    assert len(set(rows.tolist())) >= 2  # the recording switches rows while the trolley moves

    F = {"q15": 15, "q31": 31}[m["format"]]
    x = np.where(status != 0, np.clip(speed, -rec.CREEP_LIMIT, rec.CREEP_LIMIT), speed) * 2 ** (F - 15)
    exact = np.zeros(speed.size + m["ring_len"])
    a_leaving = np.zeros(speed.size + m["ring_len"])
    b_arriving = np.zeros(speed.size + m["ring_len"])
    for n in np.flatnonzero(x):  # zero samples add nothing
        r = m["shaper_rows"][rows[n]]
        d = np.array(r["delays_cycles"])
        exact[n + d] += np.array(r["amplitudes"], dtype=float) * float(x[n]) / 2.0**F
        a_leaving[n] += np.count_nonzero(d)
        b_arriving[n + d[d > 0]] += 1
    exact, bound = exact[: speed.size], 1 + (a_leaving + b_arriving)[: speed.size] * 2.0 ** (7 - 1 - F)
    assert np.all(np.abs(y - exact) < bound + 1e-6)
    # the field property: the shaped command travels exactly the commanded distance, row switch included
    assert int(y.sum()) == int(x.sum())
    # rest to rest: once the command has been zero for the whole ring, the output is exactly zero
    last_move = np.flatnonzero(speed)[-1]
    assert last_move + m["ring_len"] < speed.size
    assert np.all(y[last_move + m["ring_len"]:] == 0)


@needs_host
def test_host_program_reports_a_wrong_value(host_build, tmp_path):
    build, _ = host_build
    lines = (build / "expected.csv").read_text().splitlines()
    k = 1 + 2 * len(lines) // 3
    c, yv, row, st = lines[k].split(",")
    lines[k] = ",".join([c, str(int(yv) + 1), row, st])
    wrong = tmp_path / "wrong.csv"
    wrong.write_text("\n".join(lines) + "\n")
    r = subprocess.run([str(build / "host" / "shaper_host"), str(RECORDING), str(wrong), str(tmp_path / "o.csv")],
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 1
    assert f"cycle {c}: got {yv}" in r.stderr and "FAILED: 1 cycles differ" in r.stdout


@needs_host
def test_host_task_clean_under_sanitizers(host_build, tmp_path):
    """The example's own C (CSV parsing, task glue) under AddressSanitizer and UBSan, no recovery."""
    build, _ = host_build
    r = make(tmp_path, "check", EMIT_DIR=str(build / "emit"),
             HOST_EXTRA="-fsanitize=address,undefined -fno-sanitize-recover=all")
    if r.returncode != 0 and "cannot find" in r.stderr and "asan" in r.stderr:
        pytest.skip("the C compiler has no sanitizer runtime")
    assert r.returncode == 0, r.stdout[-3000:] + r.stderr[-3000:]
    assert (tmp_path / "host_output.csv").read_bytes() == (build / "host_output.csv").read_bytes()


@needs_host
@pytest.mark.skipif(shutil.which("cppcheck") is None,
                    reason="cppcheck is not installed (.ci/run installs it with apt-get)")
def test_example_c_passes_cppcheck(host_build):
    build, _ = host_build
    sources = [str(p) for p in (FW / "host").glob("*.c")] + [str(p) for p in (FW / "common").glob("*.c")] + \
        [str(p) for p in (FW / "cortex-m").glob("*.c")]
    # unusedStructMember: the vector-table union's members are used only in designated initializers
    r = subprocess.run(["cppcheck", "--quiet", "--error-exitcode=1", "--enable=warning,style,portability",
                        "--std=c99", "--suppress=missingIncludeSystem", "--suppress=unusedStructMember",
                        f"-I{build / 'emit'}", f"-I{FW / 'common'}", f"-I{FW / 'cortex-m'}", *sources],
                       capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr


@needs_host
def test_tables_carry_the_project_digest(host_build):
    """The digest in the emitted header is SHA-256 (FIPS 180-4, via hashlib) of the demo project's bytes."""
    from stillhook.project import demo_project_text

    build, _ = host_build
    header = (build / "emit" / "sway_tables.h").read_text()
    want = hashlib.sha256(demo_project_text().encode("utf-8")).hexdigest()
    assert f'#define SWAY_INPUT_DIGEST "{want}"\n' in header  # firmware can log it, the script reads it
    # the script reads the macro: a header whose digest macro was changed is caught
    forged = build / "emit_forged"
    shutil.copytree(build / "emit", forged)
    h = forged / "sway_tables.h"
    h.write_text(h.read_text().replace(f'SWAY_INPUT_DIGEST "{want}"', f'SWAY_INPUT_DIGEST "{want[::-1]}"'))
    r = subprocess.run([sys.executable, str(FW / "scripts" / "check_provenance.py"), "--emit-dir", str(forged),
                        "--project", "demo"], capture_output=True, text=True, timeout=120)
    assert r.returncode == 1
    assert f"provenance: MISMATCH: sway_tables.h digest {want[::-1]} is not the project's {want}" in r.stderr
    # one re-emit (about as long as the emit itself): every file must match except the one edited by hand
    edited = build / "emit_edited"
    shutil.copytree(build / "emit", edited)
    tables_c = edited / "sway_tables.c"
    tables_c.write_text(tables_c.read_text().replace("/* row 0", "/* edited row 0", 1))
    r = subprocess.run([sys.executable, str(FW / "scripts" / "check_provenance.py"), "--emit-dir", str(edited),
                        "--project", "demo", "--re-emit"], capture_output=True, text=True, timeout=300)
    assert r.returncode == 1
    mismatches = [ln for ln in r.stderr.splitlines() if ln.startswith("provenance: MISMATCH")]
    assert mismatches == ["provenance: MISMATCH: sway_tables.c: differs from a fresh emit of the project"]
    assert "files compared byte for byte" in r.stdout


# -- Cortex-M3 under qemu -----------------------------------------------------------------------
@needs_arm
def test_cortex_m_output_identical_and_figures_reported(cortex_build):
    build, r = cortex_build
    text = r.stdout
    assert "Cortex-M3 output is byte-identical to the host's" in text
    assert (build / "cortex_m_output.csv").read_bytes() == (build / "host_output.csv").read_bytes()
    m = json.loads((build / "emit" / "manifest.json").read_text())
    assert int(_report(text, "cycles run")) == len(rec.read_recording(RECORDING)[0])
    assert int(_report(text, "late cycles (overrun catch-up)")) == 0
    assert int(_report(text, "most cycles due at once")) == 1
    # 25 MHz SysTick under -icount shift=0 (1 ns per instruction): 40 instructions per tick
    assert int(_report(text, "calibration SysTick ticks")) * 40 == pytest.approx(
        int(_report(text, "calibration instructions")), abs=40)
    steps = re.findall(r"^# cortex-m3: shaper step, row (\d+) \((\d+) taps\): ([\d.]+) instructions per step$",
                       text, re.MULTILINE)
    assert len(steps) == len(m["shaper_rows"])
    for row, taps, instr in steps:
        assert int(taps) == len(m["shaper_rows"][int(row)]["amplitudes"])
        assert 0 < float(instr) < 100 * int(taps) + 200
    assert int(_report(text, "stack used bytes")) < 16 * 1024
    # the emitter's RAM figure matches what the compiler allocated: ring + instance struct (+ padding)
    sizes = m["sizes"]
    ram = int(re.search(r"^caller-owned RAM .*: (\d+)$", text, re.MULTILINE).group(1))
    assert 0 <= ram - (sizes["ring_bytes"] + sizes["instance_bytes_32bit"]) < 8
    # const tables: the emitter's table bytes + the two descriptor structs (24 + 16 bytes, 32-bit pointers)
    tables = int(re.search(r"^runtime \+ tables flash: \d+ \(code \d+, const tables (\d+)\)$", text,
                           re.MULTILINE).group(1))
    assert tables == sizes["flash_table_bytes"] + 24 + 16
    assert re.search(r"^runtime \+ tables static RAM: 0$", text, re.MULTILINE)


@needs_arm
def test_cortex_m_catches_up_after_an_overrun(cortex_build, tmp_path):
    build, _ = cortex_build
    r = make(tmp_path, "cortex-m-check", EMIT_DIR=str(build / "emit"), FW_DEFINES="-DFW_INJECT_OVERRUN_AT=1000")
    assert r.returncode == 0, r.stdout[-3000:] + r.stderr[-3000:]
    assert int(_report(r.stdout, "late cycles (overrun catch-up)")) == 1
    assert int(_report(r.stdout, "most cycles due at once")) == 2
    # catch-up keeps the delays in real cycles: the output sequence is unchanged, only late
    assert (tmp_path / "cortex_m_output.csv").read_bytes() == (build / "host_output.csv").read_bytes()


@needs_arm
def test_cortex_m_stops_when_it_cannot_keep_up(cortex_build, tmp_path):
    build, _ = cortex_build
    r = make(tmp_path, "cortex-m-check", EMIT_DIR=str(build / "emit"),
             FW_DEFINES="-DFW_INJECT_OVERRUN_AT=1000 -DFW_MAX_CYCLES_DUE=1u")
    assert r.returncode != 0
    assert "OVERRUN FAULT: 2 cycles due at once" in r.stdout
    assert "qemu exited with status 4" in r.stderr


def test_readme_carries_the_cautions_and_the_install_command():
    import stillhook

    text = (FW / "README.md").read_text()
    for caution in stillhook.CAUTIONS:
        assert caution in text
    assert "apt-get install -y --no-install-recommends gcc-arm-none-eabi libnewlib-arm-none-eabi qemu-system-arm" \
        in (FW / "scripts" / "install-toolchain.sh").read_text()
