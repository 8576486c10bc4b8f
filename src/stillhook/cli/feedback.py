"""``stillhook feedback``: design the scheduled observer + state feedback and check it over the envelope."""

from __future__ import annotations

import argparse

from stillhook.cli._common import add_json_argument, add_project_argument, format_table, print_bullets, print_json

HELP = "design closed-loop sway damping from the [sensor] (observer + LQR per rope-length row) and check it"


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.cautions import CAUTIONS, FEEDBACK_CAUTIONS
    from stillhook.feedback.design import feedback_for_project
    from stillhook.feedback.robustness import check_envelope
    from stillhook.project import load_project_or_demo

    project = load_project_or_demo(args.project)
    design = feedback_for_project(project)
    check = check_envelope(design, project.envelope, project.feedback["min_damping_ratio"])
    cautions = list(CAUTIONS) + list(FEEDBACK_CAUTIONS)
    summary = check.as_dict()
    if args.json:
        print_json({"rows": [r.as_dict() for r in design.rows], **summary, "lookup_rule": design.lookup_rule,
                    "sensor": dict(project.sensor), "design_payload_mass_kg": design.design_payload_mass_kg,
                    "target_damping_ratio": design.target_damping_ratio, "cautions": cautions})
        return 0
    s = project.sensor
    print(f"Feedback design for {project.name}: sensor {s['kind']} (noise sd {s['noise_sd']:g}, resolution "
          f"{s['resolution']:g}, delay {s['delay_cycles']} cycles), speed loop {design.tau_s:g} s, drive cycle "
          f"{design.cycle_s:g} s; rows designed at payload {design.design_payload_mass_kg:g} kg for damping "
          f"ratio {design.target_damping_ratio:g}")
    rows = [[f"{r.rope_length_m:.3f}", r.regulator_damping_ratio, r.observer_damping_ratio, r.sway_weight,
             r.noise_ratio] for r in design.rows]
    print(format_table(["rope m", "regulator zeta", "observer zeta", "sway weight", "noise ratio"], rows))
    w = check.worst
    print(f"\nEnvelope check ({len(check.points)} points, rows picked by the '{design.lookup_rule}' rule, both "
          f"sides of every switch): {'all stable' if check.all_stable else 'UNSTABLE somewhere'}; worst "
          f"closed-loop damping ratio {w.damping_ratio:.4g} at rope {w.rope_length_m:.3f} m, payload "
          f"{w.payload_mass_kg:.4g} kg (accepted: >= {check.min_damping_ratio:g}: "
          f"{'pass' if check.passed else 'FAIL'}); smallest gain margin {check.gain_margin_db:.3g} dB; smallest "
          f"delay margin {check.delay_margin_cycles:.3g} cycles")
    notes = []
    short = [r for r in design.rows if r.regulator_damping_ratio < design.target_damping_ratio - 1e-6
             or r.observer_damping_ratio < design.target_damping_ratio - 1e-6]
    if short:
        notes.append(f"{len(short)} row(s) cannot reach the damping target with this sensor and drive; "
                     "they are tuned to 90 % of the best damping found")
    if not check.passed:
        notes.append("the envelope check fails: narrow the payload range, move design_payload_mass_kg, or use a "
                     "sensor that sees the weakly damped mode")
    print_bullets("Notes", notes)
    print_bullets("Cautions", cautions)
    return 0
