"""Emit the example project, record an inclinometer log in closed loop, and write the expected output.

The log is what a drive would record each cycle: the operator's speed reference (Q15), the rope length
(counts), the inclinometer reading (Q31 of the sensor full scale) and its sequence number. It comes from
the nonlinear model (stillhook.sim.closed_loop) with the Python integer references of the shaper and the
feedback in the loop; near the end the sensor freezes (its sequence number stops) to show the fault path.
The expected output (shaped, command, status per cycle) is what feedback_task.c must print, byte for byte.

Usage: python make_log.py BUILD_DIR
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

from stillhook.firmware.feedback_model import FeedbackModel
from stillhook.firmware.feedback_tables import from_q31, to_q31
from stillhook.firmware.plan import plan_for_project, render_files
from stillhook.firmware.shaper_model import ShaperModel
from stillhook.model.lookup import rope_length_counts
from stillhook.outputs import write_files
from stillhook.project import load_project
from stillhook.sim.closed_loop import Sensor, run_closed_loop
from stillhook.sim.profiles import hoist_speeds, project_move

HERE = Path(__file__).resolve().parent
FREEZE_LAST_CYCLES = 400


def main(build: Path) -> int:
    project = load_project(HERE / "project.toml")
    plan = plan_for_project(project)
    write_files(build / "emit", render_files(plan))
    drive, s = project.drive, project.sensor
    T, tau, lsb = drive["cycle_s"], drive["speed_loop_time_constant_s"], plan.schedule.lsb_m
    speed, _ = project_move(project)
    ref_q15 = np.round(speed / drive["max_speed_m_s"] * 16384).astype(np.int64)
    ref = ref_q15 * drive["max_speed_m_s"] / 16384
    L0 = project.envelope.nominal_rope_length_m
    hoist = hoist_speeds(L0, 3.5, drive["hoist_speed_m_s"], drive["hoist_accel_m_s2"], T, start_s=1.0)
    rig = project.envelope.nominal_rig
    sensor = Sensor(s["kind"], s["noise_sd"], s["resolution"], s["delay_cycles"], seed=7)
    # the rope lengths per cycle do not depend on the controller: take them from a run without one
    ropes = []
    run_closed_loop(rig, ref, T, tau, lambda y, L, r: (ropes.append(L), r)[1], sensor=sensor, hoist_m_s=hoist)
    counts = rope_length_counts(np.array(ropes), lsb).astype(np.int64)
    rows, _status = plan.schedule.lookup(counts)
    x = np.concatenate([ref_q15, np.zeros(len(counts) - len(ref_q15), dtype=np.int64)])
    shaped = ShaperModel(plan.shaper).run(x, rows)
    fb, t = FeedbackModel(plan.feedback), plan.feedback
    log, expected, k = [], [], [0]

    def controller(y, _L, _r):
        i = k[0]
        k[0] += 1
        seq = i if i < len(counts) - FREEZE_LAST_CYCLES else len(counts) - FREEZE_LAST_CYCLES
        yq = int(to_q31(y, t.fs_y))
        u, st = fb.step(int(counts[i]), yq, seq, int(shaped[i]) * 65536)
        log.append(f"{int(x[i])},{int(counts[i])},{yq},{seq}")
        expected.append(f"{int(shaped[i])},{u},{st}")
        return float(from_q31(u, t.fs_v))

    res = run_closed_loop(rig, ref, T, tau, controller, sensor=sensor, hoist_m_s=hoist)
    header = ["# stillhook feedback example: recorded log, one row per 0.005 s drive cycle (invented session)",
              "# speed_ref (Q15, 16384 = 100 % of 0.5 m/s), rope_counts (0.001 m), sensor_q31 (inclinometer, "
              f"FS {t.fs_y:g} rad), sensor_seq (frozen for the last {FREEZE_LAST_CYCLES} cycles: a failed sensor)"]
    (build / "sensor_log.csv").write_text("\n".join(header + log) + "\n", encoding="ascii")
    (build / "expected.csv").write_text("\n".join(expected) + "\n", encoding="ascii")
    m = res.metrics()
    print(f"{len(log)} cycles; residual sway {1000 * m['residual_payload_sway_m']:.1f} mm, end error "
          f"{1000 * m['end_error_m']:.2f} mm; feedback off for the last {FREEZE_LAST_CYCLES} cycles (stale sensor)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(Path(sys.argv[1])))
