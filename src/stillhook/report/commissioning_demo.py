"""The demo's commissioning step: identify the shipped logs, calibrate the demo project, say what it changed.

The logs were written by the nonlinear simulator for an invented "true" crane
(:mod:`stillhook.commission.demo_logs`); the demo then designs and emits from the calibrated project, and
the report compares the nominal and the calibrated design on that true crane.
"""

from __future__ import annotations

from dataclasses import dataclass

from stillhook.commission.demo_logs import demo_log_bytes, true_envelope
from stillhook.commission.logs import parse_log
from stillhook.commission.session import calibrate_logs, identify_json, segment_figure_data
from stillhook.outputs import to_json
from stillhook.project import demo_project_text, load_demo_project, project_from_bytes
from stillhook.report.commissioning_section import commissioning_data

__all__ = ["CALIBRATED_NAME", "DemoCommissioning", "commission_demo", "commissioning_files", "finish_study",
           "segment_figures"]

#: File name of the calibrated demo project (also the project's name in the report).
CALIBRATED_NAME = "demo_project_calibrated.toml"


@dataclass
class DemoCommissioning:
    """The nominal and calibrated projects, the fit, the calibrated file's text, the identified logs."""

    nominal: object
    project: object
    calibration: object
    text: str
    results: list
    logs: dict


def commission_demo() -> DemoCommissioning:
    """Identify the shipped demo logs and calibrate the demo project against them."""
    nominal = load_demo_project()
    logs = demo_log_bytes()
    parsed = [parse_log(raw, name) for name, raw in logs.items()]
    cal, text, results = calibrate_logs(nominal, demo_project_text(), parsed)
    project = project_from_bytes(text.encode("utf-8"), CALIBRATED_NAME)
    return DemoCommissioning(nominal, project, cal, text, results, logs)


def finish_study(study, demo: DemoCommissioning) -> None:
    """Add the commissioning numbers on the true crane and the segment figures to the calibrated project's study."""
    study.commissioning = commissioning_data(demo.project, study.design,
                                             true_envelope=true_envelope(demo.nominal.envelope))
    study.figures.update(segment_figures(demo))


def segment_figures(demo: DemoCommissioning) -> dict:
    """``{name: figure data}``: measured against fitted sway of every identified segment of every log."""
    figures = {}
    for r in demo.results:
        for i, seg in enumerate(r.segments):
            stem = r.log.name.removesuffix(".csv")
            figures[f"sway_fit_{stem}_{i + 1}"] = segment_figure_data(r.log.name, i, seg)
    return figures


def commissioning_files(demo: DemoCommissioning) -> dict[str, str | bytes]:
    """``commissioning/``: the logs, each log's identification JSON, the fit and the calibrated project."""
    files: dict[str, str | bytes] = {f"commissioning/logs/{name}": raw for name, raw in demo.logs.items()}
    for r in demo.results:
        files[f"commissioning/identify_{r.log.name.removesuffix('.csv')}.json"] = to_json(identify_json(r))
    files["commissioning/calibration.json"] = to_json(demo.calibration.as_dict())
    files[f"commissioning/{CALIBRATED_NAME}"] = demo.text
    return files
