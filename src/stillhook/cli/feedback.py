"""``stillhook feedback``: design the scheduled observer + state feedback and check it over the envelope."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_project_argument,
    format_table,
    load_project_arg,
    print_bullets,
    print_json,
)

HELP = "design closed-loop sway damping from the [sensor] (observer + LQR per rope-length row) and check it"


EXAMPLES = """  stillhook feedback demo
  stillhook feedback my_crane.toml --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.cautions import CAUTIONS, FEEDBACK_CAUTIONS
    from stillhook.feedback.robust import MIN_DELAY_MARGIN_CYCLES, MIN_GAIN_MARGIN_DB, feedback_for_project
    from stillhook.feedback.robustness import check_envelope
    project = load_project_arg(args.project)
    design = feedback_for_project(project)
    check = check_envelope(design, project.envelope, project.feedback["min_damping_ratio"])
    cautions = list(CAUTIONS) + list(FEEDBACK_CAUTIONS)
    summary = check.as_dict()
    if args.json:
        print_json({"rows": [r.as_dict() for r in design.rows], **summary, "lookup_rule": design.lookup_rule,
                    "row_checks": [r.as_dict() for r in design.row_reports],
                    "required": {"gain_margin_db": MIN_GAIN_MARGIN_DB,
                                 "delay_margin_cycles": MIN_DELAY_MARGIN_CYCLES + design.delay_cycles,
                                 "least_damping_ratio": project.envelope.damping_ratio},
                    "sensor": dict(project.sensor), "design_payload_mass_kg": design.design_payload_mass_kg,
                    "target_damping_ratio": design.target_damping_ratio, "cautions": cautions})
        return 0
    s = project.sensor
    print(f"Feedback design for {project.name}: sensor {s['kind']} (noise sd {s['noise_sd']:g}, resolution "
          f"{s['resolution']:g}, delay {s['delay_cycles']} cycles), speed loop {design.tau_s:g} s, drive cycle "
          f"{design.cycle_s:g} s; rows designed at payload {design.design_payload_mass_kg:g} kg for damping "
          f"ratio {design.target_damping_ratio:g}")
    rows = [[f"{r.rope_length_m:.3f}", "on" if r.feedback_on else "OFF", f"{r.design_payload_mass_kg:g}",
             f"{r.aggressiveness:g}", r.regulator_damping_ratio, r.observer_damping_ratio, c.worst_damping_ratio,
             c.gain_margin_db, c.delay_margin_cycles]
            for r, c in zip(design.rows, design.row_reports, strict=True)]
    print(format_table(["rope m", "feedback", "design kg", "x target", "regulator zeta", "observer zeta",
                        "row worst zeta", "row gain margin dB", "row delay margin cyc"], rows))
    print(f"Each row is re-tuned (design payload from the project's, the heaviest, the lightest; target backed off "
          f"x1, 1/2, 1/4, 1/8) until, at every grid point of its rope span and payload range, the loop is stable, "
          f"no mode is less damped than open loop ({project.envelope.damping_ratio:g}), the gain margin is >= "
          f"{MIN_GAIN_MARGIN_DB:g} dB and the delay margin >= {MIN_DELAY_MARGIN_CYCLES + design.delay_cycles:g} "
          f"extra cycles; a row where no candidate passes gets zero gain (shaper alone there).")
    w = check.worst
    print(f"\nEnvelope check ({len(check.points)} points, rows picked by the '{design.lookup_rule}' rule, both "
          f"sides of every switch): {'all stable' if check.all_stable else 'UNSTABLE somewhere'}; worst "
          f"closed-loop damping ratio {w.damping_ratio:.4g} at rope {w.rope_length_m:.3f} m, payload "
          f"{w.payload_mass_kg:.4g} kg (accepted: >= {check.min_damping_ratio:g}: "
          f"{'pass' if check.passed else 'FAIL'}); smallest gain margin {check.gain_margin_db:.3g} dB; smallest "
          f"delay margin {check.delay_margin_cycles:.3g} cycles")
    notes = []
    for r, c in zip(design.rows, design.row_reports, strict=True):
        if not r.feedback_on:
            notes.append(f"row {r.rope_length_m:.3f} m: feedback OFF (zero gain, shaper alone), {c.reason}")
    short = [r for r in design.rows if r.feedback_on and r.aggressiveness == 1.0
             and (r.regulator_damping_ratio < design.target_damping_ratio - 1e-6
                  or r.observer_damping_ratio < design.target_damping_ratio - 1e-6)]
    if not any(r.feedback_on for r in design.rows):
        notes.append(f"no row has feedback: with the {s['kind']} sensor no gain tried keeps every envelope point "
                     "stable with the margins and at least the open-loop damping; this design damps nothing")
    if short:
        notes.append(f"{len(short)} row(s) cannot reach the damping target with this sensor and drive; "
                     "they are tuned to 90 % of the best damping found")
    if not check.passed:
        notes.append("the envelope check fails: narrow the payload range, move design_payload_mass_kg, or use a "
                     "sensor that sees the weakly damped mode")
    print_bullets("Notes", notes)
    print_bullets("Cautions", cautions)
    return 0
