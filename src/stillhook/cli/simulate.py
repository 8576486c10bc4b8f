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
    print_json,
    say_progress,
)

HELP = "simulate the project's move (unshaped) on the nonlinear hook-and-payload model"


EXAMPLES = """  stillhook simulate demo
  stillhook simulate my_crane.toml --distance-m 12 --out sim12 --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_quantity_option(p, "--distance-m", "distance_m", "travel distance (m); default: [move] distance_m of the "
                        "project (6 m if unset)")
    add_out_arguments(p, required=False, what="write sim.csv and sim.png into DIR")
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.sim.dynamics import SETTLE_WINDOW_S, simulate
    from stillhook.sim.profiles import project_move
    from stillhook.sim.recording import sim_csv, sim_plot_png

    if args.out is not None:
        from stillhook.outputs import check_out_dir

        check_out_dir(args.out, force=args.force)
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
