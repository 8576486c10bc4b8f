"""The C feedback block (codegen/shk_feedback.c) against the Python integer reference, its fault path,
sanitizers, and the integer controller in closed loop against the float design."""

from __future__ import annotations

import importlib.util
import math
import shutil
import subprocess

import cffi
import numpy as np
import pytest

from stillhook.feedback.controller import FeedbackController
from stillhook.feedback.design import design_feedback, min_damping_ratio
from stillhook.feedback.robustness import check_point, plant_system
from stillhook.firmware.build import runtime_cdef
from stillhook.firmware.feedback_model import FB_JUMP, FB_RANGE, FB_STALE, FeedbackModel
from stillhook.firmware.feedback_tables import feedback_tables, from_q31, to_q31
from stillhook.firmware.plan import plan_for_project, render_files
from stillhook.firmware.runtime import RUNTIME_FILES, runtime_dir
from stillhook.model.envelope import Envelope
from stillhook.model.lookup import rope_length_counts
from stillhook.outputs import write_files
from stillhook.project import project_from_dict
from stillhook.sim.closed_loop import Sensor, run_closed_loop
from stillhook.sim.profiles import trapezoid

SENSOR = {"kind": "hook_angle_rad", "noise_sd": 0.0005, "resolution": 0.0, "delay_cycles": 1,
          "max_abs": None, "max_jump": None, "stale_cycles": 5}
LSB_M = 0.001


@pytest.fixture(scope="module")
def fb():
    env = Envelope(hook_mass_kg=200.0, rigging_length_m=1.5, rope_length_range_m=(2.5, 5.0),
                   payload_mass_range_kg=(250.0, 350.0), damping_ratio=0.002)
    design = design_feedback(env, cycle_s=0.01, tau_s=0.05, max_speed_m_s=0.5, max_accel_m_s2=0.3, sensor=SENSOR,
                             rows=3, design_payload_mass_kg=300.0, target_damping_ratio=0.1)
    return env, design, feedback_tables(design, env, SENSOR, LSB_M)


@pytest.fixture(scope="module")
def lib(tmp_path_factory):
    root = runtime_dir()
    ffi = cffi.FFI()
    ffi.cdef(runtime_cdef())
    sources = [str(root / n) for n in RUNTIME_FILES if n.endswith(".c")]
    header = "".join(f'#include "{n}"\n' for n in RUNTIME_FILES if n.endswith(".h"))
    ffi.set_source("_shk_feedback_test", header, sources=sources,
                   include_dirs=[str(root)], extra_compile_args=["-std=c99", "-O1"])
    path = ffi.compile(tmpdir=str(tmp_path_factory.mktemp("fbc")))
    spec = importlib.util.spec_from_file_location("_shk_feedback_test", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.ffi, mod.lib


class CFeedback:
    """A C instance on tables built from FeedbackTables (the arrays are kept alive here)."""

    def __init__(self, ffi, lib, t):
        self.ffi, self.lib = ffi, lib
        keep = self.keep = []

        def arr(ctype, values):
            a = ffi.new(f"{ctype}[]", [int(v) for v in np.asarray(values).reshape(-1)] or [0])
            keep.append(a)
            return a

        sched = ffi.new("shk_schedule_t *", {"n_rows": t.n_rows, "length_min": t.length_min,
                                             "length_max": t.length_max,
                                             "thresholds": arr("uint32_t", t.thresholds) if t.n_rows > 1
                                             else ffi.NULL})
        keep.append(sched)
        self.table = ffi.new("shk_feedback_table_t *", {
            "n_rows": t.n_rows, "n_obs": t.n_obs, "frac_o": t.frac_o, "frac_u": t.frac_u, "frac_v": t.frac_v,
            "frac_d": t.frac_d, "n_ref": t.n_ref, "frac_r": t.frac_r, "ref_next": arr("int32_t", t.ref_next),
            "obs_next": arr("int32_t", t.obs_next), "du_row": arr("int32_t", t.du_row),
            "vhat_row": arr("int32_t", t.vhat_row), "drive": arr("int32_t", t.drive), "speed_max": t.speed_max,
            "accel_room": t.accel_room, "sensor_max": t.sensor_max, "jump_max": t.jump_max,
            "stale_cycles": t.stale_cycles, "schedule": sched})
        self.inst = ffi.new("shk_feedback_t *")
        self.out = ffi.new("int32_t *")
        assert lib.shk_feedback_init(self.inst, self.table) == 0

    def step(self, length, y, seq, r):
        st = self.lib.shk_feedback_step(self.inst, int(length), int(y), int(seq) & 0xFFFFFFFF, int(r), self.out)
        return int(self.out[0]), int(st)


def random_inputs(t, n=2500, seed=3):
    rng = np.random.default_rng(seed)
    k = np.arange(n)
    length = np.round(np.interp(k, [0, n / 2, n], [t.length_min - 50, t.length_max + 50, t.length_min]))
    y = np.round(0.4 * t.sensor_max * np.sin(2 * np.pi * k / 300.0) + rng.normal(0, 0.01 * t.sensor_max, n))
    r = np.round(t.speed_max * np.clip(np.sin(2 * np.pi * k / 900.0) * 1.3, -1, 1))
    return length.astype(np.int64), y.astype(np.int64), k, r.astype(np.int64)


def test_c_step_is_bit_exact_with_the_integer_reference(fb, lib):
    _env, _design, t = fb
    c, model = CFeedback(*lib, t), FeedbackModel(t)
    statuses = set()
    for L, y, seq, r in zip(*random_inputs(t), strict=True):
        got, want = c.step(L, y, seq, r), model.step(L, y, seq, r)
        assert got == want
        statuses.add(got[1])
    assert {s & 0x3 for s in statuses} >= {0x1, 0x2}                 # the run leaves the envelope both ways
    assert any(s & 0x80 for s in statuses)                           # and the limiter acts


def test_state_carries_over_calls_and_reinit_restarts(fb, lib):
    _env, _design, t = fb
    c = CFeedback(*lib, t)
    inputs = list(zip(*random_inputs(t, 600, seed=5), strict=True))
    first = [c.step(*i) for i in inputs]
    assert lib[1].shk_feedback_init(c.inst, c.table) == 0
    again = [c.step(*i) for i in inputs[:37]] + [c.step(*i) for i in inputs[37:]]
    assert again == first


@pytest.mark.parametrize("fault", ["range", "stale", "jump"])
def test_sensor_fault_switches_feedback_off_and_latches(fb, lib, fault):
    _env, _design, t = fb
    c, model = CFeedback(*lib, t), FeedbackModel(t)
    L = (t.length_min + t.length_max) // 2
    for k in range(20):
        assert c.step(L, 1000, k, 5000) == model.step(L, 1000, k, 5000)
    y, seq = {"range": (t.sensor_max + 1, 20), "stale": (1000, 19), "jump": (1000 + t.jump_max + 1, 20)}[fault]
    bit = {"range": FB_RANGE, "stale": FB_STALE, "jump": FB_JUMP}[fault]
    for k in range(t.stale_cycles + 2):
        seq_k = seq if fault == "stale" else seq + k
        u, st = c.step(L, y, seq_k, 7777)
        assert (u, st) == model.step(L, y, seq_k, 7777)
        if fault != "stale" or k >= t.stale_cycles - 1:
            assert st & bit and u == 7777       # feedback off: the reference passes through
    u, st = c.step(L, 0, 999, 1234)            # a good reading later does not switch it back on
    assert u == 1234 and st & bit


def test_bad_table_is_refused(fb, lib):
    ffi, clib = lib
    _env, _design, t = fb
    c = CFeedback(ffi, clib, t)
    c.table.frac_o = 31
    assert clib.shk_feedback_init(c.inst, c.table) == 8
    out = ffi.new("int32_t *")
    assert clib.shk_feedback_step(c.inst, 3000, 0, 0, 0, out) == 4


@pytest.mark.skipif(shutil.which("gcc") is None, reason="gcc is not installed")
def test_feedback_block_clean_under_strict_warnings_and_sanitizers(fb, tmp_path):
    _env, _design, t = fb
    root = runtime_dir()

    def c_array(name, ctype, values):
        vals = ", ".join(str(int(v)) for v in np.asarray(values).reshape(-1)) or "0"
        return f"static const {ctype} {name}[] = {{{vals}}};\n"

    length, y, seq, r = random_inputs(t, 800)
    # extreme inputs too: full-scale references and readings at the sensor limit, every rope count edge
    r[::7] = 2**31 - 1
    r[3::7] = -(2**31)
    main = ['#include "shk_feedback.h"\n#include <stdio.h>\n',
            c_array("th", "uint32_t", t.thresholds), c_array("on", "int32_t", t.obs_next),
            c_array("du", "int32_t", t.du_row), c_array("vh", "int32_t", t.vhat_row),
            c_array("dr", "int32_t", t.drive), c_array("rn", "int32_t", t.ref_next),
            c_array("L", "uint32_t", length), c_array("Y", "int32_t", y),
            c_array("R", "int32_t", r),
            f"static const shk_schedule_t sc = {{{t.n_rows}u, {t.length_min}u, {t.length_max}u, th}};\n",
            f"static const shk_feedback_table_t tb = {{{t.n_rows}u, {t.n_obs}u, {t.frac_o}u, {t.frac_u}u, "
            f"{t.frac_v}u, {t.frac_d}u, {t.n_ref}u, {t.frac_r}u, on, du, rn, vh, dr, {t.speed_max}, {t.accel_room}, "
            f"{t.sensor_max}, "
            f"{t.jump_max}, {t.stale_cycles}u, &sc}};\n",
            "int main(void) {\n shk_feedback_t f; int32_t u = 0; long long sum = 0; unsigned k;\n"
            " if (shk_feedback_init(&f, &tb) != SHK_OK) return 1;\n"
            f" for (k = 0u; k < {len(length)}u; ++k) {{ (void)shk_feedback_step(&f, L[k], Y[k], k, R[k], &u); "
            "sum += u; }\n printf(\"%lld\\n\", sum);\n return 0;\n}\n"]
    (tmp_path / "main.c").write_text("".join(main))
    exe = tmp_path / "fb"
    flags = ["-std=c99", "-O1", "-Wall", "-Wextra", "-Wpedantic", "-Wconversion", "-Wshadow", "-Werror",
             "-fsanitize=address,undefined", "-fno-sanitize-recover=all"]
    cmd = ["gcc", *flags, f"-I{root}", str(tmp_path / "main.c"), str(root / "shk_feedback.c"),
           str(root / "shk_schedule.c"), "-o", str(exe)]
    res = subprocess.run(cmd, capture_output=True, text=True)
    if res.returncode != 0 and "sanitizer" in res.stderr.lower() and "error:" not in res.stderr:
        pytest.skip(f"sanitizer runtime not available: {res.stderr[:200]}")
    assert res.returncode == 0, res.stderr
    run = subprocess.run([str(exe)], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    model = FeedbackModel(t)
    assert int(run.stdout) == sum(model.step(*i)[0] for i in zip(length, y, range(len(length)), r, strict=True))


def integer_controller(t, rig_lsb_m=LSB_M):
    """The integer reference as a closed-loop controller callback (m/s and rad in, m/s out)."""
    model = FeedbackModel(t)
    seq = [0]

    def step(y, rope_length_m, reference_m_s):
        seq[0] += 1
        u, _st = model.step(int(rope_length_counts(rope_length_m, rig_lsb_m)), int(to_q31(y, t.fs_y)), seq[0],
                            int(to_q31(reference_m_s, t.fs_v)))
        return float(from_q31(u, t.fs_v))

    return step


@pytest.mark.parametrize("follow", [False, True])
def test_integer_controller_in_the_loop_agrees_with_the_float_design(fb, follow):
    # bound (stated): payload path within 1 mm and residual sway within 2 % + 0.5 mm of the float controller,
    # with the gain on the estimated sway (no shaper) and on its deviation from the reference model
    env, design, _t = fb
    t = feedback_tables(design, env, SENSOR, LSB_M, follow_reference=follow)
    rig = env.rig(3.4, 280.0)
    runs = {}
    for name, ctrl in (("float", FeedbackController(design, follow).step), ("int", integer_controller(t))):
        runs[name] = run_closed_loop(rig, trapezoid(2.0, 0.5, 0.3, 0.01), 0.01, 0.05, ctrl,
                                     sensor=Sensor("hook_angle_rad", 0.0005, 0.0, 1), hoist_m_s=np.full(300, -0.002),
                                     initial_angles_rad=(0.04, 0.04), settle_s=12.0)
    a, b = runs["float"], runs["int"]
    assert np.max(np.abs(a.sim.payload_offset_m - b.sim.payload_offset_m)) < 1e-3
    ra, rb = a.metrics()["residual_payload_sway_m"], b.metrics()["residual_payload_sway_m"]
    assert abs(ra - rb) < 0.02 * ra + 5e-4
    assert abs(b.metrics()["end_error_m"] - a.metrics()["end_error_m"]) < 1e-3


def test_worst_damping_recomputed_from_the_integer_tables(fb):
    # Rebuild each row's controller from the emitted INTEGERS alone (de-scale the tables by the contract) and
    # recompute the least closed-loop damping on the grid with the true plants; it must match the float design.
    env, design, t = fb
    S = t.state_scales
    n_o = t.n_obs
    S_o, S_d = S[:n_o], S[n_o:]
    worst_int, worst_float = math.inf, math.inf
    for L in np.geomspace(2.5, 5.0, 7):
        for m in (250.0, 300.0, 350.0):
            rig = env.rig(float(L), m)
            k = design.row_for(float(L))
            G = t.obs_next[k] / 2.0**t.frac_o * S_o[:, None] / np.concatenate([S_o, [t.fs_y, t.fs_v]])[None, :]
            g_u = t.du_row[k] / 2.0**t.frac_u * t.fs_v / np.concatenate([S_o, S_d, [t.fs_y], S_o[:t.n_ref]])
            Dr = t.drive / 2.0**t.frac_d * S_d[:, None] / np.array([t.fs_v, S_d[1], t.fs_v])[None, :]
            # controller: u = g_o o + g_d d + g_y y; o' = G_o o + G_y y + G_u u; d' = D d + D_b u
            g_o, g_d, g_y = g_u[:n_o], g_u[n_o:n_o + 2], g_u[n_o + 2]  # (the reference model is at rest here)
            G_o, G_y, G_u = G[:, :n_o], G[:, n_o], G[:, n_o + 1]
            A_p, B_p, C_p = plant_system(design, rig)
            n_p = A_p.shape[0]
            N = n_p + n_o + 2
            A = np.zeros((N, N))
            u_row = np.concatenate([g_y * C_p[0], g_o, g_d])      # u as a function of [x, o, d]
            A[:n_p] = np.hstack([A_p, np.zeros((n_p, n_o + 2))]) + np.outer(B_p[:, 0], u_row)
            A[n_p:n_p + n_o] = np.hstack([np.outer(G_y, C_p[0]), G_o, np.zeros((n_o, 2))]) + np.outer(G_u, u_row)
            A[n_p + n_o:] = np.hstack([np.zeros((2, n_p + n_o)), Dr[:, :2]]) + np.outer(Dr[:, 2], u_row)
            worst_int = min(worst_int, min_damping_ratio(np.linalg.eigvals(A), design.cycle_s))
            worst_float = min(worst_float, check_point(design, rig).damping_ratio)
    assert worst_int == pytest.approx(worst_float, abs=2e-3)
    assert worst_int > 0


def test_emit_includes_the_feedback_and_its_c_matches_the_reference(tmp_path):
    data = {"rig": {"hook_mass_kg": 200.0, "rigging_length_m": 1.5, "rope_length_m": [3.0, 4.5],
                    "payload_mass_kg": [280.0, 320.0], "damping_ratio": 0.002},
            "drive": {"cycle_s": 0.01, "max_speed_m_s": 0.5, "max_accel_m_s2": 0.3},
            "sensor": {"kind": "payload_offset_m", "noise_sd": 0.001, "delay_cycles": 2},
            "feedback": {"rows": 3}}
    plan = plan_for_project(project_from_dict(data, name="fbemit"), prefix="fx")
    files = render_files(plan)
    assert {"fx_feedback.h", "fx_feedback.c", "shk_feedback.h", "shk_feedback.c"} <= set(files)
    assert "switch the feedback OFF" in files["fx_feedback.h"] and "not a safety function" in files["fx_feedback.h"]
    assert '"feedback"' in files["manifest.json"]
    without = plan_for_project(project_from_dict({k: v for k, v in data.items() if k != "feedback"}), prefix="fx")
    assert "fx_feedback.c" not in render_files(without)
    write_files(tmp_path / "out", files)
    folder = tmp_path / "out"
    ffi = cffi.FFI()
    ffi.cdef(runtime_cdef(folder) + "const shk_feedback_table_t *fx_fb(void);\n")
    headers = "".join(f'#include "{n}"\n' for n in RUNTIME_FILES if n.endswith(".h"))
    sources = [str(folder / n) for n in RUNTIME_FILES if n.endswith(".c")] + [str(folder / "fx_feedback.c")]
    ffi.set_source("_fx_feedback", headers + '#include "fx_feedback.h"\nconst shk_feedback_table_t *fx_fb(void) '
                   "{ return &fx_feedback_table; }\n", sources=sources, include_dirs=[str(folder)],
                   extra_compile_args=["-std=c99", "-O1"])
    path = ffi.compile(tmpdir=str(tmp_path / "build"))
    spec = importlib.util.spec_from_file_location("_fx_feedback", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    inst, out = mod.ffi.new("shk_feedback_t *"), mod.ffi.new("int32_t *")
    assert mod.lib.shk_feedback_init(inst, mod.lib.fx_fb()) == 0
    if shutil.which("gcc") is not None:  # the emitted tables compile clean under strict warnings too
        strict = ["gcc", "-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Wconversion", "-Werror", f"-I{folder}", "-c",
                  str(folder / "fx_feedback.c"), "-o", str(tmp_path / "fx_feedback.o")]
        res = subprocess.run(strict, capture_output=True, text=True)
        assert res.returncode == 0, res.stderr
    t = plan.feedback
    model = FeedbackModel(t)
    for L, y, seq, r in zip(*random_inputs(t, 700, seed=8), strict=True):
        st = mod.lib.shk_feedback_step(inst, int(L), int(y), int(seq), int(r), out)
        assert (int(out[0]), int(st)) == model.step(L, y, seq, r)
