"""The report's commissioning section, for a project written by ``stillhook calibrate``.

Shows the identified frequencies against the calibrated model's, the parameter table (before, calibrated,
sd) and the residual sway over the envelope of two designs — the one made from the values before
calibration (nominal) and the one made from the calibrated project — evaluated on the calibrated model
(and, in the invented demo, on the "true" crane that wrote the logs).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from stillhook.commission.calibrate import PARAMETERS, Observation, predicted_hz
from stillhook.commission.project_file import CALIBRATION_CAUTION
from stillhook.report.html import esc, figure, num, table
from stillhook.shaping.envelope_design import design_for_project, schedule_ratio
from stillhook.shaping.residual_map import residual_ratio

__all__ = ["COMMISSIONING_GRID", "commissioning_data", "design_residual", "section_commissioning"]

#: Grid (rope lengths x payload masses) of the residual comparison.
COMMISSIONING_GRID = (21, 21)
_SD = {"hook_mass_kg": "hook_mass_sd_kg", "rigging_length_m": "rigging_length_sd_m",
       "rope_offset_m": "rope_offset_sd_m", "damping_ratio": "damping_ratio_sd"}


def design_residual(envelope, design, tolerance: float, grid=COMMISSIONING_GRID) -> dict:
    """Worst residual payload sway (share of unshaped) of ``design`` on ``envelope``'s grid; share within tol."""
    Ls, ms = envelope.grid(*grid)
    if design.schedule is not None:
        ratio = schedule_ratio(envelope, design.schedule, Ls, ms)
    else:
        ratio = residual_ratio(envelope, design.shaper, Ls, ms)[0]
    i, j = np.unravel_index(int(np.argmax(ratio)), ratio.shape)
    return {"worst_pct": 100 * float(ratio.max()),
            "share_within_tolerance_pct": 100 * float(np.mean(ratio <= tolerance)),
            "worst_at": {"rope_length_m": float(Ls[i]), "payload_mass_kg": float(ms[j])}}


def commissioning_data(project, design, *, true_envelope=None) -> dict | None:
    """The section's numbers (None when the project has no ``[calibration]`` data).

    Parameters
    ----------
    project : stillhook.project.Project
        A calibrated project.
    design : stillhook.shaping.envelope_design.Design
        The design made from it.
    true_envelope : Envelope, optional
        The crane that wrote the logs, when it is known (the invented demo).
    """
    cal, env = project.calibration, project.envelope
    if not cal.get("measured_hz"):
        return None
    before = {k: cal[f"nominal_{k}"] if cal[f"nominal_{k}"] is not None else getattr(env, k) for k in PARAMETERS}
    nominal = replace(project, envelope=replace(env, **before))
    nominal_design = design_for_project(nominal)
    obs = [Observation("", L, m, int(k), f, sd, 0.0, 0.0) for L, m, k, f, sd in zip(
        cal["rope_length_m"], cal["payload_mass_kg"], cal["mode"], cal["measured_hz"], cal["measured_sd_hz"],
        strict=True)]
    now = {k: getattr(env, k) for k in PARAMETERS}
    pred_now, pred_before = predicted_hz(now, env.gravity_m_s2, obs), predicted_hz(before, env.gravity_m_s2, obs)
    tol = project.design["tolerance_pct"] / 100.0
    models = {"calibrated model": env, **({"true crane (invented demo)": true_envelope} if true_envelope else {})}
    return {
        "parameters": {k: {"before": before[k], "calibrated": now[k], "sd": cal[_SD[k]]} for k in PARAMETERS},
        "frequencies": [{"rope_length_m": o.rope_length_m, "payload_mass_kg": o.payload_mass_kg, "mode": o.mode,
                         "measured_hz": o.measured_hz, "measured_sd_hz": o.measured_sd_hz,
                         "calibrated_hz": float(a), "before_hz": float(b)}
                        for o, a, b in zip(obs, pred_now, pred_before, strict=True)],
        "tolerance_pct": 100 * tol,
        "residuals": {model: {"nominal design": design_residual(e, nominal_design, tol),
                              "calibrated design": design_residual(e, design, tol)} for model, e in models.items()},
        "designs": {"nominal design": f"{nominal_design.shaper.name} ({nominal_design.shaper.duration_s:.3g} s)",
                    "calibrated design": f"{design.shaper.name} ({design.shaper.duration_s:.3g} s)"},
    }


def section_commissioning(study, png: dict) -> str | None:
    """HTML of the section (None when the study has no commissioning data)."""
    c = getattr(study, "commissioning", None)
    if not c:
        return None
    params = [[esc(k), num(v["before"], ".6g"), num(v["calibrated"], ".6g"), num(v["sd"], ".2g")]
              for k, v in c["parameters"].items()]
    freqs = [[num(f["rope_length_m"]), num(f["payload_mass_kg"]), num(f["mode"]), num(f["measured_hz"], ".6g"),
              num(f["measured_sd_hz"], ".2g"), num(f["calibrated_hz"], ".6g"), num(f["before_hz"], ".6g")]
             for f in c["frequencies"]]
    res = [[esc(model), esc(name), esc(c["designs"][name]), num(r["worst_pct"], ".3g"),
            num(r["share_within_tolerance_pct"], ".4g")]
           for model, by_design in c["residuals"].items() for name, r in by_design.items()]
    out = ["<h2>Commissioning: the rig calibrated against sway logs</h2>",
           f"<p><strong>{esc(CALIBRATION_CAUTION)}</strong></p>",
           "<p>Parameters before calibration, the calibrated values and their standard deviations (&ndash; where "
           "a parameter was fixed):</p>",
           table(["parameter", "before", "calibrated", "sd"], params, numeric={1, 2, 3}),
           "<p>Identified frequencies against the model before and after calibration:</p>",
           table(["rope (m)", "payload (kg)", "mode", "measured (Hz)", "sd (Hz)", "calibrated model (Hz)",
                  "model before (Hz)"], freqs, numeric={0, 1, 2, 3, 4, 5, 6}),
           f"<p>Residual payload sway over the envelope ({COMMISSIONING_GRID[0]} &times; {COMMISSIONING_GRID[1]} "
           f"rigs, share of unshaped; tolerance {num(c['tolerance_pct'], 'g')} %) of the design made from the "
           "values before calibration and of the design made from the calibrated project:</p>",
           table(["evaluated on", "design", "shaper", "worst (%)", "rigs within tolerance (%)"], res,
                 numeric={3, 4})]
    out += [figure(png.get(name), name, f"Identified segment {name}: measured vs fitted, residual")
            for name in sorted(png) if name.startswith("sway_fit_")]
    return "\n".join(out)
