"""Benchmark: the envelope sweep against a loop of the solve_ivp simulator over the same rigs.

Prints, for 256 and 1,024 rigs of the demo envelope (16 x 16 and 32 x 32 grids):

- the sweep's wall time as a fresh process (``python -m stillhook sweep demo --grid ... --json``),
  i.e. counting interpreter start-up, imports, the design and the sweep itself;
- the loop's wall time: the same design, then ``stillhook.dynamics.simulate`` for every rig and
  every design (unshaped, shaper, schedule: the same commands the sweep uses);
- the speed ratio and the largest disagreement, as a fraction of the unshaped residual at that rig;
- the times of the design, the firmware emit and the whole demo.

The notch is left out of the comparison: its command changes every cycle for its whole ring-out,
which makes one solve_ivp run take tens of seconds (the sweep handles it in the same time).

Run: ``python benchmarks/bench_sweep.py`` (about 5-10 minutes on 2 cores; ``--sizes 256`` for less).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

KEYS = ("unshaped", "shaper", "schedule")


def sweep_subprocess(n_side: int) -> tuple[float, dict]:
    cmd = [sys.executable, "-m", "stillhook", "sweep", "demo", "--grid", str(n_side), str(n_side),
           "--designs", ",".join(KEYS), "--no-check", "--json"]
    t0 = time.perf_counter()
    out = subprocess.run(cmd, check=True, capture_output=True, text=True)
    return time.perf_counter() - t0, json.loads(out.stdout)


def solve_ivp_loop(project, n_side: int) -> tuple[float, dict, int]:
    """Design once, then simulate every rig with every design's command (solve_ivp)."""
    from stillhook.design import design_for_project
    from stillhook.dynamics import simulate
    from stillhook.profiles import trapezoid
    from stillhook.sweep import DEFAULT_DISTANCE_M, grid_points, project_designs

    t0 = time.perf_counter()
    drive = project.drive
    T = drive["cycle_s"]
    speed = trapezoid(DEFAULT_DISTANCE_M, drive["max_speed_m_s"], drive["max_accel_m_s2"], T)
    designs, _ = project_designs(project, speed, keys=KEYS, design=design_for_project(project))
    L, m = grid_points(project.envelope, n_side, n_side)
    res = {d.key: np.empty(L.size) for d in designs}
    runs = 0
    for n, (Ln, mn) in enumerate(zip(L, m, strict=True)):
        rig = project.envelope.rig(Ln, mn)
        for d in designs:
            res[d.key][n] = simulate(rig, d.commands[int(d.rows_for(Ln))], T).residual_payload_sway_m
            runs += 1
    return time.perf_counter() - t0, res, runs


def disagreement(sweep_json: dict, loop: dict) -> tuple[float, float, dict]:
    """Largest |sweep - loop| / loop unshaped (all designs), largest relative error of unshaped, and where."""
    worst, worst_unshaped, where = 0.0, 0.0, {}
    for n, p in enumerate(sweep_json["points"]):
        base = loop["unshaped"][n]
        for k in KEYS:
            e = abs(p["residual_payload_sway_m"][k] - loop[k][n]) / base
            if e > worst:
                worst, where = e, {"design": k, "rope_length_m": p["rope_length_m"],
                                   "payload_mass_kg": p["payload_mass_kg"]}
        worst_unshaped = max(worst_unshaped, abs(p["residual_payload_sway_m"]["unshaped"] - base) / base)
    return worst, worst_unshaped, where


def timed(fn) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 1024], help="numbers of rigs (perfect squares)")
    ap.add_argument("--no-demo", action="store_true", help="skip timing the demo")
    args = ap.parse_args()

    from stillhook.project import load_demo_project

    project = load_demo_project()
    print(f"machine: {os.cpu_count()} CPUs; python {sys.version.split()[0]}")
    t_start = timed(lambda: subprocess.run([sys.executable, "-m", "stillhook", "--version"], check=True,
                                           capture_output=True))
    print(f"process start-up (stillhook --version): {t_start:.3f} s")
    for n in args.sizes:
        side = math.isqrt(n)
        if side * side != n:
            print(f"skipping {n}: not a perfect square")
            continue
        t_sweep, sweep_json = sweep_subprocess(side)
        t_loop, loop, runs = solve_ivp_loop(project, side)
        worst, worst_unshaped, where = disagreement(sweep_json, loop)
        print(f"\n{n} rigs ({side} x {side}), designs {', '.join(KEYS)}:")
        print(f"  sweep, fresh process incl. start-up and design: {t_sweep:8.2f} s")
        print(f"  solve_ivp loop ({runs} runs, design included):   {t_loop:8.2f} s")
        print(f"  speed ratio:                                      {t_loop / t_sweep:8.1f} x")
        print(f"  largest disagreement: {100 * worst:.3f} % of the unshaped residual ({where}); "
              f"unshaped alone: {100 * worst_unshaped:.3f} %")

    from stillhook.design import design_for_project
    from stillhook.emit import plan_for_project, render_files

    print()
    print(f"design_for_project(demo):        {timed(lambda: design_for_project(project)):.2f} s")
    print(f"emit (plan + render, in memory): {timed(lambda: render_files(plan_for_project(project))):.2f} s")
    if not args.no_demo:
        with tempfile.TemporaryDirectory() as tmp:
            t = timed(lambda: subprocess.run([sys.executable, "-m", "stillhook", "demo", "--out", tmp + "/demo"],
                                             check=True, capture_output=True))
        print(f"stillhook demo (fresh process):  {t:.1f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
