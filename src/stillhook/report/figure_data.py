"""Data behind every figure of the study, as JSON-ready dicts (rendered by :mod:`stillhook.report.figures`).

Each builder returns ``{"kind": ..., "title": ..., ...}`` with plain lists of numbers, so the report
can write the same data it plots into its JSON file.

- :func:`sensitivity_data`: residual vibration V (% of unshaped) against mode frequency for the
  shaper, the schedule row at the nominal rope length and the notch, with each mode's band.
- :func:`time_response_data`: the project's move at the nominal rig on the nonlinear simulator,
  unshaped and filtered: speed command, hook and payload offsets.
- :func:`frequency_map_data`: both modes' frequencies over the envelope.
- :func:`residual_map_data`: residual sway of each design over the envelope, from a grid sweep.

Notes
-----
V of a shaper: Singer & Seering, ASME J. Dyn. Sys. Meas. Control 112(1):76-82, 1990; of a notch:
|H| at the mode's pole image (:mod:`stillhook.notch.cascade`).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from stillhook.errors import ConfigError
from stillhook.model.lookup import row_edges_m, schedule_rows
from stillhook.sim.dynamics import simulate_batch
from stillhook.sim.profiles import project_move

__all__ = [
    "DESIGN_COLORS", "MAX_SERIES_POINTS", "frequency_map_data", "residual_map_data", "sensitivity_data",
    "time_response_data",
]

#: Largest number of samples a time series keeps in the figure data (every k-th sample).
MAX_SERIES_POINTS = 1500
#: Colours of the designs in every figure (matplotlib's tab10 names).
DESIGN_COLORS = {"unshaped": "tab:gray", "shaper": "tab:blue", "schedule": "tab:green", "notch": "tab:orange"}


def _round(values, digits: int = 6) -> list:
    """Floats rounded to ``digits`` significant digits (smaller, still exact enough to re-plot)."""
    a = np.asarray(values, dtype=float)
    return [float(f"{v:.{digits}g}") for v in a.ravel()] if a.ndim <= 1 else [_round(r, digits) for r in a]


def sensitivity_data(project, design=None, notch=None, *, n: int = 600) -> dict:
    """V (%) against frequency for the designs, bands shaded, tolerance marked.

    Parameters
    ----------
    project : stillhook.project.Project
    design : stillhook.shaping.envelope_design.Design, optional
    notch : stillhook.notch.design.NotchDesign, optional
    n : int, number of frequencies from 0 to 1.6 x the highest band edge
    """
    env = project.envelope
    bands = env.mode_bands_hz()
    f_max = 1.6 * max(hi for _, hi in bands)
    f = np.linspace(f_max / n, f_max, n)
    w = 2.0 * np.pi * f
    zeta = env.damping_ratio
    curves = []
    if design is not None:
        curves.append({"key": "shaper", "label": f"shaper {design.shaper.name}".strip(),
                       "residual_pct": _round(100.0 * design.shaper.residual_vibration(w, zeta), 5)})
        sched = design.schedule
        if sched is not None:
            curves.append(_schedule_row_curve(env, sched, w, zeta))
    if notch is not None:
        curves.append({"key": "notch", "label": "notch",
                       "residual_pct": _round(100.0 * notch.residual_vibration(w, zeta), 5)})
    return {"kind": "sensitivity", "title": "Residual vibration against sway frequency",
            "frequency_hz": _round(f), "curves": curves, "bands_hz": [list(b) for b in bands],
            "nominal_hz": [m.frequency_hz for m in env.nominal_rig.modes()],
            "tolerance_pct": float(project.design["tolerance_pct"]), "damping_ratio": zeta}


def _schedule_row_curve(env, sched, w, zeta) -> dict:
    """V of the schedule row the nominal rope length selects, with the bands of the rope span it serves."""

    rule = sched.lookup_rule
    rows = np.asarray(sched.rope_lengths_m, dtype=float)
    k = int(schedule_rows(rows, env.nominal_rope_length_m, rule))
    # the rope lengths that select row k: between the switch points on either side
    edges = row_edges_m(rows, rule)
    lo = rows[0] if k == 0 else float(edges[k - 1])
    hi = rows[-1] if k == rows.size - 1 else float(edges[k])
    sub = replace(env, rope_length_range_m=(min(lo, hi), max(lo, hi)), nominal_rope_length_m=None)
    return {"key": "schedule", "label": f"schedule row {k + 1} (rope {lo:.3g}-{hi:.3g} m)",
            "residual_pct": _round(100.0 * sched.shapers[k].residual_vibration(w, zeta), 5),
            "bands_hz": [list(b) for b in sub.mode_bands_hz()]}


def _downsample(n: int) -> slice:
    return slice(None, None, max(1, -(-n // MAX_SERIES_POINTS)))


def time_response_data(project, filters: dict, *, distance_m: float | None = None, rtol: float = 1e-6,
                       after_s: float = 20.0) -> dict:
    """The project's move at the nominal rig, unshaped and through each filter (nonlinear simulator).

    Parameters
    ----------
    project : stillhook.project.Project
    filters : dict
        ``{key: (label, filter)}``; a filter is any :class:`stillhook.sim.command_filter.CommandFilter`
        (a Shaper on the drive-cycle grid, a NotchDesign, ...) or None (left out).
        'unshaped' is always added first.
    distance_m : float, optional
        Overrides ``[move] distance_m``.
    rtol : float
        Integrator tolerance (a figure needs less than the comparison table).
    after_s : float
        The traces run until this long after the longest shaped command ends (a notch's command
        runs on for its whole ring-out; it is cut at the same time).
    """
    speed, hoist = project_move(project, distance_m)
    T = project.drive["cycle_s"]
    rig = project.envelope.nominal_rig
    runs = [("unshaped", "unshaped", speed)]
    for key, (label, flt) in filters.items():
        if flt is not None:
            runs.append((key, label, flt.apply(speed, T)))
    ends = [len(cmd) * T for key, _, cmd in runs if key != "notch"]
    t_end = max(ends) + after_s
    # A command longer than the window (a notch's ring-out) is cut two cycles after it: the motion
    # up to t_end does not depend on the command after t_end (causality), and the cut is not shown.
    n_win = math.ceil(t_end / T - 1e-9) + 2
    cmds = [cmd[:n_win] for _, _, cmd in runs]
    results = simulate_batch(rig, cmds, T, hoist_speed_m_s=hoist, rtol=rtol,
                             settle_s=[max(T, t_end - (len(cmd) - 1) * T) + T for cmd in cmds])
    series, n = [], None
    for (key, label, _), res in zip(runs, results, strict=True):
        keep = res.t_s <= t_end + 1e-9
        n = int(keep.sum()) if n is None else min(n, int(keep.sum()))
        series.append((key, label, res))
    sl = _downsample(n)
    out = []
    for key, label, res in series:
        out.append({"key": key, "label": label, "command_end_s": res.command_end_s,
                    "speed_m_s": _round(res.trolley_speed_m_s[:n][sl]),
                    "hook_offset_m": _round(res.hook_offset_m[:n][sl]),
                    "payload_offset_m": _round(res.payload_offset_m[:n][sl])})
    return {"kind": "time_response", "title": "The project's move at the nominal rig (nonlinear simulation)",
            "t_s": _round(series[0][2].t_s[:n][sl]), "series": out, "hoisting": hoist is not None,
            "rig": {"rope_length_m": rig.rope_length_m, "payload_mass_kg": rig.payload_mass_kg}}


def frequency_map_data(project, n_rope: int = 41, n_payload: int = 41) -> dict:
    """Each mode's frequency (Hz) over the envelope grid."""
    env = project.envelope
    Ls, ms = env.grid(n_rope, n_payload)
    F = env.frequency_map_hz(Ls, ms)
    return {"kind": "frequency_map", "title": "Sway mode frequencies over the envelope",
            "rope_length_m": _round(Ls), "payload_mass_kg": _round(ms),
            "modes": [{"mode": i + 1, "frequency_hz": _round(F[..., i])} for i in range(F.shape[-1])],
            "nominal": [env.nominal_rope_length_m, env.nominal_payload_mass_kg]}


def residual_map_data(result) -> dict:
    """Residual sway of each design over the envelope, from a grid :class:`SweepResult`."""
    if result.grid_shape is None:
        raise ConfigError("residual maps need a grid sweep, not random samples")
    nL, nm = result.grid_shape
    Ls = result.rope_length_m.reshape(nL, nm)[:, 0]
    ms = result.payload_mass_kg.reshape(nL, nm)[0, :]
    maps = []
    for d in result.designs:
        maps.append({"key": d.key, "label": d.label, "residual_mm": _round(1000.0 * result.grid(d.key), 5),
                     "ratio_pct": _round(100.0 * result.grid(d.key, ratio=True), 5)})
    summary = result.summary()
    return {"kind": "residual_map", "title": "Residual payload sway over the envelope",
            "rope_length_m": _round(Ls), "payload_mass_kg": _round(ms), "maps": maps,
            "tolerance_pct": 100.0 * result.tolerance, "move": dict(result.move),
            "share_within_tolerance": {k: v["share_within_tolerance"] for k, v in summary.items()}}
