"""``stillhook report``: the design report (one self-contained HTML page, its figures and a JSON file)."""

from __future__ import annotations

import argparse
import sys

from stillhook.cli._common import (
    add_json_argument,
    add_out_arguments,
    add_project_argument,
    add_quantity_option,
    load_project_arg,
    print_json,
)

HELP = "write the design report: report.html (self-contained), report.json and figures/ (PNG, SVG)"


EXAMPLES = """  stillhook report demo --out demo_report
  stillhook report my_crane.toml --out report --grid 11 11 --no-check --force
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_out_arguments(p, required=True, what="the report folder")
    add_quantity_option(p, "--grid", "grid_points", "envelope sweep grid, rope lengths x payload masses "
                        "(default 21 21, at most 1000 each)", nargs=2, metavar=("NL", "NM"))
    add_quantity_option(p, "--distance-m", "distance_m", "travel distance of the envelope sweep's move (m, "
                        "default: [move] distance_m); the comparison uses the project's own move")
    p.add_argument("--no-check", action="store_true",
                   help="skip the sweep's nonlinear spot checks at the envelope corners")
    add_json_argument(p)


def stage_printer(enabled: bool):
    """A progress callback printing each stage on stderr, or None."""
    if not enabled:
        return None

    def say(stage: str) -> None:
        sys.stderr.write(f"  ... {stage}\n")
        sys.stderr.flush()

    return say


def run(args: argparse.Namespace) -> int:
    from stillhook.report.folder import write_report
    from stillhook.report.study import REPORT_GRID

    project = load_project_arg(args.project)
    grid = tuple(args.grid) if args.grid else REPORT_GRID
    study, written = write_report(project, args.out, grid=grid, distance_m=args.distance_m, check=not args.no_check,
                                  force=args.force,
                                  progress=stage_printer(not args.json and sys.stderr.isatty()))
    names = sorted(str(p.relative_to(args.out)) for p in written)
    if args.json:
        print_json({"out": str(args.out), "files": names, "problems": dict(sorted(study.problems.items()))})
        return 0
    print(f"wrote {len(names)} files to {args.out}: report.html (open it in a browser), report.json, figures/")
    for stage, msg in sorted(study.problems.items()):
        print(f"note: {stage}: {msg}")
    return 0
