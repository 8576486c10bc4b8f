"""``stillhook calibrate``: fit the project's rig to sway logs and write the calibrated project file."""

from __future__ import annotations

import argparse

from stillhook.cli._common import add_json_argument, format_table, print_bullets, print_json
from stillhook.cli.identify import add_log_options

HELP = ("fit hook mass, rigging length, rope offset and damping to sway logs; write the calibrated "
        "project file")


EXAMPLES = """  stillhook calibrate demo log_1.csv log_2.csv --out calibrated.toml
  stillhook calibrate my_crane.toml sway_*.csv --out my_crane_calibrated.toml --free hook_mass_kg,damping_ratio --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("project", metavar="PROJECT.toml", help="project file ('demo' for the built-in one)")
    p.add_argument("logs", nargs="+", metavar="LOG.csv", help="sway logs (time_s, a sway signal, rope_length_m)")
    p.add_argument("--out", required=True, metavar="CALIBRATED.toml", help="calibrated project file to write")
    p.add_argument("--force", action="store_true", help="replace --out when it exists")
    p.add_argument("--free", metavar="KEYS", default=None,
                   help="comma-separated parameters to fit (default hook_mass_kg,rigging_length_m,"
                        "rope_offset_m,damping_ratio); the rest keep the project's values")
    p.add_argument("--rope-length-m", action="append", metavar="[LOG=]M", default=[],
                   help="rope length of a log without a rope_length_m column (LOG=M for one log); repeatable")
    p.add_argument("--payload-mass-kg", action="append", metavar="[LOG=]KG", default=[],
                   help="payload mass of a log without a payload_mass_kg column (default: the project's "
                        "nominal payload); repeatable")
    add_log_options(p)
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from stillhook.cli._common import load_project_arg
    from stillhook.commission.session import (
        calibrate_logs,
        parse_free,
        parse_mapping,
        parse_per_log,
        session_cautions,
    )
    from stillhook.outputs import check_out_file, write_file
    from stillhook.project import demo_project_text

    out = check_out_file(args.out, force=args.force)
    project = load_project_arg(args.project)
    text = demo_project_text() if args.project == "demo" else Path(args.project).read_text(encoding="utf-8-sig")
    names = [Path(p).name for p in args.logs]
    cal, calibrated, results = calibrate_logs(
        project, text, args.logs, free=parse_free(args.free),
        columns=parse_mapping(args.column, "--column", numbers=False),
        scales=parse_mapping(args.scale, "--scale", numbers=True),
        rope_lengths=parse_per_log(args.rope_length_m, "--rope-length-m", names, lo=0.0, lo_ok=False),
        payload_masses=parse_per_log(args.payload_mass_kg, "--payload-mass-kg", names, lo=0.0, lo_ok=True))
    write_file(out, calibrated, force=args.force)
    notes = [n for r in results for n in r.notes] + cal.notes
    warnings = [w for r in results for w in r.log.warnings]
    if args.json:
        print_json({**cal.as_dict(), "out": str(out), "logs": [{"log": r.log.name, "sha256": r.log.sha256}
                                                                 for r in results],
                    "notes": notes, "warnings": warnings, "cautions": session_cautions()})
        return 0
    _print(cal, notes, warnings, out)
    return 0


def _print(cal, notes, warnings, out) -> None:
    rows = [[k, f"{cal.nominal[k]:.6g}", f"{cal.values[k]:.6g}", "-" if cal.sds[k] is None else f"{cal.sds[k]:.2g}",
             "fitted" if cal.free[k] else "fixed"] for k in cal.values]
    print(format_table(["parameter", "before", "calibrated", "sd", ""], rows))
    c = cal.correlation
    pairs = [f"{a} / {c['parameters'][j]}: {c['matrix'][i][j]:.3f}" for i, a in enumerate(c["parameters"])
             for j in range(i + 1, len(c["parameters"]))]
    print_bullets("Correlations", pairs)
    rows = [[o.log, f"{o.rope_length_m:.4g}", f"{o.payload_mass_kg:.4g}", o.mode, f"{o.measured_hz:.6g}",
             f"{p:.6g}", f"{(p - o.measured_hz) / o.measured_sd_hz:+.2g}"]
            for o, p in zip(cal.observations, cal.predicted_hz, strict=True)]
    print()
    print(format_table(["log", "rope (m)", "payload (kg)", "mode", "measured (Hz)", "predicted (Hz)",
                        "(pred - meas) / sd"], rows))
    chi2 = "n/a" if cal.chi2_reduced is None else f"{cal.chi2_reduced:.3g}"
    print(f"reduced chi-square {chi2} (sds are scaled by its square root when it exceeds 1)")
    print_bullets("Notes", notes)
    print_bullets("Warnings", warnings)
    print(f"\nwrote {out}: design, compare, emit and report read it like any project")
    from stillhook.commission.session import session_cautions

    print_bullets("Cautions", session_cautions())
