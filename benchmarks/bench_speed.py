"""Benchmark: the speed targets of issue 12, each figure printed beside its target, ratios from one run.

Figures (all on the demo project unless named):

1. nonlinear simulation of the demo move (37 s at 5 ms, hoisting) per rig-move against the compiled
   floor - a bare C RK4 loop written here (same equations, same steps, no set-up, no outputs but the
   state per cycle) - at N = 1 (``simulate``) and N = 1,024 rigs (``simulate_batch`` in chunks of 128);
   target <= 3x;
2. ``stillhook sweep`` of 256 and 1,024 rigs as a whole process against a per-rig ``solve_ivp`` loop
   over the same rigs, designs and move (the pre-batch simulator, benchmarks/reference_solve_ivp.py;
   its time is measured on every 32nd rig and scaled up); targets >= 30x and >= 100x;
3. ``stillhook compare demo``, ``stillhook demo``, ``stillhook shaper`` on the small gantry and on the
   hard envelope (benchmarks/projects) as whole processes, over the time of ONE per-rig solve_ivp
   simulation of the demo move measured in the same run; targets <= 10x, 30x, 25x, 250x;
4. optionally (``--million``) a 10^6-rig random sweep: wall time and peak memory.

Every command runs cold (``STILLHOOK_DESIGN_CACHE=off``: the design is computed); ``compare`` and
``demo`` are also timed with the design in the disk cache, as a user's second command finds it.

Run: ``python benchmarks/bench_speed.py`` (a few minutes on 2 cores; ``--skip-hard`` leaves out the
hard envelope's design; ``--before-src DIR`` also times every command on an earlier source tree in the
same run, for before/after figures; ``--commands-only`` prints the command figures alone).
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import cffi
import numpy as np
from timing import best_of

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from reference_solve_ivp import simulate_solve_ivp  # noqa: E402

from stillhook.project import load_demo_project  # noqa: E402
from stillhook.sim.dynamics import simulate, simulate_batch, step_rad_for  # noqa: E402
from stillhook.sim.profiles import project_move  # noqa: E402

FLOOR_C = r"""
#include <math.h>
/* Bare RK4 through each drive cycle for one double-pendulum rig, inputs tabulated per cycle. */
static void f(const double *y, double a, double L1, double L1d, double L1dd, const double *p, double *dy)
{
    const double m1 = p[0], m2 = p[1], L2 = p[2], g = p[3], z = p[4];
    const double s1 = sin(y[0]), c1 = cos(y[0]), s2 = sin(y[1]), c2 = cos(y[1]);
    const double sD = s1 * c2 - c1 * s2, cD = c1 * c2 + s1 * s2, M = m1 + m2;
    const double s = g * sqrt(M / (m1 * L1 * L2)), t = sqrt(M * g * (L1 + L2) / (m1 * L1 * L2) + 2.0 * s);
    const double C11 = 2.0 * z * (M * g * L1 + s * M * L1 * L1) / t, C12 = 2.0 * z * s * m2 * L1 * L2 / t;
    const double C22 = 2.0 * z * (m2 * g * L2 + s * m2 * L2 * L2) / t;
    const double M11 = M * L1 * L1, M12 = m2 * L1 * L2 * cD, M22 = m2 * L2 * L2;
    const double f1 = -M * L1 * (a * c1 + 2.0 * L1d * y[2] + g * s1) - m2 * L1 * L2 * y[3] * y[3] * sD
                      - C11 * y[2] - C12 * y[3];
    const double f2 = -m2 * L2 * (a * c2 + L1dd * sD + 2.0 * L1d * y[2] * cD - L1 * y[2] * y[2] * sD + g * s2)
                      - C12 * y[2] - C22 * y[3];
    const double det = M11 * M22 - M12 * M12;
    dy[0] = y[2]; dy[1] = y[3]; dy[2] = (M22 * f1 - M12 * f2) / det; dy[3] = (M11 * f2 - M12 * f1) / det;
}
void floor_rk4(long n, long nrk, double T, const double *acc, const double *L, const double *u,
               const double *al, const double *p, double *out)
{
    double y[4] = {0.0, 0.0, 0.0, 0.0}, k1[4], k2[4], k3[4], k4[4], w[4];
    const double h = T / nrk;
    for (long k = 0; k < n; ++k) {
        for (int i = 0; i < 4; ++i) out[4 * k + i] = y[i];
        for (long j = 0; j < nrk; ++j) {
            const double t0 = j * h, t1 = t0 + 0.5 * h, t2 = t0 + h;
            f(y, acc[k], L[k] + u[k] * t0 + 0.5 * al[k] * t0 * t0, u[k] + al[k] * t0, al[k], p, k1);
            for (int i = 0; i < 4; ++i) w[i] = y[i] + 0.5 * h * k1[i];
            f(w, acc[k], L[k] + u[k] * t1 + 0.5 * al[k] * t1 * t1, u[k] + al[k] * t1, al[k], p, k2);
            for (int i = 0; i < 4; ++i) w[i] = y[i] + 0.5 * h * k2[i];
            f(w, acc[k], L[k] + u[k] * t1 + 0.5 * al[k] * t1 * t1, u[k] + al[k] * t1, al[k], p, k3);
            for (int i = 0; i < 4; ++i) w[i] = y[i] + h * k3[i];
            f(w, acc[k], L[k] + u[k] * t2 + 0.5 * al[k] * t2 * t2, u[k] + al[k] * t2, al[k], p, k4);
            for (int i = 0; i < 4; ++i) y[i] += h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
    }
}
"""


class Floor:
    """The bare compiled loop, built once; times one rig-move with inputs prepared outside the timing."""

    def __init__(self, tmp: str):
        src, lib_path = Path(tmp) / "floor.c", Path(tmp) / "floor.so"
        src.write_text(FLOOR_C)
        subprocess.run(["cc", "-O2", "-ffp-contract=off", "-fPIC", "-shared", "-o", str(lib_path), str(src), "-lm"],
                       check=True)
        self.ffi = cffi.FFI()
        self.ffi.cdef("void floor_rk4(long n, long nrk, double T, const double *acc, const double *L, const double *u,"
                      " const double *al, const double *p, double *out);")
        self.lib = self.ffi.dlopen(str(lib_path))

    def seconds(self, rig, speed, hoist, T, n_cycles: int, repeats: int = 5) -> float:
        from stillhook.model.rig import mode_frequencies_rad_s
        from stillhook.sim.motion import Track

        tr = Track.from_speed(speed, 0.0, T, n_cycles)
        ho = Track.from_speed(hoist, rig.rope_length_m, T, n_cycles)
        # the engine's step rule: w_max h <= step_rad at the shortest rope, 20 % headroom
        w = 1.2 * mode_frequencies_rad_s(rig.hook_mass_kg, rig.payload_mass_kg, ho.min_m(), rig.rigging_length_m,
                                         rig.gravity_m_s2)[1]
        n_rk = max(1, math.ceil(T * w / step_rad_for(1e-9) - 1e-9))
        p = np.array([rig.hook_mass_kg, rig.payload_mass_kg, rig.rigging_length_m, rig.gravity_m_s2,
                      rig.damping_ratio])
        out = np.empty((n_cycles, 4))
        ffi = self.ffi
        args = [ffi.from_buffer("double[]", a) for a in (tr.accel_m_s2, ho.start_m, ho.speed_m_s, ho.accel_m_s2, p)]
        buf = ffi.from_buffer("double[]", out, require_writable=True)
        return best_of(lambda: self.lib.floor_rk4(n_cycles, n_rk, T, *args, buf), repeats)[0]


#: Subprocesses design afresh (cold) unless a run asks for the design disk cache (warm).
COLD = dict(os.environ, STILLHOOK_DESIGN_CACHE="off")


def process_s(argv: list[str], env: dict | None = None) -> float:
    """Wall time of one ``stillhook`` process; an ``{out}`` argument becomes a new folder each run."""
    if "{out}" in argv:
        argv = [tempfile.mkdtemp(prefix="bench-out-") + "/out" if a == "{out}" else a for a in argv]
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "stillhook", *argv], capture_output=True, text=True,
                          env=env or COLD)
    if done.returncode != 0:
        raise SystemExit(f"bench: stillhook {' '.join(argv)} failed ({done.returncode}): {done.stderr.strip()}")
    return time.perf_counter() - t0


def row(name: str, value: float, unit: str, target: str, ok: bool | None) -> None:
    mark = "" if ok is None else ("ok" if ok else "MISSED")
    print(f"  {name:<58} {value:>10.3g} {unit:<4} target {target:<10} {mark}")


def simulation_figures(project, t_ref: float) -> None:
    speed, hoist = project_move(project, None)
    T = project.drive["cycle_s"]
    rig = project.envelope.nominal_rig
    res = simulate(rig, speed, T, hoist_speed_m_s=hoist)
    ref = simulate_solve_ivp(rig, speed, T, hoist_speed_m_s=hoist)
    n_cycles = len(res.t_s)
    env = project.envelope
    rng = np.random.default_rng(0)
    # rope lengths that the demo's hoist command (2 m up) leaves above 0.5 m
    L_lo = max(env.rope_length_range_m[0], rig.rope_length_m - float(np.min(res.rope_length_m)) + 0.5)
    rigs = [env.rig(L, m) for L, m in zip(rng.uniform(L_lo, env.rope_length_range_m[1], 1024),
                                           rng.uniform(*env.payload_mass_range_kg, 1024), strict=True)]
    with tempfile.TemporaryDirectory() as tmp:
        floor = Floor(tmp)
        t_floor = floor.seconds(rig, speed, hoist, T, n_cycles)
        t_floor_batch = sum(floor.seconds(r, speed, hoist, T, n_cycles, repeats=1) for r in rigs)
    t_one = best_of(lambda: simulate(rig, speed, T, hoist_speed_m_s=hoist), 5)[0]
    t0 = time.perf_counter()
    for b in range(0, 1024, 128):
        simulate_batch(rigs[b:b + 128], [speed], T, hoist_speed_m_s=hoist)
    t_batch = time.perf_counter() - t0
    print(f"simulation of the demo move ({res.t_s[-1]:.1f} s at {T * 1000:g} ms, hoisting):")
    row("bare compiled RK4 loop, nominal rig (the floor)", 1000 * t_floor, "ms", "", None)
    row("per-rig solve_ivp simulator (before)", 1000 * t_ref, "ms", "", None)
    row("simulate, N = 1: ratio to the floor", t_one / t_floor, "x", "<= 3", t_one / t_floor <= 3)
    row("simulate_batch, N = 1,024 rigs: ratio to the floor over the same rigs", t_batch / t_floor_batch, "x",
        "<= 3", t_batch / t_floor_batch <= 3)
    row("speed-up of simulate over the solve_ivp simulator", t_ref / t_one, "x", "", None)
    row("|payload offset| difference to the solve_ivp simulator", np.max(np.abs(res.payload_offset_m
                                                                               - ref.payload_offset_m)), "m", "", None)


def sweep_figures(project) -> None:
    from stillhook.shaping.envelope_design import design_for_project
    from stillhook.sim.profiles import trapezoid
    from stillhook.study.sweep import DEFAULT_DISTANCE_M, grid_points, project_designs

    keys = ("unshaped", "shaper", "schedule")
    drive, T = project.drive, project.drive["cycle_s"]
    speed = trapezoid(DEFAULT_DISTANCE_M, drive["max_speed_m_s"], drive["max_accel_m_s2"], T)
    designs, _ = project_designs(project, speed, keys=keys, design=design_for_project(project))
    code = ("import time; from stillhook.project import load_demo_project; from stillhook.shaping.envelope_design "
            "import design_for_project; p = load_demo_project(); t = time.perf_counter(); design_for_project(p); "
            "print(time.perf_counter() - t)")
    t_design = float(subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True,
                                    env=COLD).stdout)
    print(f"sweep as a whole process (design, spot checks, sweep) vs a per-rig solve_ivp loop (design {t_design:.2f} s "
          "included on both sides):")
    for n_side, target in ((16, 30), (32, 100)):
        t_proc = process_s(["sweep", "demo", "--grid", str(n_side), str(n_side), "--designs", ",".join(keys),
                            "--json"])
        L, m = grid_points(project.envelope, n_side, n_side)
        sample = range(0, L.size, 32)
        t0 = time.perf_counter()
        for n in sample:
            rig = project.envelope.rig(L[n], m[n])
            for d in designs:
                simulate_solve_ivp(rig, d.commands[int(d.rows_for(L[n]))], T)
        t_loop = t_design + (time.perf_counter() - t0) * L.size / len(sample)
        row(f"{L.size} rigs: sweep {t_proc:.2f} s, loop {t_loop:.0f} s (scaled from {len(sample)} rigs): ratio",
            t_loop / t_proc, "x", f">= {target}", t_loop / t_proc >= target)


def _timed(argv: list[str], env: dict | None = None) -> tuple[float, float]:
    """(wall s, CPU s: user + system of the process and its workers) of one ``stillhook`` process; on a shared
    machine the CPU time is the steadier figure."""
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = process_s(argv, env)
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return t, (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)


def command_figures(t_ref: float, hard: bool, before_src: str | None = None) -> None:
    print("commands as whole processes, over one per-rig solve_ivp simulation of the demo move "
          f"({1000 * t_ref:.0f} ms):")
    before = None if before_src is None else dict(COLD, PYTHONPATH=before_src)
    with tempfile.TemporaryDirectory() as tmp:
        cases = [("stillhook compare demo", ["compare", "demo", "--json"], 10),
                 ("stillhook demo", ["demo", "--out", "{out}"], 30),
                 ("stillhook shaper small gantry", ["shaper", str(HERE / "projects" / "small_gantry.toml"), "--json"],
                  25)]
        if hard:
            cases.append(("stillhook shaper hard envelope",
                          ["shaper", str(HERE / "projects" / "hard_envelope.toml"), "--json"], 250))
        for name, argv, target in cases:
            if before is not None:  # the same command on the earlier source tree, cold, in this run
                t, cpu = _timed(argv, before)
                row(f"{name}, before ({t:.2f} s, CPU {cpu:.2f} s)", t / t_ref, "x", f"<= {target}", t / t_ref <= target)
            t, cpu = _timed(argv)
            row(f"{name} ({t:.2f} s, CPU {cpu:.2f} s)", t / t_ref, "x", f"<= {target}", t / t_ref <= target)
        # the same commands once the project's design is in the disk cache (a user's second command)
        warm = dict(os.environ, STILLHOOK_DESIGN_CACHE="on", STILLHOOK_CACHE_DIR=os.path.join(tmp, "cache"))
        for name, argv, target in cases[:2]:
            process_s(argv, warm)
            t = process_s(argv, warm)
            row(f"{name}, design cached ({t:.2f} s)", t / t_ref, "x", f"<= {target}", t / t_ref <= target)


def million_figure() -> None:
    code = ("import resource, time; from stillhook.project import load_demo_project; "  # design cold (COLD)
            "from stillhook.study.sweep import sweep_project; p = load_demo_project(); t = time.perf_counter(); "
            "r = sweep_project(p, samples=1_000_000, keys=('unshaped', 'shaper'), check=False); "
            "print(time.perf_counter() - t, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, "
            "resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True,
                         env=COLD).stdout.split()
    t, rss_self, rss_child = float(out[0]), int(out[1]) / 1024, int(out[2]) / 1024
    print("random sweep of 10^6 rigs (unshaped, shaper), design included:")
    row("wall time", t, "s", "", None)
    row("peak memory, main process / largest worker", max(rss_self, rss_child), "MB", "< 24 GiB",
        max(rss_self, rss_child) < 24 * 1024)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--skip-hard", action="store_true", help="leave out the hard envelope's design")
    ap.add_argument("--million", action="store_true", help="also sweep 10^6 random rigs")
    ap.add_argument("--before-src", metavar="DIR",
                    help="also time each command (cold) on an earlier source tree, e.g. DIR from "
                         "`git archive <commit> | tar -x -C /tmp/before` and DIR = /tmp/before/src")
    ap.add_argument("--commands-only", action="store_true", help="only the command figures")
    args = ap.parse_args()
    project = load_demo_project()
    speed, hoist = project_move(project, None)
    rig, T = project.envelope.nominal_rig, project.drive["cycle_s"]
    t_ref = best_of(lambda: simulate_solve_ivp(rig, speed, T, hoist_speed_m_s=hoist), 3)[0]
    print(f"cores available: {len(os.sched_getaffinity(0))}; peak memory so far "
          f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")
    if not args.commands_only:
        simulation_figures(project, t_ref)
    command_figures(t_ref, not args.skip_hard, args.before_src)
    if args.commands_only:
        return
    sweep_figures(project)
    if args.million:
        million_figure()


if __name__ == "__main__":
    main()
