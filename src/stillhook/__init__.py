"""stillhook: two-mode sway models, command shapers, notch filters and fixed-point C for crane loads.

The package is grouped by the stage of the job, in data-flow order (see DEVELOPERS.md)::

    project  ->  model  ->  sim  ->  shaping / notch  ->  firmware / study / commission  ->  report  ->  cli

This top level offers the names a user scripts with, loaded lazily on first use so that
``import stillhook`` stays cheap (no scipy, matplotlib or python-control until needed).
"""

from __future__ import annotations

import importlib

from stillhook.version import __version__

#: name -> module that defines it, grouped by stage (each resolves; tests/base/test_api.py checks).
_API = {
    # project file and cautions
    "load_project": "stillhook.project", "load_demo_project": "stillhook.project",
    "load_project_or_demo": "stillhook.project", "project_from_dict": "stillhook.project",
    "Project": "stillhook.project", "CAUTIONS": "stillhook.cautions",
    # errors
    "StillhookError": "stillhook.errors", "ConfigError": "stillhook.errors", "RigError": "stillhook.errors",
    "DesignError": "stillhook.errors", "EmitError": "stillhook.errors", "InputFileError": "stillhook.errors",
    # model
    "Rig": "stillhook.model.rig", "Envelope": "stillhook.model.envelope",
    "mode_frequencies_rad_s": "stillhook.model.rig",
    # motion and simulation
    "trapezoid": "stillhook.sim.profiles", "s_curve": "stillhook.sim.profiles",
    "project_move": "stillhook.sim.profiles", "simulate": "stillhook.sim.dynamics",
    "SimResult": "stillhook.sim.dynamics", "CommandFilter": "stillhook.sim.command_filter",
    # shaping
    "Shaper": "stillhook.shaping.shaper", "residual_vibration": "stillhook.shaping.shaper",
    "zv": "stillhook.shaping.closed_forms", "zvd": "stillhook.shaping.closed_forms",
    "ei": "stillhook.shaping.closed_forms", "umzv": "stillhook.shaping.closed_forms",
    "band_shaper": "stillhook.shaping.band_design", "two_mode_shapers": "stillhook.shaping.band_design",
    "design_for_project": "stillhook.shaping.envelope_design",
    "schedule_for_project": "stillhook.shaping.envelope_design",
    "clear_design_caches": "stillhook.shaping.design_cache",
    # notch
    "design_notches": "stillhook.notch.design", "notch_for_project": "stillhook.notch.design",
    "NotchDesign": "stillhook.notch.cascade",
    # firmware
    "plan_for_project": "stillhook.firmware.plan", "render_files": "stillhook.firmware.plan",
    "write_emit": "stillhook.firmware.plan",
    # study
    "compare_project": "stillhook.study.compare", "sweep_project": "stillhook.study.sweep",
    # commissioning
    "read_log": "stillhook.commission.logs", "identify_log": "stillhook.commission.identify",
    "calibrate": "stillhook.commission.calibrate", "calibrate_logs": "stillhook.commission.session",
    # report
    "build_study": "stillhook.report.study", "write_report": "stillhook.report.folder",
    "run_demo": "stillhook.report.demo",
}

__all__ = ["__version__", *_API]


def __getattr__(name: str):
    """Load an API name from its stage module on first use (PEP 562)."""
    try:
        module = _API[name]
    except KeyError:
        raise AttributeError(f"module 'stillhook' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
