"""``stillhook notch``: notch filters at the sway modes, discretized for the drive cycle (SOS)."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_project_argument,
    add_quantity_option,
    format_table,
    load_project_arg,
    print_bullets,
    print_json,
)

HELP = "notch filters at the sway modes for the drive cycle (second-order sections, fixed-point check)"


EXAMPLES = """  stillhook notch demo
  stillhook notch --frequency-hz 0.64 --frequency-hz 1.9 --cycle-s 0.005 --width-hz 0.1 --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p, optional=True)
    add_quantity_option(p, "--frequency-hz", "frequency_hz", "notch frequency (Hz); repeat for the second mode",
                        action="append")
    add_quantity_option(p, "--cycle-s", "cycle_s", "drive cycle = filter sample period (s)")
    add_quantity_option(p, "--width-hz", "width_hz", "notch width 2 zeta_p f0 (Hz), once for all or once per "
                        "frequency (default: wide enough for the tolerance over the mode's band, or over +-10 %%)",
                        action="append")
    add_quantity_option(p, "--depth-db", "depth_db", "depth at the centre (dB), once for all or once per frequency "
                        "(default: a true null)", action="append")
    add_quantity_option(p, "--tolerance-pct", "tolerance_pct", "residual sway allowed over each band (%%, default "
                        "5, or the project's)")
    add_json_argument(p)


def _one_or_list(values):
    if values is None:
        return None
    return values[0] if len(values) == 1 else values


def run(args: argparse.Namespace) -> int:
    from stillhook.cautions import CAUTIONS
    from stillhook.errors import ConfigError
    from stillhook.notch.design import design_notches, notch_for_project

    for flag, values in (("--width-hz", args.width_hz), ("--depth-db", args.depth_db)):
        n = len(args.frequency_hz or ()) or 2
        if values is not None and len(values) not in (1, n) and args.frequency_hz:
            raise ConfigError(f"{flag} given {len(values)} times for {n} notch frequencies; allowed: once for all "
                              "or once per --frequency-hz")
    width, depth = _one_or_list(args.width_hz), _one_or_list(args.depth_db)
    source = {}
    if args.project is not None:
        if args.frequency_hz or args.cycle_s is not None:
            raise ConfigError("give a project file or --frequency-hz/--cycle-s, not both")
        project = load_project_arg(args.project)
        tol = None if args.tolerance_pct is None else args.tolerance_pct / 100.0
        design = notch_for_project(project, width_hz=width, depth_db=depth, tolerance=tol)
        source = {"project": project.name, "project_sha256": project.digest,
                  "bands_hz": [list(b) for b in project.envelope.mode_bands_hz()]}
    else:
        if not args.frequency_hz or args.cycle_s is None:
            raise ConfigError("give --frequency-hz F (repeat for a second mode) and --cycle-s TS, or a project file")
        tol = 0.05 if args.tolerance_pct is None else args.tolerance_pct / 100.0
        design = design_notches(args.frequency_hz, args.cycle_s, width_hz=width, depth_db=depth, tolerance=tol)
    out = {**source, **design.as_dict(), "cautions": list(CAUTIONS)}
    if args.json:
        print_json(out)
        return 0
    _print_text(design, source, CAUTIONS)
    return 0


def _print_text(design, source: dict, cautions) -> None:
    T = design.cycle_s
    head = f"Notch filters for {source['project']}" if source else "Notch filters"
    print(f"{head}: drive cycle {T:g} s ({1 / T:g} Hz), tolerance {100 * design.tolerance:g} %")
    rows = []
    for i, s in enumerate(design.sections):
        depth = "null" if s.depth_db == float("inf") else f"{s.depth_db:.3g}"
        rows.append([i + 1, s.frequency_hz, s.width_hz, depth, s.pole_damping, s.band_hz[0], s.band_hz[1],
                     100 * s.band_worst_residual])
    print(format_table(["notch", "freq Hz", "width Hz", "depth dB", "zeta_p", "band lo Hz", "band hi Hz",
                        "worst % in band"], rows))
    print("\nSecond-order sections (scipy layout, a0 = 1, DC gain exactly 1):")
    print(format_table(["notch", "b0", "b1", "b2", "a0", "a1", "a2"],
                       [[i + 1, *(float(c) for c in row)] for i, row in enumerate(design.sos)], floatfmt=".17g"))
    print(f"\nCentroid delay {design.centroid_delay_s:.3g} s; rings out to 1e-4 in "
          f"{design.ring_out_samples() * T:.4g} s; largest pole radius {design.max_pole_radius:.9g}")
    rows = []
    for fmt, shifts in design.quantization.items():
        for q in shifts:
            rows.append([fmt, q.section + 1, q.frequency_hz, q.quantized_frequency_hz, 100 * q.relative_shift,
                         "yes" if q.lost else "no", q.dc_gain])
    print("\nFixed-point rounding (post shift "
          + ", ".join(f"{fmt} {s}" for fmt, s in design.post_shift.items()) + "; notch = angle of the zeros):")
    print(format_table(["format", "notch", "freq Hz", "rounded Hz", "shift %", "lost", "DC gain"], rows))
    print_bullets("Warnings", design.warnings)
    print_bullets("Cautions", cautions)
