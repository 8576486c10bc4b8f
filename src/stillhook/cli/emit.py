"""``stillhook emit``: write the fixed-point C tables, runtime, self-test and manifest for a project, or
(``--target st``) IEC 61131-3 Structured Text function blocks, PLCopen XML, README and manifest for a PLC."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_out_arguments,
    add_project_argument,
    load_project_arg,
    print_cautions,
    print_json,
)

HELP = "generate fixed-point C for the drive (default) or IEC 61131-3 Structured Text for a PLC (--target st)"


EXAMPLES = """  stillhook emit demo --out sway_c
  stillhook emit my_crane.toml --target st --out plc_sway --format q31 --prefix trolley --force
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p)
    add_out_arguments(p, required=True, what="the C folder")
    p.add_argument("--target", choices=("c", "st"), default="c",
                   help="c: tables + portable C99 runtime + host self-test (default); st: IEC 61131-3 Structured "
                        "Text function blocks + PLCopen XML + README, same integers as the C runtime")
    p.add_argument("--format", choices=("q15", "q31"), default=None,
                   help="sample format; given here it is used as is (a notch that fails it is refused), "
                        "default [firmware] format (Q15 may move to Q31 for a notch)")
    p.add_argument("--prefix", metavar="NAME", default=None,
                   help="prefix of the C tables / ST blocks and of the file names (default [firmware] prefix, "
                        "'sway'; a C identifier starting with a letter, not a keyword, not starting with 'shk')")
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.checks import check_identifier
    from stillhook.firmware.plan import write_emit

    if args.prefix is not None:
        check_identifier("--prefix", args.prefix)
    project = load_project_arg(args.project)
    plan, written = write_emit(project, args.out, target=args.target, fmt=args.format, prefix=args.prefix,
                               force=args.force)
    sizes = plan.sizes()
    if args.json:
        from stillhook.cautions import CAUTIONS, FEEDBACK_CAUTIONS

        fb = plan.feedback is not None
        print_json({"out": str(args.out), "target": args.target, "files": sorted(p.name for p in written),
                    "format": plan.fmt, "format_reason": plan.format_reason, "rows": len(plan.rows),
                    "notch": plan.notch is not None, "sizes": sizes,
                    **({"feedback": plan.feedback_summary} if fb else {}),
                    "cautions": list(CAUTIONS) + (list(FEEDBACK_CAUTIONS) if fb else [])})
        return 0
    if args.target == "st":
        return _report_st(args, plan, written)
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
    _report_feedback(plan, "c")
    print_cautions()
    return 0


def _report_feedback(plan, target: str) -> None:
    """One line on the feedback block (C) or that the target lacks it (ST), and the feedback cautions."""
    if plan.feedback is None:
        return
    from stillhook.cautions import FEEDBACK_CAUTIONS
    from stillhook.cli._common import print_bullets

    fs = plan.feedback_summary
    if target == "c":
        print(f"feedback: {plan.feedback.n_rows} rows, {plan.feedback.n_obs} observer states, sensor "
              f"{fs['sensor_kind']} ({plan.prefix}_feedback.h/.c); worst closed-loop damping ratio "
              f"{fs['worst_closed_loop_damping_ratio']:.4g} ({'pass' if fs['passed'] else 'FAIL'})")
    else:
        print("note: the project has [feedback], but the feedback block is emitted for the C target only")
    print_bullets("Feedback cautions", FEEDBACK_CAUTIONS)


def _report_st(args: argparse.Namespace, plan, written) -> int:
    from stillhook.firmware.render_st import st_blocks, st_file_names

    names = st_file_names(plan)
    blocks = st_blocks(plan)
    print(f"wrote {len(written)} files to {args.out}")
    print(f"IEC 61131-3 Structured Text in {names['st']}, PLCopen XML in {names['xml']}; function blocks "
          + ", ".join(b.pou.name for b in blocks) + f", {plan.fmt.upper()}, for a {plan.cycle_s:g} s cyclic task")
    shaper = blocks[0].cost
    worst = max(shaper, key=lambda c: c["multiplies"])
    print(f"shaper: {len(plan.rows)} rows, ring {plan.shaper.ring_len} slots; worst row {worst['taps']} taps: "
          f"{worst['multiplies']} multiplies, {worst['divisions']} divisions, {worst['adds']} adds per cycle "
          f"(table per row in {names['readme']})")
    if plan.format_reason:
        print(f"note: {plan.format_reason}")
    _report_feedback(plan, "st")
    print_cautions()
    return 0
