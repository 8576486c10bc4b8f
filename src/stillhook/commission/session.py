"""A commissioning session: logs in, identified modes and a calibrated project out (what the CLI runs).

:func:`identify_logs` reads and identifies each log; :func:`calibrate_logs` fits the project to them and
returns the calibrated project's text. Per-log values (rope length, payload mass) come from the log's
column first, then from the options (``FILE=VALUE`` or one ``VALUE`` for all), then (payload mass only)
the project's nominal payload mass, said in a note.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from stillhook.cautions import CAUTIONS
from stillhook.checks import finite_number
from stillhook.commission.calibrate import PARAMETERS, calibrate, observations_from_segments
from stillhook.commission.identify import identify_log
from stillhook.commission.logs import LOG_COLUMNS, SwayLog, read_log
from stillhook.commission.project_file import CALIBRATION_CAUTION, calibrated_project_text
from stillhook.errors import ConfigError

__all__ = [
    "FIGURE_POINTS", "LogResult", "calibrate_logs", "identify_json", "identify_logs", "parse_free",
    "parse_mapping", "parse_per_log", "segment_figure_data", "session_cautions",
]

#: Points per series at most in a fit figure (the record is thinned evenly for drawing only).
FIGURE_POINTS = 1500


@dataclass
class LogResult:
    """One log and its identified segments, with the notes about where values came from."""

    log: object
    segments: list
    notes: list = field(default_factory=list)


def session_cautions() -> list[str]:
    """The calibration caution, then stillhook's cautions."""
    return [CALIBRATION_CAUTION, *CAUTIONS]


def parse_mapping(items, option: str, *, numbers: bool) -> dict:
    """``["NAME=VALUE", ...]`` of ``--column``/``--scale`` as a dict (values as floats when ``numbers``)."""
    out = {}
    for item in items or ():
        name, sep, value = item.partition("=")
        if not sep or not name or not value:
            raise ConfigError(f"{option} {item!r} is not NAME=VALUE; NAME one of: {', '.join(LOG_COLUMNS)}")
        if name not in LOG_COLUMNS:
            raise ConfigError(f"{option} {item!r}: {name!r} is not a log column; allowed: {', '.join(LOG_COLUMNS)}")
        out[name] = (finite_number(f"{option} {name}", value, allowed="a finite number, not 0")
                     if numbers else value)
        if numbers and out[name] == 0.0:
            raise ConfigError(f"{option} {item!r}: a scale of 0 wipes the signal; allowed: a finite number, not 0")
    return out


def parse_per_log(items, option: str, names: list[str], *, lo: float, lo_ok: bool) -> dict:
    """``["FILE=VALUE" or "VALUE", ...]`` as ``{file name: value}`` (a bare VALUE applies to every log)."""
    out = {}
    for item in items or ():
        name, sep, value = item.rpartition("=")
        targets = names if not sep else [name]
        if sep and name not in names:
            raise ConfigError(f"{option} {item!r}: {name!r} is not one of the logs given ({', '.join(names)})")
        v = finite_number(option, value, allowed=f"a finite number {'>=' if lo_ok else '>'} {lo:g}", lo=lo,
                          lo_ok=lo_ok)
        out.update({n: v for n in targets})
    return out


def parse_free(text: str | None) -> tuple[str, ...]:
    """``--free`` as a tuple of PARAMETERS keys (default all)."""
    if text is None:
        return PARAMETERS
    keys = tuple(k.strip() for k in text.split(",") if k.strip())
    bad = [k for k in keys if k not in PARAMETERS]
    if bad or not keys:
        raise ConfigError(f"--free {text!r}: {', '.join(bad) or 'empty'}; allowed: a comma-separated subset of "
                          + ", ".join(PARAMETERS))
    return keys


def identify_logs(paths, *, envelope=None, window_s=None, columns=None, scales=None, rope_lengths=None,
                  payload_masses=None) -> list[LogResult]:
    """Read and identify every log (paths or SwayLog objects; ``rope_lengths``/``payload_masses``: ``{file name:
    value}``)."""
    out = []
    for path in paths:
        log = path if isinstance(path, SwayLog) else read_log(path, columns, scales)
        notes = []
        m = (payload_masses or {}).get(log.name)
        if "payload_mass_kg" not in log.columns and m is None and envelope is not None:
            m = envelope.nominal_payload_mass_kg
            notes.append(f"{log.name}: no payload_mass_kg column or option; the project's nominal {m:g} kg is used")
        segs = identify_log(log, envelope=envelope, window_s=window_s,
                            rope_length_m=(rope_lengths or {}).get(log.name), payload_mass_kg=m)
        out.append(LogResult(log, segs, notes + [n for s in segs for n in s.notes]))
    return out


def identify_json(result: LogResult) -> dict:
    """``{"segments": [...]}`` as the issue gives it, with the log, its notes, warnings and the cautions."""
    log = result.log
    return {"log": log.name, "sha256": log.sha256, "sample_rate_hz": log.sample_rate_hz, "jitter": log.jitter,
            "segments": [s.as_dict() for s in result.segments], "notes": list(result.notes),
            "warnings": list(log.warnings), "cautions": session_cautions()}


def calibrate_logs(project, project_text: str, paths, *, free=PARAMETERS, **options):
    """Identify every log against ``project`` and fit it; returns (Calibration, calibrated text, log results)."""
    results = identify_logs(paths, envelope=project.envelope, **options)
    observations = [o for r in results for o in observations_from_segments(r.log.name, r.segments)]
    cal = calibrate(project.envelope, observations, free)
    text = calibrated_project_text(project_text, cal, [(r.log.name, r.log.sha256) for r in results])
    return cal, text, results


def segment_figure_data(name: str, index: int, segment) -> dict:
    """Figure data (kind "sway_fit") of one segment: each signal measured, fitted and the residual."""
    series = []
    for signal, (t, y, fitted) in sorted(segment.fits.items()):
        step = max(1, int(np.ceil(t.size / FIGURE_POINTS)))
        series.append({"signal": signal, "t_s": np.round(t[::step] + segment.start_s, 4).tolist(),
                       "measured": np.round(y[::step], 8).tolist(), "fitted": np.round(fitted[::step], 8).tolist()})
    modes = ", ".join(f"{m.frequency_hz:.4g} Hz (zeta {m.damping_ratio:.2g})" for m in segment.modes)
    return {"kind": "sway_fit", "title": f"{name}, segment {index + 1}: {segment.start_s:g}-{segment.end_s:g} s; "
            f"{modes}", "series": series}
