"""Benchmark: shaper maths and designs (prints figures; not a test).

Prints:

- V over 10,000 frequencies in one vectorized call, against a Python loop of scalar calls (ratio);
- the two-mode band design for the demo envelope's bands on its drive cycle: single-band shapers,
  convolved and direct, fresh (no memo), best of several runs, CPU and wall time, linear programs solved;
- the whole project design (envelope shaper, high-mode decision, checks) without and with the
  length schedule.

Run: ``python benchmarks/bench_shapers.py [--repeat N]``.
"""

from __future__ import annotations

import argparse
import dataclasses

import numpy as np
from timing import best_of


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()

    import scipy.optimize

    import stillhook.shaping.band_design as opt
    import stillhook.shaping.envelope_design as design_mod
    from stillhook.project import load_demo_project
    from stillhook.shaping.closed_forms import ei2, zvd
    from stillhook.shaping.design_cache import clear_design_caches

    # -- V over 10,000 frequencies -------------------------------------------------------------
    s = zvd(0.2, 0.01).convolve(ei2(0.6, 0.01))
    w = 2 * np.pi * np.linspace(0.01, 3.0, 10_000)
    wall_vec, _, v = best_of(lambda: s.residual_vibration(w, 0.01), max(args.repeat, 5))
    wall_loop, _, v_loop = best_of(lambda: np.array([float(s.residual_vibration(x, 0.01)) for x in w]), 1)
    assert np.allclose(v, v_loop)
    print(f"V over {w.size:,} frequencies ({s.n_impulses} impulses): one vectorized call {1e3 * wall_vec:.2f} ms; "
          f"scalar loop {1e3 * wall_loop:.0f} ms; ratio {wall_loop / wall_vec:.0f}x")

    # -- two-mode band design for the demo envelope ----------------------------------------------
    project = load_demo_project()
    env = project.envelope
    bands = env.mode_bands_hz()
    cycle, zeta = project.drive["cycle_s"], env.damping_ratio
    calls = {"n": 0}
    linprog = scipy.optimize.linprog

    def counted(*a, **k):
        calls["n"] += 1
        return linprog(*a, **k)

    scipy.optimize.linprog = counted

    def two_mode():
        clear_design_caches("band_design", "project_design")
        calls["n"] = 0
        return opt.two_mode_shapers(bands, 0.049, zeta, cycle_s=cycle)

    two_mode()  # warm the closed-form caches and imports
    wall, cpu, r = best_of(two_mode, args.repeat)
    print(f"two-mode band design, demo bands {', '.join(f'[{lo:.4g}, {hi:.4g}] Hz' for lo, hi in bands)}, "
          f"cycle {cycle:g} s: {wall:.3f} s wall, {cpu:.3f} s CPU, {calls['n']} linear programs; "
          f"direct {r.direct.duration_s:.3f} s ({r.direct.n_impulses} impulses), "
          f"convolved {r.convolved.duration_s:.3f} s ({r.convolved.n_impulses} impulses), "
          f"ratio {r.direct.duration_s / r.convolved.duration_s:.3f}")

    def direct_only():
        clear_design_caches("band_design", "project_design")
        calls["n"] = 0
        return opt.multi_band_shaper(bands, 0.049, zeta, cycle_s=cycle)

    wall, cpu, _ = best_of(direct_only, args.repeat)
    print(f"direct design alone: {wall:.3f} s wall, {cpu:.3f} s CPU, {calls['n']} linear programs")

    # -- project designs -----------------------------------------------------------------------------
    for label, sched in (("without schedule", False), ("with schedule", True)):
        p = dataclasses.replace(project, design=dict(project.design, schedule=sched))

        def run(p=p):
            clear_design_caches("band_design", "project_design")
            calls["n"] = 0
            return design_mod.design_for_project(p)

        wall, cpu, d = best_of(run, max(1, args.repeat - 1))
        rows = f", {d.schedule.rope_lengths_m.size} rows" if d.schedule is not None else ""
        print(f"demo project design {label}: {wall:.3f} s wall, {cpu:.3f} s CPU, {calls['n']} linear programs{rows}; "
              f"worst residual {100 * d.worst_ratio:.2f} % of unshaped")
    scipy.optimize.linprog = linprog


if __name__ == "__main__":
    main()
