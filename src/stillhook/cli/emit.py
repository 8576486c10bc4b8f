"""``stillhook emit``: write the fixed-point C tables, runtime, self-test and manifest for a project."""

from __future__ import annotations

import argparse

from stillhook.cli._common import add_json_argument, add_project_argument, print_json

HELP = "generate fixed-point C (tables, portable runtime, host self-test, manifest) for the drive"


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    p.add_argument("--out", required=True, metavar="DIR",
                   help="output folder (created; files are written all at once or not at all)")
    p.add_argument("--format", choices=("q15", "q31"), default=None,
                   help="sample format; given here it is used as is (a notch that fails it is refused), "
                        "default [firmware] format (Q15 may move to Q31 for a notch)")
    p.add_argument("--prefix", metavar="NAME", default=None,
                   help="C prefix of the tables and file names (default [firmware] prefix, 'sway')")
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.firmware.plan import write_emit
    from stillhook.project import load_project_or_demo

    project = load_project_or_demo(args.project)
    plan, written = write_emit(project, args.out, fmt=args.format, prefix=args.prefix)
    sizes = plan.sizes()
    if args.json:
        print_json({"out": str(args.out), "files": sorted(p.name for p in written), "format": plan.fmt,
                    "format_reason": plan.format_reason, "rows": len(plan.rows),
                    "notch": plan.notch is not None, "sizes": sizes,
                    **({"feedback": plan.feedback_summary} if plan.feedback is not None else {})})
        return 0
    print(f"wrote {len(written)} files to {args.out}")
    print(f"format {plan.fmt.upper()}, drive cycle {plan.cycle_s:g} s, {len(plan.rows)} shaper rows over "
          f"{plan.rows[0].rope_length_m:g} .. {plan.rows[-1].rope_length_m:g} m rope"
          + (f", notch {plan.notch.table.n_stages} stages" if plan.notch is not None else ""))
    if plan.format_reason:
        print(f"note: {plan.format_reason}")
    print(f"RAM {sizes['ram_bytes']} bytes of buffers (budget {sizes['ram_budget_bytes']}), "
          f"flash {sizes['flash_table_bytes']} bytes of tables")
    print(f"check on the host: cd {args.out} && cc -std=c99 -o {plan.prefix}_selftest {plan.prefix}_selftest.c "
          f"{plan.prefix}_tables.c shk_*.c && ./{plan.prefix}_selftest")
    if plan.feedback is not None:
        from stillhook.cautions import FEEDBACK_CAUTIONS
        from stillhook.cli._common import print_bullets

        fs = plan.feedback_summary
        print(f"feedback: {plan.feedback.n_rows} rows, {plan.feedback.n_obs} observer states, sensor "
              f"{fs['sensor_kind']} ({plan.prefix}_feedback.h/.c); worst closed-loop damping ratio "
              f"{fs['worst_closed_loop_damping_ratio']:.4g} ({'pass' if fs['passed'] else 'FAIL'})")
        print_bullets("Feedback cautions", FEEDBACK_CAUTIONS)
    return 0
