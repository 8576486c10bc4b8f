"""``stillhook simulate``: run the project's move on the nonlinear model and report the sway metrics."""

from __future__ import annotations

import argparse

from stillhook.cli._common import add_json_argument, add_project_argument, format_table, print_json

HELP = "simulate the project's move (unshaped) on the nonlinear hook-and-payload model"


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    p.add_argument("--distance", type=float, metavar="M", default=None,
                   help="travel distance (m); default: [move] distance_m of the project (6 m if unset)")
    p.add_argument("--out", metavar="DIR", default=None, help="write sim.csv and sim.png into DIR")
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.project import load_project_or_demo
    from stillhook.sim.dynamics import simulate
    from stillhook.sim.profiles import project_move
    from stillhook.sim.recording import sim_csv, sim_plot_png

    project = load_project_or_demo(args.project)
    speed, hoist = project_move(project, args.distance)
    rig = project.envelope.nominal_rig
    result = simulate(rig, speed, project.drive["cycle_s"], hoist_speed_m_s=hoist)
    metrics = result.metrics()
    if args.out is not None:
        from stillhook.outputs import write_files

        csv = sim_csv(result, payload_mass_kg=rig.payload_mass_kg, rope_offset_m=project.envelope.rope_offset_m)
        write_files(args.out, {"sim.csv": csv, "sim.png": sim_plot_png(result, rig)})
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
