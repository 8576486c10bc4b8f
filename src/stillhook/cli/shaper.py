"""``stillhook shaper``: a command shaper from a method and frequencies, or the design for a project."""

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
    print_json,
    say_progress,
)

HELP = "design a command shaper (ZV, ZVD, ZVDD, EI, two/three-hump EI, UM-ZV, band, two-mode) or a project's"

METHODS = ("zv", "zvd", "zvdd", "ei", "ei2", "ei3", "umzv", "band")


EXAMPLES = """  stillhook shaper demo
  stillhook shaper --method band --band-hz 0.2 0.35 --tolerance-pct 5 --cycle-s 0.005 --json
"""


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p, optional=True)
    p.add_argument("--method", choices=METHODS, help="shaper method (without a project)")
    add_quantity_option(p, "--frequency-hz", "frequency_hz", "mode frequency (Hz); repeat for a two-mode shaper",
                        action="append")
    add_quantity_option(p, "--damping-ratio", "damping_ratio", "damping ratio (0 to 0.7, default 0)")
    add_quantity_option(p, "--tolerance-pct", "tolerance_pct", "residual vibration tolerance (%%, 0 < PCT < 100, "
                        "default 5)")
    add_quantity_option(p, "--band-hz", "band_edge_hz", "frequency band (Hz, LO < HI): the band to cover (method "
                        "band; repeat for a second mode) or to report the worst vibration over (other methods)",
                        nargs=2, action="append")
    add_quantity_option(p, "--cycle-s", "cycle_s", "drive cycle (s): put the shaper on whole cycles and report the "
                        "effect")
    p.add_argument("--remedy", choices=("resolve", "split", "round"), default="resolve",
                   help="how impulses are put on the drive cycle (default resolve: amplitudes re-solved on the grid)")
    add_json_argument(p)


def _options_given(args) -> list[str]:
    names = ("method", "frequency_hz", "damping_ratio", "tolerance_pct", "band_hz", "cycle_s")
    return ["--" + n.replace("_", "-") for n in names if getattr(args, n) is not None]


def run(args: argparse.Namespace) -> int:
    from stillhook.errors import ConfigError

    if args.project is not None:
        given = _options_given(args)
        if given:
            raise ConfigError(f"give a project file or shaper options ({', '.join(given)}), not both; "
                              "the project's [design] and [drive] sections set the method, tolerance and cycle")
        return _run_project(args)
    if args.method is None:
        raise ConfigError("missing --method; allowed: " + ", ".join(METHODS) + " (or give a project file)")
    from stillhook.cautions import CAUTIONS
    from stillhook.shaping.request import shaper_request

    out = shaper_request(method=args.method, freqs_hz=args.frequency_hz or [], bands_hz=args.band_hz or [],
                         damping_ratio=0.0 if args.damping_ratio is None else args.damping_ratio,
                         tolerance_pct=5.0 if args.tolerance_pct is None else args.tolerance_pct,
                         cycle_s=args.cycle_s, remedy=args.remedy)
    if args.json:
        print_json({**out, "cautions": list(CAUTIONS)})
        return 0
    _print_request(out)
    print_cautions()
    return 0


def _pct(v) -> str:
    return "-" if v is None else f"{100 * v:.3g} %"


def _print_impulses(impulses) -> None:
    with_delay = impulses and "delay_cycles" in impulses[0]
    headers = ["#", "time s", "amplitude"] + (["delay cycles"] if with_delay else [])
    rows = [[i + 1, r["time_s"], r["amplitude"]] + ([r["delay_cycles"]] if with_delay else [])
            for i, r in enumerate(impulses)]
    print(format_table(headers, rows, floatfmt=".6g"))


def _print_request(out: dict) -> None:
    print(f"Shaper {out['name']}: {len(out['impulses'])} impulses, duration {out['duration_s']:.6g} s, "
          f"damping {out['damping_ratio']:g}, tolerance {100 * out['tolerance']:g} %")
    if out["overshoots_command"]:
        lo, hi = out["speed_range_factor"]
        print(f"WARNING: negative impulses: the shaped speed spans {lo:g} to {hi:g} times the commanded speed and "
              f"acceleration up to {out['command_gain']:g} times; the drive needs that margin.")
    _print_impulses(out["impulses"])
    if out["modes"]:
        print("\nAt the design frequencies:")
        print(format_table(["freq Hz", "V", "insensitive lo Hz", "insensitive hi Hz", "width (of f)"],
                           [[m["frequency_hz"], _pct(m["vibration"]), m["insensitive_band_hz"][0],
                             "unbounded" if m["insensitive_band_hz"][1] is None else m["insensitive_band_hz"][1],
                             "unbounded" if m["insensitivity_width"] is None else m["insensitivity_width"]]
                            for m in out["modes"]]))
    if out["bands"]:
        print("\nWorst vibration over the bands:")
        print(format_table(["lo Hz", "hi Hz", "worst V", "at Hz"],
                           [[b["lo_hz"], b["hi_hz"], _pct(b["worst_vibration"]), b["worst_at_hz"]]
                            for b in out["bands"]]))
    if out.get("two_mode"):
        tm = out["two_mode"]
        print(f"\nTwo-mode designs at equal coverage: direct {tm['direct']['duration_s']:.6g} s "
              f"({len(tm['direct']['impulses'])} impulses), convolved {tm['convolved']['duration_s']:.6g} s "
              f"({len(tm['convolved']['impulses'])} impulses)")
    dc = out.get("drive_cycle")
    if dc:
        print(f"\nDrive cycle {dc['cycle_s']:g} s: vibration at the design frequencies after each remedy")
        rows = [[k, dc[k]["duration_s"], dc[k]["n_impulses"], ", ".join(_pct(v) for v in dc[k]["vibration_at_design"]),
                 "-" if dc[k]["worst_in_bands"] is None else ", ".join(_pct(v) for v in dc[k]["worst_in_bands"])]
                for k in ("original", "round", "split", "resolve")]
        print(format_table(["remedy", "duration s", "impulses", "V at design", "worst V in bands"], rows))
        print(f"On the grid ({dc['remedy']}):")
        _print_impulses(dc["impulses"])


def _design_progress(project):
    """Say the work up front, then draw a one-line bar on stderr as the design's stages finish."""
    from stillhook.shaping.envelope_design import schedule_row_count

    rows = schedule_row_count(project)
    sys.stderr.write(f"shaper: designing the envelope shaper{f' and {rows} schedule rows' if rows else ''} ...\n")

    def draw(done: int, total: int) -> None:
        filled = int(30 * done / max(total, 1))
        sys.stderr.write(f"\rdesign [{'#' * filled}{'.' * (30 - filled)}] {done}/{total} stages")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()
    return draw


def _run_project(args) -> int:
    from stillhook.cautions import CAUTIONS
    from stillhook.shaping.envelope_design import design_for_project
    from stillhook.study.move_check import check_design_on_move

    project = load_project_arg(args.project)
    d = design_for_project(project, progress=_design_progress(project) if not args.json and sys.stderr.isatty()
                           else None)
    say_progress("checking the design on the project's move (nonlinear, nominal rig and envelope corners)")
    check = check_design_on_move(project, d.shaper)
    out = {"project": project.name, "digest": project.digest, **d.as_dict(), "move_check": check.as_dict(),
           "cautions": list(CAUTIONS)}
    if args.json:
        print_json(out)
        return 0
    print(f"Shaper design for {project.name}: method {d.method}, tolerance {100 * d.tolerance:g} %, "
          f"drive cycle {d.cycle_s:g} s, damping {d.damping_ratio:g}")
    print(format_table(["mode", "lowest Hz", "highest Hz"],
                       [[i + 1, lo, hi] for i, (lo, hi) in enumerate(d.bands_hz)]))
    print(f"\n{d.reason}.")
    print(f"\nEnvelope shaper {d.shaper.name}: {d.shaper.n_impulses} impulses, {d.shaper.duration_s:.6g} s"
          + (f" (convolved alternative {d.convolved.duration_s:.6g} s)" if d.convolved is not None else ""))
    _print_impulses(d.shaper.as_dict(d.cycle_s)["impulses"])
    print(f"Worst residual payload sway over the envelope: {_pct(d.worst_ratio)} of unshaped "
          f"(rope {d.worst_at[0]:.4g} m, payload {d.worst_at[1]:.5g} kg); worst V per mode: "
          + ", ".join(_pct(v) for v in d.worst_vibration))
    if d.schedule is not None:
        from stillhook.model.lookup import rule_words

        s = d.schedule
        print(f"\nLength schedule ({s.reason}; lookup: {rule_words(s.lookup_rule)}):")
        print(format_table(["row", "rope m", "serves from m", "to m", "duration s", "impulses", "high mode"],
                           [[i + 1, float(L), a, b, sh.duration_s, sh.n_impulses, "yes" if h else "no"]
                            for i, (L, sh, h, (a, b)) in enumerate(zip(s.rope_lengths_m, s.shapers,
                                                                       s.high_mode_treated, s.row_spans_m(),
                                                                       strict=True))]))
        print(f"Worst residual payload sway with the schedule: {_pct(d.schedule_worst_ratio)} of unshaped")
    print("\nMeets the tolerance over the envelope (linear model, rope held): "
          + ("yes" if d.meets_tolerance else "NO"))
    sentence = check.sentence()
    print(sentence[:1].upper() + sentence[1:] + ".")
    if not check.holds:
        print("WARNING: the design misses its tolerance on the project's own move; treat the tolerance above as "
              "not met there (hoisting during travel shifts the sway frequencies).")
    print_cautions()
    return 0
