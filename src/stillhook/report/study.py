"""The design report: one self-contained HTML file, its figures (PNG, SVG) and a JSON file with all data.

:func:`build_study` runs the whole analysis of a project (modes, design, notch, comparison, envelope
sweep, firmware plan, figure data); :func:`report_files` turns a study into files; nothing is written
until :func:`write_report` hands every file to :func:`stillhook.outputs.write_files` at once.

Report folder::

    report.html            everything, figures embedded (no external resources)
    report.json            every table and every figure's data
    figures/<name>.png     the figures, also as .svg
"""

from __future__ import annotations

import hashlib
import time
from dataclasses import dataclass, field

from stillhook.cautions import CAUTIONS
from stillhook.errors import ConfigError, StillhookError
from stillhook.firmware.plan import plan_for_project, render_files
from stillhook.notch.design import notch_for_project
from stillhook.report import figure_data as plot_data
from stillhook.report.commissioning_section import commissioning_data
from stillhook.report.feedback_section import feedback_figures, feedback_json, feedback_study
from stillhook.shaping.envelope_design import design_for_project
from stillhook.study.compare import compare_project
from stillhook.study.move_check import check_design_on_move
from stillhook.study.sweep import sweep_project
from stillhook.version import __version__

__all__ = [
    "COMPARE_RTOL", "REPORT_GRID", "Study", "build_study", "check_grid", "figure_data", "firmware_summary",
    "report_json",
]

#: Grid of the report's envelope sweep (rope lengths x payload masses).
REPORT_GRID = (21, 21)
#: Integrator tolerance of the comparison's nonlinear runs: the table shows 3 digits, and at 1e-6
#: the metrics agree with 1e-8 runs to 4-5 digits on the demo, in a quarter of the time.
COMPARE_RTOL = 1e-6


@dataclass
class Study:
    """Everything the report shows, as objects. Optional parts are None with a reason in ``problems``."""

    project: object
    design: object | None = None
    move_check: object | None = None
    notch: object | None = None
    comparison: object | None = None
    sweep: object | None = None
    emit_plan: object | None = None
    firmware_files: dict | None = None
    selftest: dict | None = None
    feedback: dict | None = None
    commissioning: dict | None = None
    figures: dict = field(default_factory=dict)
    problems: dict = field(default_factory=dict)
    timings_s: dict = field(default_factory=dict)


def _step(study: Study, name: str, fn):
    """Run one stage; a StillhookError becomes a problem the report states instead of a crash."""
    t0 = time.perf_counter()
    try:
        return fn()
    except StillhookError as exc:
        study.problems[name] = str(exc)
        return None
    finally:
        study.timings_s[name] = time.perf_counter() - t0


def build_study(project, *, grid: tuple[int, int] = REPORT_GRID, distance_m: float | None = None,
                check: bool = True, progress=None) -> Study:
    """Run every analysis of the report on ``project``.

    Parameters
    ----------
    project : stillhook.project.Project
    grid : (int, int)
        Envelope sweep grid (rope lengths x payload masses).
    distance_m : float, optional
        Sweep move distance (default the project's ``[move] distance_m``); the sweep holds the rope length,
        the comparison and the time responses use the project's own move with hoisting.
    check : bool
        Nonlinear spot checks of the sweep at the envelope corners.
    progress : callable(str), optional
        Told the name of each stage as it starts.

    Raises
    ------
    StillhookError
        When the design itself fails (nothing to report); later stages that fail are reported as
        problems in the study instead.
    """
    def say(stage):
        if progress is not None:
            progress(stage)

    check_grid(grid)
    study = Study(project)
    say("design")
    t0 = time.perf_counter()
    study.design = design_for_project(project)  # without a design there is no report
    study.timings_s["design"] = time.perf_counter() - t0
    say("design on the project's move")
    study.move_check = _step(study, "move check", lambda: check_design_on_move(project, study.design.shaper))
    study.commissioning = _step(study, "commissioning", lambda: commissioning_data(project, study.design))
    say("notch")
    study.notch = _step(study, "notch", lambda: notch_for_project(project))
    say("comparison")
    study.comparison = _step(study, "comparison", lambda: compare_project(project, rtol=COMPARE_RTOL))
    say("sweep")
    keys = ("unshaped", "shaper", "schedule") + (("notch",) if study.notch is not None else ())
    study.sweep = _step(study, "sweep", lambda: sweep_project(project, grid=grid, distance_m=distance_m, keys=keys,
                                                              design=study.design, notch=study.notch, check=check))
    say("firmware")
    study.emit_plan = _step(study, "firmware", lambda: plan_for_project(project))
    if study.emit_plan is not None:
        study.firmware_files = render_files(study.emit_plan)
    if "feedback" in project.given_sections:
        say("feedback")
        study.feedback = _step(study, "feedback", lambda: feedback_study(project, study.design))
    say("figures")
    t0 = time.perf_counter()
    study.figures = figure_data(study)
    study.timings_s["figures"] = time.perf_counter() - t0
    return study


def check_grid(grid) -> tuple[int, int]:
    """The report's sweep grid as (n_rope, n_payload), each 2 to 401; ConfigError otherwise."""
    try:
        n_rope, n_payload = (int(v) for v in grid)
    except (TypeError, ValueError):
        raise ConfigError(f"grid = {grid!r}; allowed: two whole numbers (rope lengths, payload masses)") from None
    if not (2 <= n_rope <= 401 and 2 <= n_payload <= 401):
        raise ConfigError(f"grid = {n_rope} x {n_payload}; allowed: 2 to 401 points each way")
    return n_rope, n_payload


def figure_data(study: Study) -> dict:
    """``{name: figure data}`` of every figure the study can draw."""
    p, design, notch = study.project, study.design, study.notch
    figs = {"frequency_maps": plot_data.frequency_map_data(p),
            "sensitivity": plot_data.sensitivity_data(p, design, notch)}
    filters = {"shaper": (f"shaper {design.shaper.name}".strip(), design.shaper)}
    if notch is not None:
        filters["notch"] = ("notch", notch)
    figs["time_response"] = plot_data.time_response_data(p, filters)
    if study.sweep is not None and study.sweep.grid_shape is not None:
        figs["residual_maps"] = plot_data.residual_map_data(study.sweep)
    if study.feedback is not None:
        figs.update(feedback_figures(p, study.feedback))
    return figs


def firmware_summary(study: Study) -> dict | None:
    """Emitted files with sizes and SHA-256, the input digest, format and RAM/flash figures."""
    if study.emit_plan is None:
        return None
    plan = study.emit_plan
    files = []
    for name, text in sorted(study.firmware_files.items()):
        data = text.encode("utf-8") if isinstance(text, str) else text
        files.append({"name": name, "bytes": len(data), "sha256": hashlib.sha256(data).hexdigest()})
    return {"prefix": plan.prefix, "format": plan.fmt, "format_reason": plan.format_reason,
            "input_digest_sha256": plan.digest, "tool_version": __version__, "rows": len(plan.rows),
            "lookup_rule": plan.lookup_rule, "notch": plan.notch is not None, "sizes": plan.sizes(),
            "files": files}


def report_json(study: Study) -> dict:
    """Every table and figure of the report (deterministic key order)."""
    p = study.project
    env = p.envelope
    return {
        "tool": "stillhook", "tool_version": __version__, "project": p.name, "input_digest_sha256": p.digest,
        "envelope": env.describe(), "drive": dict(p.drive), "move": dict(p.move),
        "modes_nominal": [m.as_dict() for m in env.nominal_rig.modes()],
        "bands_hz": [list(b) for b in env.mode_bands_hz()],
        "design": study.design.as_dict() if study.design is not None else None,
        "design_on_move": study.move_check.as_dict() if study.move_check is not None else None,
        "notch": study.notch.as_dict() if study.notch is not None else None,
        "comparison": study.comparison.as_dict() if study.comparison is not None else None,
        "sweep": _sweep_json(study.sweep),
        "firmware": firmware_summary(study),
        "selftest": study.selftest,
        "feedback": feedback_json(study.feedback),
        "commissioning": study.commissioning,
        "problems": dict(sorted(study.problems.items())),
        "figures": study.figures,
        "cautions": list(CAUTIONS),
    }


def _sweep_json(sweep) -> dict | None:
    if sweep is None:
        return None
    d = sweep.as_dict()
    d.pop("points")  # the residual maps figure holds the grid values
    return d
