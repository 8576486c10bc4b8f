"""``stillhook demo``: the whole job on the built-in demo project, into one folder."""

from __future__ import annotations

import argparse
import sys

HELP = ("run the whole job on the built-in demo project: commissioning logs identified and calibrated, modes, "
        "design, comparison, envelope sweep, firmware (C + self-test), report")

_DEFAULT_OUT = "stillhook-demo"


EXAMPLES = """  stillhook demo
  stillhook demo --out /tmp/demo --grid 11 11 --force --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    from stillhook.cli._common import add_json_argument, add_out_arguments, add_quantity_option

    add_out_arguments(p, required=False, default=_DEFAULT_OUT, what="report.html and firmware/ go here")
    add_quantity_option(p, "--grid", "grid_points", "envelope sweep grid, rope lengths x payload masses "
                        "(default 21 21, at most 1000 each)", nargs=2, metavar=("NL", "NM"))
    p.add_argument("--no-selftest", action="store_true",
                   help="do not compile and run the emitted C self-test")
    add_json_argument(p)


def _summary(result, out: str) -> list[str]:
    from stillhook.cautions import CAUTIONS
    from stillhook.study.ranking import rank_designs, ranking_sentence

    st = result.study
    p = st.project
    env = p.envelope
    rig = env.nominal_rig
    lines = [f"stillhook demo: project {p.name} (an invented crane), drive cycle {p.drive['cycle_s']:g} s"]
    lines += _commissioning_lines(result, out)
    modes = ", ".join(f"{m.frequency_hz:.3g} Hz" for m in rig.modes())
    bands = ", ".join(f"{lo:.3g}-{hi:.3g} Hz" for lo, hi in env.mode_bands_hz())
    lines.append(f"1 modes      nominal rig ({env.nominal_rope_length_m:g} m rope, {rig.payload_mass_kg:g} kg): "
                 f"{modes}; "
                 f"bands over the envelope: {bands}")
    d = st.design
    sched = f", length schedule of {len(d.schedule.shapers)} rows" if d.schedule is not None else ""
    lines.append(f"2 design     shaper {d.shaper.name} ({d.shaper.duration_s:.3g} s){sched}")
    lines.append(f"             why: {d.reason}")
    if st.move_check is not None:
        lines.append(f"             {st.move_check.sentence()}")
    if st.comparison is not None:
        c = st.comparison
        cells = [f"{r.method} {r.residual_pct:.3g} %"
                 + ("" if r.added_delay_s is None else f" +{r.added_delay_s:.3g} s") for r in c.rows]
        lines.append("3 comparison residual sway on the project's move (% of unshaped, + time added): "
                     + ", ".join(cells))
        ranked = rank_designs([(r.method, r.label, r.residual_pct / 100.0, r.added_delay_s) for r in c.rows
                               if r.method != "unshaped"], c.tolerance)
        lines.append(f"             {ranking_sentence(ranked, c.tolerance)}")
        if c.cancelled_sway is not None:
            lines.append(f"             {c.cancelled_sway}")
    if st.sweep is not None:
        tol = 100 * st.sweep.tolerance
        cells = [f"{s['label']}: {100 * s['share_within_tolerance']:.1f} % (worst {100 * s['worst_ratio']:.3g} %)"
                 for k, s in st.sweep.summary().items() if k != "unshaped"]
        g = st.sweep.grid_shape
        lines.append(f"4 sweep      {g[0]} x {g[1]} rigs within {tol:g} % of unshaped: " + "; ".join(cells))
        summary = st.sweep.summary()
        ranked = rank_designs([(k, s["label"], s["worst_ratio"], s["added_s"]) for k, s in summary.items()
                               if k != "unshaped"], st.sweep.tolerance)
        lines.append(f"             {ranking_sentence(ranked, st.sweep.tolerance)}")
    for stage, msg in sorted(st.problems.items()):
        lines.append(f"  note       {stage}: {msg}")
    plan = st.emit_plan
    sz = plan.sizes()
    lines.append(f"5 firmware   {len(st.firmware_files)} files in {out}/firmware ({plan.fmt.upper()}, {len(plan.rows)} "
                 f"rows, RAM {sz['ram_bytes']} B, tables {sz['flash_table_bytes']} B), input digest "
                 f"{plan.digest[:16]}...")
    lines.append(f"             self-test: {result.selftest['summary']}")
    lines.append(f"6 report     {out}/report.html (self-contained; figures also in {out}/figures, data in "
                 f"{out}/report.json)")
    lines.append(f"done in {result.timings_s['total']:.1f} s")
    lines.append("Cautions:")
    if result.commissioning is not None:
        from stillhook.commission.project_file import CALIBRATION_CAUTION

        lines.append(f"  - {CALIBRATION_CAUTION}")
    lines.extend(f"  - {c}" for c in CAUTIONS)
    return lines


def _commissioning_lines(result, out: str) -> list[str]:
    demo, c = result.commissioning, result.study.commissioning
    if demo is None or c is None:
        return []
    cal = demo.calibration
    fitted = ", ".join(f"{k} {cal.nominal[k]:.4g} -> {cal.values[k]:.4g} +- {cal.sds[k]:.2g}"
                       for k in cal.values if cal.sds[k] is not None)
    lines = [f"0 commission {len(demo.results)} logs identified ({len(cal.observations)} mode frequencies); "
             f"calibrated: {fitted}"]
    for model, by_design in c["residuals"].items():
        cells = [f"{name} worst {r['worst_pct']:.3g} % ({r['share_within_tolerance_pct']:.3g} % of rigs within "
                 f"{c['tolerance_pct']:g} %)" for name, r in by_design.items()]
        lines.append(f"             on the {model}: " + "; ".join(cells))
    lines.append(f"             everything below is made from {out}/commissioning/{demo.project.name}.toml")
    return lines


def run(args: argparse.Namespace) -> int:
    from stillhook.cli.report import stage_printer
    from stillhook.report.demo import run_demo

    result = run_demo(args.out, grid=tuple(args.grid) if args.grid else None, selftest=not args.no_selftest,
                      progress=stage_printer(sys.stderr.isatty()), force=args.force)
    if args.json:
        from stillhook.cautions import CAUTIONS
        from stillhook.cli._common import print_json

        print_json({"out": str(args.out), "files": sorted(str(p.relative_to(args.out)) for p in result.written),
                    "selftest": result.selftest, "problems": dict(sorted(result.study.problems.items())),
                    "summary": _summary(result, args.out)[:-len(CAUTIONS) - 2], "cautions": list(CAUTIONS)})
    else:
        print("\n".join(_summary(result, args.out)))
    return 0 if result.selftest.get("passed") is not False else 1
