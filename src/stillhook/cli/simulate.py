"""``stillhook simulate``: run the project's move on the nonlinear model and report the sway metrics."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_out_arguments,
    add_project_argument,
    add_quantity_option,
    estimate_s,
    format_table,
    load_project_arg,
    print_bullets,
    print_json,
    say_progress,
)
from stillhook.cli._controllers import add_scenario_arguments, metrics_rows, scenario_from_args, wants_closed_loop

HELP = "simulate the project's move (unshaped) on the nonlinear hook-and-payload model"


EXAMPLES = """  stillhook simulate demo
  stillhook simulate my_crane.toml --distance-m 12 --out sim12 --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_quantity_option(p, "--distance-m", "distance_m", "travel distance (m); default: [move] distance_m of the "
                        "project (6 m if unset)")
    add_out_arguments(p, required=False, what="write sim.csv and sim.png into DIR")
    add_scenario_arguments(p, many=False)
    add_json_argument(p)


def _run_closed_loop(args: argparse.Namespace) -> int:
    from stillhook.cautions import CAUTIONS, FEEDBACK_CAUTIONS
    from stillhook.study.controllers import run_controllers

    project = load_project_arg(args.project)
    name = args.controller or "none"
    result = run_controllers(project, (name,), scenario_from_args(args))[name]
    cautions = list(CAUTIONS) + (list(FEEDBACK_CAUTIONS) if "feedback" in name else [])
    if args.out is not None:
        from stillhook.outputs import write_files
        from stillhook.sim.recording import sim_csv, sim_plot_png

        rig = project.envelope.nominal_rig
        write_files(args.out, {"sim.csv": sim_csv(result.sim), "sim.png": sim_plot_png(result.sim, rig)},
                    force=args.force)
    if args.json:
        print_json({"controller": name, **result.metrics(), "scenario": scenario_from_args(args).as_dict(),
                    "cautions": cautions})
        return 0
    headers, rows = metrics_rows({name: result})
    print(f"Closed loop on {project.name}: nominal rig, drive speed loop "
          f"{project.drive['speed_loop_time_constant_s']:g} s, sensor {project.sensor['kind']}")
    print(format_table(headers, rows))
    print_bullets("Cautions", cautions)
    return 0


def run(args: argparse.Namespace) -> int:
    if args.out is not None:
        from stillhook.outputs import check_out_dir

        check_out_dir(args.out, force=args.force)
    if wants_closed_loop(args):
        return _run_closed_loop(args)
    from stillhook.sim.dynamics import SETTLE_WINDOW_S, simulate
    from stillhook.sim.profiles import project_move
    from stillhook.sim.recording import sim_csv, sim_plot_png

    project = load_project_arg(args.project)
    speed, hoist = project_move(project, args.distance_m)
    rig = project.envelope.nominal_rig
    cycles = len(speed) + SETTLE_WINDOW_S / project.drive["cycle_s"]
    say_progress(f"simulating {cycles:.0f} drive cycles (with the settle window) on the nonlinear model, "
                 f"{estimate_s(1, cycles)}")
    result = simulate(rig, speed, project.drive["cycle_s"], hoist_speed_m_s=hoist)
    metrics = result.metrics()
    if args.out is not None:
        from stillhook.outputs import write_files

        csv = sim_csv(result, payload_mass_kg=rig.payload_mass_kg, rope_offset_m=project.envelope.rope_offset_m)
        write_files(args.out, {"sim.csv": csv, "sim.png": sim_plot_png(result, rig)}, force=args.force)
    if args.json:
        print_json({"rig": {"rope_length_m": rig.rope_length_m, "payload_mass_kg": rig.payload_mass_kg},
                    "metrics": metrics})
        return 0
    print(f"Move: {result.trolley_position_m[-1]:.3f} m at up to {project.drive['max_speed_m_s']:g} m/s"
          + (f", hoisting {rig.rope_length_m:g} -> {result.rope_length_m[-1]:.3f} m" if hoist is not None else "")
          + f"; payload {rig.payload_mass_kg:g} kg, rope {rig.rope_length_m:g} m (unshaped)")
    print(format_table(["metric", "value"], [[k, v] for k, v in metrics.items()]))
    if args.out is not None:
        print(f"wrote {args.out}/sim.csv and {args.out}/sim.png")
    return 0
