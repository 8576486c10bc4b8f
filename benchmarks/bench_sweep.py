"""Benchmark: the envelope sweep against a loop of the solve_ivp simulator over the same rigs.

Prints, for 256 and 1,024 rigs of the demo envelope (16 x 16 and 32 x 32 grids):

- the sweep's wall time as a fresh process (``python -m stillhook sweep demo --grid ... --json``),
  i.e. counting interpreter start-up, imports, the design and the sweep itself;
- the loop's wall time: the same design, then the per-rig solve_ivp simulator stillhook had before
  its batch engine (``reference_solve_ivp.simulate_solve_ivp``) for every rig and every design
  (unshaped, shaper, schedule: the same commands the sweep uses);
- the speed ratio and the largest disagreement, as a fraction of the unshaped residual at that rig;
- the times of the design, the firmware emit and the whole demo.

The notch is left out of the comparison: its command changes every cycle for its whole ring-out,
which makes one solve_ivp run take tens of seconds (the sweep handles it in the same time).

With ``--uncertain N [N ...]`` it also prints, for N random rigs of the demo project with an
``[uncertainty]`` table (hook mass, rigging length, damping ratio drawn with rope length and payload mass),
the wall time and peak memory (main process and largest worker) of ``sweep_project`` in a fresh process,
beside the same sweep with the rig held nominal (``vary_rig=False``).

Run: ``python benchmarks/bench_sweep.py`` (about 5-10 minutes on 2 cores; ``--sizes 256`` for less);
``python benchmarks/bench_sweep.py --sizes --no-demo --uncertain 100000 1000000`` for the uncertain sweep only.
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

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))  # reference_solve_ivp beside this file

KEYS = ("unshaped", "shaper", "schedule")


def sweep_subprocess(n_side: int, keys) -> tuple[float, dict]:
    """Wall time of a fresh ``stillhook sweep`` process and its JSON."""
    cmd = [sys.executable, "-m", "stillhook", "sweep", "demo", "--grid", str(n_side), str(n_side),
           "--designs", ",".join(keys), "--no-check", "--json"]
    t0 = time.perf_counter()
    out = subprocess.run(cmd, check=True, capture_output=True, text=True)
    return time.perf_counter() - t0, json.loads(out.stdout)


def cold_design_s() -> float:
    """Time of design_for_project(demo) in a fresh process (the library caches designs in-process)."""
    code = ("import time; from stillhook.project import load_demo_project; "
            "from stillhook.shaping.envelope_design import "
            "design_for_project; p = load_demo_project(); t = time.perf_counter(); design_for_project(p); "
            "print(time.perf_counter() - t)")
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True)
    return float(out.stdout)


def solve_ivp_loop(project, n_side: int, t_design: float) -> dict:
    """Simulate every rig with every design's command (solve_ivp), timing each part.

    The design is computed (or taken from the in-process cache) outside the timing and counted
    as ``t_design``, its cold time in a fresh process.
    """
    from reference_solve_ivp import simulate_solve_ivp as simulate

    from stillhook.shaping.envelope_design import design_for_project
    from stillhook.sim.profiles import trapezoid
    from stillhook.study.sweep import DEFAULT_DISTANCE_M, grid_points, project_designs

    design = design_for_project(project)
    drive = project.drive
    T = drive["cycle_s"]
    speed = trapezoid(DEFAULT_DISTANCE_M, drive["max_speed_m_s"], drive["max_accel_m_s2"], T)
    designs, _ = project_designs(project, speed, keys=KEYS, design=design)
    L, m = grid_points(project.envelope, n_side, n_side)
    res = {d.key: np.empty(L.size) for d in designs}
    peak = np.empty(L.size)
    t_sim = dict.fromkeys(res, 0.0)
    for n, (Ln, mn) in enumerate(zip(L, m, strict=True)):
        rig = project.envelope.rig(Ln, mn)
        for d in designs:
            t1 = time.perf_counter()
            sim = simulate(rig, d.commands[int(d.rows_for(Ln))], T)
            t_sim[d.key] += time.perf_counter() - t1
            res[d.key][n] = sim.residual_payload_sway_m
            if d.key == "unshaped":
                peak[n] = sim.peak_payload_offset_m
    return {"design_s": t_design, "sim_s": t_sim, "residual": res, "peak": peak}


def in_process_sweep_s(project, n_side: int) -> float:
    """Wall time of sweep_project in this process with the design already made (best of 3)."""
    from stillhook.shaping.envelope_design import design_for_project
    from stillhook.study.sweep import sweep_project

    design = design_for_project(project)
    best = math.inf
    for _ in range(3):
        t0 = time.perf_counter()
        sweep_project(project, grid=(n_side, n_side), keys=KEYS, design=design, check=False)
        best = min(best, time.perf_counter() - t0)
    return best


def disagreement(sweep_json: dict, loop: dict) -> dict:
    """Largest |sweep - loop| over the local unshaped residual, over the unshaped peak during the move, in m."""
    rel, rel_peak, abs_m, where = [], [], 0.0, {}
    for n, p in enumerate(sweep_json["points"]):
        base, peak = loop["residual"]["unshaped"][n], loop["peak"][n]
        for k in KEYS:
            e = abs(p["residual_payload_sway_m"][k] - loop["residual"][k][n])
            rel.append(e / base)
            rel_peak.append(e / peak)
            if e / base >= max(rel):
                where = {"design": k, "rope_length_m": round(p["rope_length_m"], 3),
                         "payload_mass_kg": round(p["payload_mass_kg"], 1),
                         "unshaped_residual_mm": round(1000 * float(base), 2)}
            abs_m = max(abs_m, e)
    rel = np.asarray(rel)
    return {"max_rel": float(rel.max()), "p99_rel": float(np.percentile(rel, 99)), "median_rel": float(np.median(rel)),
            "share_within_1pct": float(np.mean(rel <= 0.01)), "max_rel_peak": float(max(rel_peak)),
            "max_abs_m": abs_m, "where": where}


#: The uncertainty the benchmark adds to the demo project (an invented scenario: hook block weighed to +-10 %,
#: lifting beam and slings 2.8-3.4 m, damping 0-1 %).
UNCERTAINTY_TOML = """
[uncertainty]
hook_mass_kg = [306.0, 374.0]
rigging_length_m = [2.8, 3.4]
damping_ratio = [0.0, 0.01]
"""


def uncertain_sweep(n: int, vary_rig: bool) -> dict:
    """Wall time and peak memory (MB) of sweep_project over n random rigs in a fresh process (design included)."""
    code = ("import json, resource, sys, time; from stillhook.project import demo_project_text, project_from_bytes; "
            "from stillhook.study.sweep import sweep_project; "
            "p = project_from_bytes((demo_project_text() + sys.argv[1]).encode(), 'demo_uncertain.toml'); "
            "t = time.perf_counter(); "
            f"r = sweep_project(p, samples={n}, seed=1, keys=('unshaped', 'shaper', 'schedule'), vary_rig={vary_rig}); "
            "t = time.perf_counter() - t; s = r.summary(); "
            "print(json.dumps({'s': t, 'rss_mb': resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, "
            "'worker_rss_mb': resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024, "
            "'within': {k: v['share_within_tolerance'] for k, v in s.items()}, "
            "'worst': {k: [v['worst_ratio'], v['worst_ratio_at']] for k, v in s.items()}, "
            "'disagreement': r.max_disagreement()}))")
    env = dict(os.environ, STILLHOOK_DESIGN_CACHE="off")
    out = subprocess.run([sys.executable, "-c", code, UNCERTAINTY_TOML], check=True, capture_output=True, text=True,
                         env=env)
    return json.loads(out.stdout)


def uncertain_figures(sizes) -> None:
    print("\nuncertain sweep (demo + [uncertainty]; unshaped, shaper, schedule; spot checks included; design "
          "included; fresh process each)")
    for n in sizes:
        for vary in (False, True):
            r = uncertain_sweep(n, vary)
            what = "hook, rigging, damping sampled" if vary else "rig held nominal"
            print(f"  {n:>8} rigs, {what:<31}: {r['s']:7.2f} s, peak memory main {r['rss_mb']:6.0f} MB, largest worker "
                  f"{r['worker_rss_mb']:5.0f} MB; within tolerance: shaper {100 * r['within']['shaper']:.2f} %, "
                  f"schedule {100 * r['within']['schedule']:.2f} %; spot-check disagreement "
                  f"{100 * r['disagreement']:.2g} %")
            if vary:
                k, (q, at) = "schedule", r["worst"]["schedule"]
                print(f"           worst {k}: {100 * q:.2f} % of unshaped at " + ", ".join(
                    f"{name} {value:.4g}" for name, value in at.items()))


def timed(fn) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--sizes", type=int, nargs="*", default=[256, 1024], help="numbers of rigs (perfect squares)")
    ap.add_argument("--uncertain", type=int, nargs="*", default=[], metavar="N",
                    help="also time uncertain random sweeps of N rigs (e.g. 100000 1000000)")
    ap.add_argument("--no-demo", action="store_true", help="skip timing the demo")
    args = ap.parse_args()

    from stillhook.project import load_demo_project

    project = load_demo_project()
    print(f"machine: {os.cpu_count()} CPUs; python {sys.version.split()[0]}")
    t_start = timed(lambda: subprocess.run([sys.executable, "-m", "stillhook", "--version"], check=True,
                                           capture_output=True))
    print(f"process start-up (stillhook --version): {t_start:.3f} s")
    t_design = cold_design_s()
    print(f"design_for_project(demo), fresh process: {t_design:.2f} s")
    for n in args.sizes:
        side = math.isqrt(n)
        if side * side != n:
            print(f"skipping {n}: not a perfect square")
            continue
        t_unshaped, _ = sweep_subprocess(side, ("unshaped",))
        t_all, sweep_json = sweep_subprocess(side, KEYS)
        loop = solve_ivp_loop(project, side, t_design)
        d = disagreement(sweep_json, loop)
        loop_unshaped = loop["sim_s"]["unshaped"]
        loop_all = loop["design_s"] + sum(loop["sim_s"].values())
        print(f"\n{n} rigs ({side} x {side}); every sweep time is a fresh process, start-up included")
        print(f"  unshaped only:  sweep {t_unshaped:7.2f} s   solve_ivp loop {loop_unshaped:8.2f} s   "
              f"ratio {loop_unshaped / t_unshaped:7.1f} x")
        print(f"  {', '.join(KEYS)} (design included on both sides, {loop['design_s']:.2f} s):")
        print(f"                  sweep {t_all:7.2f} s   solve_ivp loop {loop_all:8.2f} s   "
              f"ratio {loop_all / t_all:7.1f} x")
        t_inproc = in_process_sweep_s(project, side)
        print(f"  same, design excluded: sweep in-process {t_inproc:.3f} s vs loop runs "
              f"{loop_all - loop['design_s']:.1f} s: ratio {(loop_all - loop['design_s']) / t_inproc:.0f} x")
        print(f"  disagreement, |sweep - solve_ivp| over {3 * n} runs: max {100 * d['max_rel']:.2f} % of the unshaped "
              f"residual at that rig ({d['where']}); 99th percentile {100 * d['p99_rel']:.2f} %, median "
              f"{100 * d['median_rel']:.3f} %, {100 * d['share_within_1pct']:.1f} % of runs within 1 %; max "
              f"{100 * d['max_rel_peak']:.3f} % of the peak sway during the move; max {1000 * d['max_abs_m']:.2f} mm")

    if args.uncertain:
        uncertain_figures(args.uncertain)
    if not args.sizes:
        return 0
    from stillhook.firmware.plan import plan_for_project, render_files
    from stillhook.shaping.envelope_design import design_for_project

    design_for_project(project)  # cached: the emit time below is the emit's own
    print()
    print(f"emit (plan + render, in memory, design cached): "
          f"{timed(lambda: render_files(plan_for_project(project))):.2f} s")
    if not args.no_demo:
        with tempfile.TemporaryDirectory() as tmp:
            t = timed(lambda: subprocess.run([sys.executable, "-m", "stillhook", "demo", "--out", tmp + "/demo"],
                                             check=True, capture_output=True))
        print(f"stillhook demo (fresh process):  {t:.1f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
