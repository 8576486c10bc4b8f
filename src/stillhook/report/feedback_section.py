"""The report's feedback section: design rows, closed-loop damping map over the envelope, scenario responses.

Only for projects with a ``[feedback]`` section. Scenarios (nominal rig, closed loop on the nonlinear model):
the project's move with the load released swinging (SCENARIO_SWAY_RAD) under each controller, and a gust on
the payload (SCENARIO_GUST_G x payload weight for SCENARIO_GUST_S seconds after the move) without and with
feedback.
"""

from __future__ import annotations

import numpy as np

from stillhook.cautions import FEEDBACK_CAUTIONS
from stillhook.feedback.robust import feedback_for_project
from stillhook.feedback.robustness import check_envelope, envelope_grid
from stillhook.model.lookup import row_edges_m
from stillhook.report.html import esc, figure, num, table
from stillhook.study.controllers import CONTROLLERS, Scenario, run_controllers

__all__ = ["SCENARIO_GUST_G", "SCENARIO_GUST_S", "SCENARIO_SWAY_RAD", "feedback_figures", "feedback_json",
           "feedback_study", "section_feedback"]

SCENARIO_SWAY_RAD = 0.03
SCENARIO_GUST_G = 0.05
SCENARIO_GUST_S = 1.0
_DECIMATE = 4


def feedback_study(project, shaper_design) -> dict:
    """Design, envelope check and scenario runs of the project's feedback."""
    design = feedback_for_project(project)
    check = check_envelope(design, project.envelope, project.feedback["min_damping_ratio"])
    rig = project.envelope.nominal_rig
    gust_n = SCENARIO_GUST_G * rig.payload_mass_kg * rig.gravity_m_s2
    sway = Scenario(initial_sway_rad=SCENARIO_SWAY_RAD)
    gust = Scenario(gust_n=gust_n, gust_s=SCENARIO_GUST_S)
    runs = [(f"project move, load released with {SCENARIO_SWAY_RAD:g} rad sway", sway,
             run_controllers(project, CONTROLLERS, sway, design=shaper_design, feedback=design)),
            (f"project move, then {gust_n:.4g} N on the payload for {SCENARIO_GUST_S:g} s", gust,
             run_controllers(project, ("shaper", "shaper+feedback"), gust, design=shaper_design, feedback=design))]
    return {"design": design, "check": check, "runs": runs}


def feedback_figures(project, fb: dict) -> dict:
    """Figure data: ``feedback_damping_map`` and ``feedback_responses``."""
    design, check = fb["design"], fb["check"]
    L, m = envelope_grid(design, project.envelope)
    Z = np.array([p.damping_ratio for p in check.points]).reshape(len(L), len(m))
    dmap = {"kind": "damping_map", "title": "Closed-loop damping over the envelope",
            "rope_length_m": L.tolist(), "payload_mass_kg": m.tolist(), "damping_ratio": Z.tolist(),
            "switch_lengths_m": row_edges_m(design.rope_lengths_m, design.lookup_rule).tolist(),
            "worst_at": check.as_dict()["worst_at"], "min_damping_ratio": check.min_damping_ratio}
    scen = []
    for label, _scenario, results in fb["runs"]:
        scen.append({"label": label, "t_s": {k: r.sim.t_s[::_DECIMATE].tolist() for k, r in results.items()},
                     "payload_offset_m": {k: r.sim.payload_offset_m[::_DECIMATE].tolist() for k, r in results.items()}})
    resp = {"kind": "closed_loop_response", "title": "Payload sway with and without feedback (nominal rig)",
            "scenarios": scen}
    return {"feedback_damping_map": dmap, "feedback_responses": resp}


def feedback_json(fb: dict | None) -> dict | None:
    if fb is None:
        return None
    return {"rows": [r.as_dict() for r in fb["design"].rows], **fb["check"].as_dict(),
            "scenarios": [{"label": label, **sc.as_dict(), "controllers": {k: r.metrics() for k, r in res.items()}}
                          for label, sc, res in fb["runs"]]}


def _metric_cells(name: str, m: dict) -> list[str]:
    settle = "not at rest" if m["settle_s"] is None else num(m["settle_s"], ".3g")
    return [esc(name), num(1000 * m["residual_payload_sway_m"], ".3g"), settle, num(m["peak_speed_m_s"], ".3g"),
            num(m["peak_accel_m_s2"], ".3g"), num(1000 * m["end_error_m"], ".3g")]


def section_feedback(study, png) -> str:
    fb = getattr(study, "feedback", None)
    if fb is None:
        return ""
    design, check = fb["design"], fb["check"]
    s = study.project.sensor
    w = check.worst
    verdict = "verdict" if check.passed else "verdict bad"
    out = ["<h2>Feedback: closed-loop sway damping</h2>",
           f"<p>Observer + state feedback from the sensor <code>{esc(s['kind'])}</code> (noise sd {num(s['noise_sd'])},"
           f" resolution {num(s['resolution'])}, delay {s['delay_cycles']} cycles), drive speed loop "
           f"{num(design.tau_s)} s, {len(design.rows)} rope-length rows designed from payload "
           f"{num(design.design_payload_mass_kg)} kg for damping ratio {num(design.target_damping_ratio)}, each row "
           f"re-tuned until it is stable with margins and no less damped than open loop over its rope span and "
           f"the payload range ({sum(r.feedback_on for r in design.rows)} of {len(design.rows)} rows with "
           f"feedback; the others have zero gain: shaper alone).</p>",
           f'<div class="{verdict}">Envelope check ({len(check.points)} points, both sides of every row switch): '
           f"{'all stable' if check.all_stable else 'UNSTABLE somewhere'}; least closed-loop damping ratio "
           f"{num(w.damping_ratio)} at rope {num(w.rope_length_m)} m, payload {num(w.payload_mass_kg)} kg "
           f"(accepted &ge; {num(check.min_damping_ratio)}); smallest delay margin "
           f"{num(check.delay_margin_cycles, '.3g')} cycles.</div>",
           table(["rope m", "feedback", "design payload kg", "x target", "regulator damping", "observer damping"],
                 [[num(r.rope_length_m), "on" if r.feedback_on else "off (zero gain)",
                   num(r.design_payload_mass_kg), num(r.aggressiveness), num(r.regulator_damping_ratio),
                   num(r.observer_damping_ratio)] for r in design.rows], {0, 2, 3, 4, 5}),
           figure(png.get("feedback_damping_map"), "closed-loop damping map",
                  "Least damping ratio of all closed-loop poles (both sway modes, observer, drive) at each envelope "
                  "point, each rope length using its scheduled row.")]
    for label, _sc, res in fb["runs"]:
        out.append(f"<h3>{esc(label)}</h3>")
        out.append(table(["controller", "residual mm", "settle s", "peak m/s", "peak m/s²", "end error mm"],
                         [_metric_cells(k, r.metrics()) for k, r in res.items()], {1, 2, 3, 4, 5}))
    out.append(figure(png.get("feedback_responses"), "closed-loop responses",
                      "Payload offset from the trolley, nonlinear model with the speed loop and the sensor."))
    items = "".join(f"<li>{esc(c)}</li>" for c in FEEDBACK_CAUTIONS)
    out.append(f'<div class="caution"><strong>Feedback cautions</strong><ul>{items}</ul></div>')
    return "".join(out)
