"""``stillhook identify``: the sway modes of a log (frequency, damping, amplitude with standard deviations)."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_out_arguments,
    add_quantity_option,
    format_table,
    load_project_arg,
    print_bullets,
    print_json,
)

HELP = "identify the sway modes (frequency, damping ratio, with standard deviations) in a sway log CSV"


EXAMPLES = """  stillhook identify sway_log.csv --project demo
  stillhook identify sway_log.csv --window-s 10 50 --rope-length-m 6.2 --out identified --json
"""


def add_log_options(p: argparse.ArgumentParser) -> None:
    """Options shared with ``calibrate``: column mapping and scaling."""
    p.add_argument("--column", action="append", metavar="NAME=SRC", default=[],
                   help="read log column NAME (e.g. payload_offset_m) from the CSV column SRC; repeatable")
    p.add_argument("--scale", action="append", metavar="NAME=FACTOR", default=[],
                   help="multiply log column NAME by FACTOR (e.g. payload_offset_m=0.001 for mm); repeatable")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("log", metavar="LOG.csv", help="sway log: time_s and at least one sway signal column")
    p.add_argument("--project", metavar="PROJECT.toml", default=None,
                   help="project ('demo' for the built-in one): narrows the search, numbers the modes, says "
                        "which predicted mode is not observable")
    add_quantity_option(p, "--window-s", "window_s", "use only this time window (s) instead of the free-sway "
                        "segments found", nargs=2, metavar=("S_START", "S_END"))
    add_quantity_option(p, "--rope-length-m", "rope_length_m", "rope length for a log without a rope_length_m column")
    add_quantity_option(p, "--payload-mass-kg", "payload_mass_kg", "payload mass for a log without a "
                        "payload_mass_kg column")
    add_log_options(p)
    add_out_arguments(p, required=False, what="write identify.json and one figure per segment (PNG, SVG) into DIR")
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from stillhook.commission.session import (
        identify_json,
        identify_logs,
        parse_mapping,
        segment_figure_data,
        session_cautions,
    )
    from stillhook.outputs import check_out_dir, to_json, write_files
    project = load_project_arg(args.project) if args.project is not None else None
    if args.out is not None:
        check_out_dir(args.out, force=args.force)
    name = Path(args.log).name
    per_log = {k: {name: v} for k, v in (("rope", args.rope_length_m), ("mass", args.payload_mass_kg)) if v is not None}
    (result,) = identify_logs([args.log], envelope=project.envelope if project else None, window_s=args.window_s,
                              columns=parse_mapping(args.column, "--column", numbers=False),
                              scales=parse_mapping(args.scale, "--scale", numbers=True),
                              rope_lengths=per_log.get("rope"), payload_masses=per_log.get("mass"))
    data = identify_json(result)
    if args.out is not None:
        from stillhook.report.figures import figure_files

        figs = {f"segment_{i + 1}": segment_figure_data(name, i, s) for i, s in enumerate(result.segments)}
        files = {f"figures/{k}": v for k, v in figure_files(figs).items()}
        files["identify.json"] = to_json(data)
        write_files(args.out, files, force=args.force)
    if args.json:
        print_json(data)
        return 0
    _print(result, data, session_cautions(), args.out)
    return 0


def _print(result, data, cautions, out) -> None:
    log = result.log
    print(f"{log.name}: {log.time_s.size} samples at {log.sample_rate_hz:.4g} Hz (interval spread "
          f"{100 * log.jitter:.2g} % of the median), signals {', '.join(log.signals)}")
    rows = []
    for n, seg in enumerate(result.segments, start=1):
        for k, m in enumerate(seg.modes):
            label = str(seg.mode_numbers[k]) if seg.mode_numbers else "-"
            rows.append([n, f"{seg.start_s:g}-{seg.end_s:g}", "-" if seg.rope_length_m is None else
                         f"{seg.rope_length_m:.4g}", label, f"{m.frequency_hz:.6g}", f"{m.frequency_sd_hz:.2g}",
                         f"{m.damping_ratio:.4g}", f"{m.damping_ratio_sd:.2g}", f"{m.amplitude:.4g}", m.signal,
                         f"{seg.fit_rms_ratio:.3g}"])
    print(format_table(["seg", "time (s)", "rope (m)", "mode", "frequency (Hz)", "sd (Hz)", "damping ratio", "sd",
                        "amplitude", "signal", "fit rms ratio"], rows))
    print_bullets("Notes", data["notes"])
    print_bullets("Warnings", data["warnings"])
    if out is not None:
        print(f"\nwrote {out}/identify.json and {len(result.segments)} figure(s) in {out}/figures")
    print_bullets("Cautions", cautions)
