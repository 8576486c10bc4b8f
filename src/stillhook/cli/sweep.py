"""``stillhook sweep``: residual sway of every design over the rope-length x payload-mass envelope."""

from __future__ import annotations

import argparse
import sys

from stillhook.cli._common import (
    add_json_argument,
    add_project_argument,
    add_quantity_option,
    format_table,
    load_project_arg,
    print_cautions,
)

HELP = "residual sway of the unshaped move and of each design over the whole envelope (fast linear sweep)"

#: Mirrors stillhook.study.sweep.DEFAULT_GRID (kept here so --help imports nothing heavy).
_DEFAULT_GRID = (21, 21)

EXAMPLES = """  stillhook sweep demo --grid 41 41 --designs shaper,notch --json
  stillhook sweep my_crane.toml --samples 100000 --seed 7    # draws [uncertainty] ranges too
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_quantity_option(p, "--grid", "grid_points", f"rope lengths x payload masses, evenly spaced over the envelope "
                        f"(default {_DEFAULT_GRID[0]} {_DEFAULT_GRID[1]}, at most 1000 each; a range of one value "
                        "gets one point)", nargs=2, metavar=("NL", "NM"))
    add_quantity_option(p, "--samples", "random_rigs", "N random rigs drawn uniformly over the envelope instead of "
                        "a grid (at most 1000000), and over the project's [uncertainty] ranges of hook mass, "
                        "rigging length and damping when it gives them")
    add_quantity_option(p, "--seed", "seed", "random seed for --samples, a whole number (default 0); same seed, "
                        "same rigs", default=0, metavar="SEED")
    p.add_argument("--nominal-rig", action="store_true",
                   help="with --samples: hold hook mass, rigging length and damping at their [rig] values instead "
                        "of drawing them over [uncertainty]")
    add_quantity_option(p, "--distance-m", "distance_m", "travel distance of the move (m); default: [move] "
                        "distance_m with the project's [move] profile, rope length held")
    p.add_argument("--designs", metavar="LIST", default=None,
                   help="comma-separated designs to sweep, of unshaped, shaper, schedule, notch (default all; "
                        "unshaped is always included)")
    p.add_argument("--no-check", action="store_true",
                   help="skip the nonlinear spot checks at the envelope's corners")
    add_json_argument(p)


class Progress:
    """A one-line progress bar on stderr."""

    def __init__(self, stream):
        self.stream = stream

    def __call__(self, done: int, total: int) -> None:
        width = 30
        filled = int(width * done / max(total, 1))
        self.stream.write(f"\rsweep [{'#' * filled}{'.' * (width - filled)}] {done}/{total} rigs")
        if done >= total:
            self.stream.write("\n")
        self.stream.flush()


def rig_words(at: dict) -> str:
    """Every parameter of one rig in a line: rope, payload, hook, rigging, damping."""
    return (f"rope {at['rope_length_m']:.4g} m, payload {at['payload_mass_kg']:.4g} kg, hook {at['hook_mass_kg']:.4g} "
            f"kg, rigging {at['rigging_length_m']:.4g} m, damping {at['damping_ratio']:.3g}")


def print_uncertain(result) -> None:
    """The sampled ranges, and each design's worst sampled rig with all its parameters."""
    nominal = result.nominal_rig
    words = {"hook_mass_kg": ("hook mass", " kg"), "rigging_length_m": ("rigging length", " m"),
             "damping_ratio": ("damping ratio", "")}
    ranges = "; ".join(f"{words[k][0]} {v['range'][0]:g} to {v['range'][1]:g}{words[k][1]} ({v['source']})"
                       for k, v in result.uncertainty.items())
    print(f"\nUncertain rig, drawn uniformly with rope length and payload mass: {ranges}. The designs are made "
          f"for the [rig] values (hook {nominal['hook_mass_kg']:g} kg, rigging {nominal['rigging_length_m']:g} m, "
          f"damping {nominal['damping_ratio']:g}).")
    print("Worst sampled rig of each design (largest residual over the unshaped residual at that rig):")
    for key, s in result.summary().items():
        if key != "unshaped":
            print(f"  {s['label']}: {100 * s['worst_ratio']:.3g} % at {rig_words(s['worst_ratio_at'])}")


def run(args: argparse.Namespace) -> int:
    from stillhook.cautions import CAUTIONS
    from stillhook.errors import ConfigError
    from stillhook.outputs import write_json
    from stillhook.study.ranking import rank_designs, ranking_sentence
    from stillhook.study.sweep import DEFAULT_GRID, DESIGN_KEYS, sweep_project

    if args.grid is not None and args.samples is not None:
        raise ConfigError("give --grid or --samples, not both")
    if args.nominal_rig and args.samples is None:
        raise ConfigError("--nominal-rig applies to --samples only; a grid always uses the [rig] values")
    keys = DESIGN_KEYS if args.designs is None else tuple(k.strip() for k in args.designs.split(",") if k.strip())
    project = load_project_arg(args.project)
    show = not args.json and sys.stderr.isatty()
    if show and any(k in keys for k in ("shaper", "schedule", "notch")):
        sys.stderr.write("sweep: designing the filters ...\n")
    result = sweep_project(project, grid=tuple(args.grid) if args.grid else DEFAULT_GRID, samples=args.samples,
                           seed=args.seed, distance_m=args.distance_m, keys=keys, check=not args.no_check,
                           progress=Progress(sys.stderr) if show else None, vary_rig=not args.nominal_rig)
    summary = result.summary()
    ranked = rank_designs([(k, s["label"], s["worst_ratio"], s["added_s"]) for k, s in summary.items()
                           if k != "unshaped"], result.tolerance)
    if args.json:  # the rigs are streamed: a million of them never sit in memory as one list
        write_json({"project": project.name, "input_digest_sha256": project.digest, **result.as_dict(points=False),
                    "ranking": [r.as_dict() for r in ranked], "verdict": ranking_sentence(ranked, result.tolerance),
                    "cautions": list(CAUTIONS)}, sys.stdout, streamed={"points": result.iter_points()})
        return 0
    mv, env = result.move, project.envelope
    (L0, L1), (m0, m1) = env.rope_length_range_m, env.payload_mass_range_kg
    rigs = (f"{result.grid_shape[0]} x {result.grid_shape[1]} grid" if result.grid_shape
            else f"{result.rope_length_m.size} random rigs (seed {args.seed})")
    print(f"Sweep of {project.name}: {rigs} over rope {L0:g}-{L1:g} m x payload {m0:g}-{m1:g} kg; "
          f"{mv['distance_m']:g} m {mv['profile']} at {mv['max_speed_m_s']:g} m/s, {mv['max_accel_m_s2']:g} m/s2, "
          f"rope held; residual = peak |payload offset| over {mv['settle_window_s']:g} s after the command ends.")
    tol = result.tolerance
    rows = []
    for s in summary.values():
        at = s["worst_residual_at"]
        worst_mm = 1000 * s["worst_residual_m"]
        rows.append([s["label"], s["added_s"], f"{worst_mm:.0f}" if worst_mm >= 100 else f"{worst_mm:.3g}",
                     f"{at['rope_length_m']:.3g} m, {at['payload_mass_kg']:.4g} kg",
                     100 * s["worst_ratio"], f"{100 * s['share_within_tolerance']:.1f} %"])
    print(format_table(["design", "added s", "worst mm", "worst at", "worst % of unshaped",
                        f"within {100 * tol:g} %"], rows, floatfmt=".3g"))
    if result.uncertainty:
        print_uncertain(result)
    if result.spot_checks:
        checked = ", ".join(k for k in result.spot_checks[0].linear_m)
        n_worst = result.spot_check_worst
        where = f"{len(result.spot_checks) - n_worst} corners" + (
            f" and the {n_worst} worst sampled rig{'s' if n_worst > 1 else ''}" if n_worst else "")
        print(f"\nAccuracy: exact on the linear model. At the {where} the nonlinear "
              f"simulator agrees within {100 * result.max_disagreement():.2g} % of the unshaped residual "
              f"({100 * result.max_disagreement_of_peak():.2g} % of the peak sway during the move; {checked}).")
    over = "the envelope and the uncertain rig" if result.uncertainty else "the envelope"
    print(f"\nRanking (worst case over {over}): {ranking_sentence(ranked, result.tolerance)}.")
    for n in result.notes:
        print(f"Note: {n}")
    print_cautions()
    return 0
