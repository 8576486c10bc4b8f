"""Benchmark: feedback design, envelope check and the closed-loop co-simulation (prints figures; not a test).

Prints, on the demo envelope with a [feedback] section of defaults:

- the design of every rope-length row (LQR + Kalman, both tuned) and the envelope check: CPU and wall time;
- one closed-loop run of the project's move: cost per drive cycle with no controller, the float controller
  and the integer reference of the C runtime (ratios to the run without a controller);
- the integer controller's disagreement with the float one on that run (largest payload-path difference).

Run: ``python benchmarks/bench_feedback.py``.
"""

from __future__ import annotations

import time

import numpy as np

from stillhook.feedback.controller import FeedbackController
from stillhook.feedback.robust import feedback_for_project
from stillhook.feedback.robustness import check_envelope
from stillhook.firmware.feedback_model import FeedbackModel
from stillhook.firmware.feedback_tables import feedback_tables, from_q31, to_q31
from stillhook.model.lookup import rope_length_counts
from stillhook.project import load_demo_project
from stillhook.sim.closed_loop import Sensor, run_closed_loop
from stillhook.sim.profiles import project_move


def timed(fn):
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    return time.perf_counter() - w0, time.process_time() - c0, out


def main() -> None:
    project = load_demo_project()
    w, c, design = timed(lambda: feedback_for_project(project))
    print(f"design, {len(design.rows)} rows: {w:.2f} s wall, {c:.2f} s CPU")
    w, c, check = timed(lambda: check_envelope(design, project.envelope, project.feedback["min_damping_ratio"]))
    print(f"envelope check, {len(check.points)} points: {w:.2f} s wall, {c:.2f} s CPU; worst damping "
          f"{check.worst.damping_ratio:.4g}")
    lsb = project.firmware["rope_length_lsb_m"]
    tables = feedback_tables(design, project.envelope, project.sensor, lsb, follow_reference=False)
    speed, hoist = project_move(project)
    T, tau = project.drive["cycle_s"], project.drive["speed_loop_time_constant_s"]
    rig = project.envelope.nominal_rig
    model, seq = FeedbackModel(tables), [0]

    def integer(y, L, r):
        seq[0] += 1
        u, _ = model.step(int(rope_length_counts(L, lsb)), int(to_q31(y, tables.fs_y)), seq[0],
                          int(to_q31(r, tables.fs_v)))
        return float(from_q31(u, tables.fs_v))

    runs = {}
    for name, ctrl in (("none", None), ("float", FeedbackController(design).step), ("integer", integer)):
        w, c, res = timed(lambda ctrl=ctrl: run_closed_loop(rig, speed, T, tau, ctrl, sensor=Sensor(),
                                                            hoist_m_s=hoist, initial_angles_rad=(0.03, 0.03)))
        runs[name] = (w / len(res.sim.t_s), res)
    base = runs["none"][0]
    for name, (per, _res) in runs.items():
        print(f"closed loop, {name:8s}: {1e6 * per:7.1f} us per drive cycle ({per / base:.2f} x no controller)")
    diff = np.max(np.abs(runs["float"][1].sim.payload_offset_m - runs["integer"][1].sim.payload_offset_m))
    print(f"integer vs float controller: largest payload-path difference {1e6 * diff:.1f} um")


if __name__ == "__main__":
    main()
