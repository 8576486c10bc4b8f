"""``stillhook compare``: unshaped, ZV, ZVD, EI, band, two-mode shaper and notch side by side."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_project_argument,
    add_quantity_option,
    estimate_s,
    format_table,
    load_project_arg,
    print_bullets,
    print_cautions,
    print_json,
    say_progress,
)
from stillhook.cli._controllers import add_scenario_arguments, metrics_rows, scenario_from_args, wants_closed_loop

HELP = "compare shapers and the notch filter on the project's move (nonlinear simulation, one table)"


EXAMPLES = """  stillhook compare demo
  stillhook compare my_crane.toml --distance-m 12 --no-hoist --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_quantity_option(p, "--distance-m", "distance_m", "travel distance (m); default: [move] distance_m of the "
                        "project")
    p.add_argument("--no-hoist", action="store_true",
                   help="keep the rope length fixed (ignore [move] hoist_to_m)")
    add_scenario_arguments(p, many=True)
    add_json_argument(p)


def _run_controllers(args: argparse.Namespace) -> int:
    from stillhook.cautions import CAUTIONS, FEEDBACK_CAUTIONS
    from stillhook.study.controllers import CONTROLLERS, run_controllers

    project = load_project_arg(args.project)
    names = tuple(dict.fromkeys(args.controller or CONTROLLERS))
    scenario = scenario_from_args(args, include_hoist=not args.no_hoist)
    results = run_controllers(project, names, scenario)
    cautions = list(CAUTIONS) + (list(FEEDBACK_CAUTIONS) if any("feedback" in n for n in names) else [])
    if args.json:
        print_json({"scenario": scenario.as_dict(), "controllers": {n: r.metrics() for n, r in results.items()},
                    "cautions": cautions})
        return 0
    print(f"Controllers on {project.name}: nominal rig, closed loop with the drive's speed loop "
          f"({project.drive['speed_loop_time_constant_s']:g} s) and the sensor {project.sensor['kind']}")
    headers, rows = metrics_rows(results)
    print(format_table(headers, rows))
    print("\nresidual: peak |payload offset| in the settle window after the command, hoist and force end; settle: "
          "time until the payload stays within the rest band of the target; end error: final trolley position "
          "minus the target.")
    print_bullets("Cautions", cautions)
    return 0


def _cell(value, scale: float = 1.0, fmt: str = ".3g") -> str:
    return "-" if value is None else format(value * scale, fmt)


def _over_limits(result, drive: dict) -> list[str]:
    """Rows whose command exceeds the drive's speed or acceleration limit (a notch can overshoot its input)."""
    out = []
    for r in result.rows:
        for what, value, limit, unit in (("speed", r.peak_speed_m_s, drive["max_speed_m_s"], "m/s"),
                                         ("acceleration", r.peak_accel_m_s2, drive["max_accel_m_s2"], "m/s2")):
            if value > limit * (1 + 1e-9):
                out.append(f"{r.label}: the command reaches {value:.3g} {unit}, {100 * (value / limit - 1):.3g} % "
                           f"above the drive's {what} limit of {limit:g} {unit}")
    return out


def run(args: argparse.Namespace) -> int:
    if wants_closed_loop(args):
        return _run_controllers(args)
    from stillhook.cautions import CAUTIONS
    from stillhook.study.compare import compare_project
    from stillhook.study.ranking import rank_designs, ranking_sentence

    project = load_project_arg(args.project)
    from stillhook.sim.dynamics import SETTLE_WINDOW_S
    from stillhook.sim.profiles import project_move

    cycles = len(project_move(project, args.distance_m)[0]) + SETTLE_WINDOW_S / project.drive["cycle_s"]
    say_progress(f"designing the filters, then 7 nonlinear simulations of {cycles:.0f} drive cycles "
                 f"({estimate_s(7, cycles)}, longer for the notch's ring-out)")
    result = compare_project(project, distance_m=args.distance_m, include_hoist=not args.no_hoist)
    ranked = rank_designs([(r.method, r.label, r.residual_pct / 100.0, r.added_delay_s) for r in result.rows
                           if r.method != "unshaped"], result.tolerance)
    if args.json:
        print_json({**result.as_dict(), "ranking": [r.as_dict() for r in ranked],
                    "over_drive_limits": _over_limits(result, project.drive),
                    "verdict": ranking_sentence(ranked, result.tolerance), "cautions": list(CAUTIONS)})
        return 0
    rig = result.rig
    print(f"Comparison on {result.project}: {result.distance_m:.4g} m move, nominal rig "
          f"(rope {rig['rope_length_m']:g} m, payload {rig['payload_mass_kg']:g} kg, modes "
          + ", ".join(f"{f:.4g}" for f in rig["modes_hz"]) + " Hz)"
          + (", hoisting during the move" if result.hoist else "") + f", drive cycle {result.cycle_s:g} s")
    print(f"At rest: |payload offset| <= {1000 * result.rest_threshold_m:.3g} mm "
          f"({100 * result.tolerance:g} % of the unshaped residual sway); unshaped command ends at "
          f"{result.unshaped_end_s:.4g} s; residual measured over {result.settle_window_s:g} s after each command.")
    rows = [[r.label, r.tuned_to, _cell(r.duration_s), _cell(r.centroid_delay_s),
             _cell(r.residual_sway_m, 1000), _cell(r.residual_pct, fmt=".3g"), _cell(r.peak_sway_m, 1000),
             _cell(r.added_delay_s), _cell(r.final_position_error_m, 1000, ".2f"),
             _cell(r.peak_speed_m_s), _cell(r.peak_accel_m_s2)] for r in result.rows]
    print(format_table(["method", "tuned to", "dur s", "mean delay s", "residual mm", "residual %",
                        "peak mm", "added delay s", "end error mm", "peak m/s", "peak m/s2"], rows))
    print("\nadded delay: time the load is at rest minus the unshaped command's end ('-': not at rest in the "
          "window); dur: extra command length (notch: ring-out padding); mean delay: sum A_i t_i or the "
          "notch's group delay at DC; end error: final trolley position minus the distance.")
    print(f"\nRanking: {ranking_sentence(ranked, result.tolerance)}.")
    print_bullets("Warnings", _over_limits(result, project.drive))
    print_bullets("Notes", result.notes)
    print_cautions()
    return 0
