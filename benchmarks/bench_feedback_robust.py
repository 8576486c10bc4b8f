"""Benchmark: the robust feedback rows on the demo, one line per sensor kind (prints figures; not a test).

For each ``[sensor] kind`` appended to the demo project with a ``[feedback]`` section of defaults: the
single-mass design (every row tuned at the design payload, as before the robust tuning) and the robust
design, each checked over the envelope grid: all stable?, least closed-loop damping and where, smallest gain
and delay margins, rows with feedback, design wall time. Run with one BLAS thread for stable timings:
``OPENBLAS_NUM_THREADS=1 python benchmarks/bench_feedback_robust.py``.
"""

from __future__ import annotations

import time

from stillhook.feedback.design import design_feedback
from stillhook.feedback.robust import feedback_for_project
from stillhook.feedback.robustness import check_envelope
from stillhook.model.sensors import SENSOR_KINDS
from stillhook.project import demo_project_text, project_from_bytes


def line(label, design, project, seconds):
    check = check_envelope(design, project.envelope, project.feedback["min_damping_ratio"])
    w = check.worst
    on = sum(r.feedback_on for r in design.rows)
    return (f"  {label:12s} {'stable' if check.all_stable else 'UNSTABLE':8s} least zeta {w.damping_ratio:+.4f} at "
            f"{w.rope_length_m:.2f} m / {w.payload_mass_kg:.0f} kg, gain margin {check.gain_margin_db:.3g} dB, "
            f"delay margin {check.delay_margin_cycles:.3g} cyc, rows on {on}/{len(design.rows)}, {seconds:.1f} s")


def main() -> None:
    for kind in SENSOR_KINDS:
        text = demo_project_text() + f'\n[sensor]\nkind = "{kind}"\n\n[feedback]\n'
        project = project_from_bytes(text.encode(), f"demo_{kind}.toml")
        drive, env = project.drive, project.envelope
        t0 = time.perf_counter()
        single = design_feedback(env, cycle_s=drive["cycle_s"], tau_s=drive["speed_loop_time_constant_s"],
                                 max_speed_m_s=drive["max_speed_m_s"], max_accel_m_s2=drive["max_accel_m_s2"],
                                 sensor=project.sensor, rows=project.feedback["rows"],
                                 design_payload_mass_kg=env.nominal_payload_mass_kg,
                                 target_damping_ratio=project.feedback["target_damping_ratio"])
        t1 = time.perf_counter()
        robust = feedback_for_project(project)
        t2 = time.perf_counter()
        print(f"{kind} (open-loop damping {env.damping_ratio:g}):")
        print(line("single mass", single, project, t1 - t0))
        print(line("robust", robust, project, t2 - t1))


if __name__ == "__main__":
    main()
