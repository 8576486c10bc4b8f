"""Benchmark: commissioning speed and accuracy (prints figures; not a test).

Prints:

- identify: a 120 s two-mode record at 1 kHz (hook inclinometer model, noise): wall and CPU time (goal < 1 s),
  frequencies and damping against the truth;
- calibrate: the three shipped demo logs, read, identified and fitted (goal < 2 s);
- Monte Carlo of the frequency and damping estimates of one damped tone in white noise at 20 dB against the
  Cramer-Rao bound of that exact model (Kay 1993, eq. 3.33; the suite runs a small version): sd ratios, bias.

Run: ``python benchmarks/bench_commission.py [--trials N] [--repeat N]``.
"""

from __future__ import annotations

import argparse
import math

import numpy as np
from timing import best_of


def damped(t, c, wd, sigma, a, b):
    return c + np.exp(-sigma * t) * (a * np.cos(wd * t) + b * np.sin(wd * t))


def crb(t, p, sd):
    """CRB of (f, zeta) for the model above: inverse of J^T J / sd^2, delta method to f = |s|/2pi, zeta."""
    cols = []
    for i in range(5):
        h = 1e-7 * max(abs(p[i]), 1.0)
        e = np.zeros(5)
        e[i] = h
        cols.append((damped(t, *(p + e)) - damped(t, *(p - e))) / (2 * h))
    J = np.column_stack(cols)
    cov = np.linalg.inv(J.T @ J) * sd**2
    wd, sigma = p[1], p[2]
    wn = math.hypot(wd, sigma)
    gf = np.array([0, wd / wn, sigma / wn, 0, 0]) / (2 * np.pi)
    gz = np.array([0, -sigma * wd, wd * wd, 0, 0]) / wn**3
    return math.sqrt(gf @ cov @ gf), math.sqrt(gz @ cov @ gz)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=400)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()

    from stillhook.commission.demo_logs import TRUE_CRANE, demo_log_bytes
    from stillhook.commission.identify import identify_record
    from stillhook.commission.logs import parse_log
    from stillhook.commission.session import calibrate_logs
    from stillhook.project import demo_project_text, load_demo_project

    # identify: 120 s at 1 kHz, two modes (0.19 and 0.35 Hz), 0.3 % damping, noise 2e-4 rad
    t = np.arange(0, 120, 1e-3)
    truth = ((0.19, 0.006, 0.03, 0.4), (0.35, 0.006, 0.004, 1.1))
    y = sum(A * np.exp(-z * 2 * np.pi * f * t) * np.cos(2 * np.pi * f * math.sqrt(1 - z * z) * t + ph)
            for f, z, A, ph in truth) + np.random.default_rng(1).normal(0, 2e-4, t.size)
    wall, cpu, fit = best_of(lambda: identify_record(t, y, (0.02, 5.0)), args.repeat)
    print(f"identify 120 s at 1 kHz ({t.size} samples): {wall:.3f} s wall, {cpu:.3f} s CPU (goal < 1 s)")
    for k, (f, z, _, _) in enumerate(truth):
        print(f"  mode {k + 1}: f {fit.frequency_hz[k]:.6f} Hz (true {f}, sd {fit.frequency_sd_hz[k]:.2g}), "
              f"zeta {fit.damping_ratio[k]:.5f} (true {z}, sd {fit.damping_ratio_sd[k]:.2g})")

    project, text = load_demo_project(), demo_project_text()
    logs = demo_log_bytes()
    wall, cpu, (cal, _, _) = best_of(
        lambda: calibrate_logs(project, text, [parse_log(raw, name) for name, raw in logs.items()]), args.repeat)
    print(f"calibrate from the 3 demo logs (read, identify, fit): {wall:.3f} s wall, {cpu:.3f} s CPU (goal < 2 s)")
    for k, true in TRUE_CRANE.items():
        z = (cal.values[k] - true) / cal.sds[k]
        print(f"  {k}: {cal.values[k]:.6g} +- {cal.sds[k]:.2g} (true {true}, {z:+.2f} sd)")

    # Monte Carlo against the Cramer-Rao bound, 20 dB
    N, dt, f, zeta, A = 1000, 0.1, 0.25, 0.005, 1.0
    sd = A / math.sqrt(200)
    tt = np.arange(N) * dt
    wn = 2 * np.pi * f
    p = np.array([0.0, wn * math.sqrt(1 - zeta**2), zeta * wn, A * math.cos(0.7), -A * math.sin(0.7)])
    clean = damped(tt, *p)
    f_crb, z_crb = crb(tt, p, sd)
    rng = np.random.default_rng(7)
    est = np.array([[(r := identify_record(tt, clean + rng.normal(0, sd, N), (0.02, 2.0))).frequency_hz[0],
                     r.damping_ratio[0]] for _ in range(args.trials)])
    fs, zs = est.std(axis=0, ddof=1)
    fb, zb = est.mean(axis=0) - (f, zeta)
    print(f"Monte Carlo, {args.trials} trials, 20 dB: frequency sd / CRB {fs / f_crb:.3f}, bias / sd {fb / fs:+.3f}; "
          f"damping sd / CRB {zs / z_crb:.3f}, bias / sd {zb / zs:+.3f}")


if __name__ == "__main__":
    main()
