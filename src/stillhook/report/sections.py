"""Report sections built from a Study: summary, design, comparison, envelope sweep, firmware (HTML)."""

from __future__ import annotations

from stillhook.report.html import esc, figure, kv_table, mm, num, problem, table
from stillhook.report.study import firmware_summary

__all__ = [
    "design_tables", "section_comparison", "section_design", "section_firmware", "section_modes", "section_rig",
    "section_summary", "section_sweep",
]


def _headline_key(study) -> str | None:
    """The design the firmware carries: the schedule when there is one, else the single shaper."""
    if study.sweep is None:
        return None
    keys = study.sweep.keys
    return "schedule" if "schedule" in keys else ("shaper" if "shaper" in keys else None)


def section_summary(study) -> str:
    """A verdict box: does the firmware's design hold over the envelope, and at what cost in time."""
    key = _headline_key(study)
    if key is None:
        return '<div class="verdict bad">The envelope sweep did not run; see the problems below.</div>'
    s = study.sweep.summary()[key]
    tol = 100 * study.sweep.tolerance
    share = 100 * s["share_within_tolerance"]
    ok = s["share_within_tolerance"] >= 1.0
    what = "The length-scheduled shaper" if key == "schedule" else "The shaper"
    at = s["worst_ratio_at"]
    text = (f"{what} keeps residual payload sway within {num(tol)} % of the unshaped move's at "
            f"{num(share, '.1f')} % of the {study.sweep.rope_length_m.size} rigs swept over the envelope "
            f"(worst {num(100 * s['worst_ratio'], '.3g')} % at {num(at['rope_length_m'], '.3g')} m rope, "
            f"{num(at['payload_mass_kg'], '.4g')} kg). It lengthens a move by at most "
            f"{num(s['added_s'], '.3g')} s.")
    mc = study.move_check
    if mc is not None:
        # the sweep holds the rope; the project's own move may hoist: say both (issue 11)
        text += f" The envelope shaper, checked {esc(mc.sentence())}."
        ok = ok and mc.holds
    return f'<div class="verdict{"" if ok else " bad"}"><strong>Summary.</strong> {text}</div>'


def _impulses(shaper, cycle_s) -> str:
    """The impulses as up to three side-by-side tables (long shapers stay compact)."""
    d = shaper.as_dict(cycle_s)
    rows = [[num(i + 1), num(imp["time_s"], ".5g"), num(imp.get("delay_cycles")), num(imp["amplitude"], ".6f")]
            for i, imp in enumerate(d["impulses"])]
    n_cols = 1 if len(rows) <= 8 else (2 if len(rows) <= 16 else 3)
    per = -(-len(rows) // n_cols)
    parts = [table(["impulse", "time s", "delay (cycles)", "amplitude"], rows[k:k + per], {0, 1, 2, 3})
             for k in range(0, len(rows), per)]
    return '<div class="cols">' + "".join(parts) + "</div>"


def design_tables(study) -> str:
    """Reason, the single shaper's impulses and the schedule's rows in brief."""
    design, T = study.design, study.project.drive["cycle_s"]
    sh = design.shaper
    reason = design.reason[:1].upper() + design.reason[1:]
    out = [f"<p>{esc(reason)}.</p>" if not reason.endswith(".") else f"<p>{esc(reason)}</p>",
           kv_table([("shaper for the whole envelope", f"{esc(sh.name or '-')}: {sh.n_impulses} impulses, "
                      f"{num(sh.duration_s, '.4g')} s long"),
                     ("high mode treated", "yes" if design.high_mode_treated else "no (see the reason above)"),
                     ("bands designed for", ", ".join(f"{num(lo)}&ndash;{num(hi)} Hz"
                                                      for lo, hi in design.bands_hz))])]
    if study.move_check is not None:
        mc = study.move_check
        out.append(f'<p class="{"" if mc.holds else "bad"}">Checked on the nonlinear simulator: '
                   f"{esc(mc.sentence())}.</p>")
    if sh.n_impulses <= 24:
        out.append(_impulses(sh, T))
    sched = design.schedule
    if sched is not None:
        lengths = list(sched.rope_lengths_m)
        durs = [s.duration_s for s in sched.shapers]
        rule = sched.lookup_rule
        out.append("<h3>Length schedule</h3>")
        out.append(kv_table([
            ("rows", f"{len(lengths)} rope lengths from {num(lengths[0])} to {num(lengths[-1])} m"),
            ("row lookup", esc(rule) + " (the drive picks the row for the measured rope length)"),
            ("shaper length per row", f"{num(min(durs), '.3g')} to {num(max(durs), '.3g')} s"),
        ]))
    if study.notch is not None:
        rows = [[num(i + 1), num(s.frequency_hz), num(s.width_hz, ".3g"),
                 "null" if s.depth_db == float("inf") else num(s.depth_db, ".3g"),
                 f"{num(s.band_hz[0])}&ndash;{num(s.band_hz[1])}", num(100 * s.band_worst_residual, ".3g")]
                for i, s in enumerate(study.notch.sections)]
        out.append("<h3>Notch filter (for comparison)</h3>")
        out.append(table(["notch", "centre Hz", "width Hz", "depth dB", "band Hz", "worst in band %"], rows,
                         {0, 1, 2, 3, 5}))
        out.extend(f'<p class="small">Notch: {esc(w)}</p>' for w in study.notch.warnings)
    out.append(problem(study, "notch"))
    return "".join(out)


def section_comparison(study, png) -> str:
    out = ["<h2>4. Comparison on the project's move</h2>", problem(study, "comparison")]
    c = study.comparison
    if c is not None:
        out.append(f"<p>Nominal rig, {num(c.distance_m)} m move{', hoisting during the move' if c.hoist else ''}, "
                   f"nonlinear simulation. At rest means |payload offset| &le; {num(1000 * c.rest_threshold_m, '.3g')}"
                   f" mm ({num(100 * c.tolerance)} % of the unshaped residual). Added delay: time the load is at "
                   "rest minus the end of the unshaped command.</p>")
        rows = [[esc(r.label), esc(r.tuned_to), num(r.duration_s, ".3g"), mm(r.residual_sway_m),
                 num(r.residual_pct, ".3g"), mm(r.peak_sway_m), num(r.added_delay_s, ".3g"),
                 num(r.peak_speed_m_s, ".3g"), num(r.peak_accel_m_s2, ".3g")] for r in c.rows]
        out.append(table(["method", "tuned to", "extra length s", "residual mm", "residual %", "peak mm",
                          "added delay s", "peak m/s", "peak m/s²"], rows, {2, 3, 4, 5, 6, 7, 8}))
        out.extend(f'<p class="small">{esc(n)}</p>' for n in c.notes)
    out.append(figure(png.get("time_response"), "time responses",
                      "The project's move at the nominal rig: speed command the drive receives, hook and payload "
                      "offsets from the trolley (nonlinear simulation)."))
    return "".join(out)


def section_sweep(study, png) -> str:
    out = ["<h2>5. Over the whole envelope</h2>", problem(study, "sweep")]
    sw = study.sweep
    if sw is None:
        return "".join(out)
    mv = sw.move
    out.append(f"<p>Every rig of a {sw.grid_shape[0]} &times; {sw.grid_shape[1]} grid of rope lengths and payload "
               f"masses makes a {num(mv['distance_m'])} m rest-to-rest {esc(mv['profile'])} at "
               f"{num(mv['max_speed_m_s'])} m/s and "
               f"{num(mv['max_accel_m_s2'])} m/s&sup2; with the rope held; residual sway is the peak |payload offset| "
               f"over {num(mv['settle_window_s'])} s after the command ends. The schedule gives each rig the row the "
               "firmware picks for its rope length.</p>")
    rows = []
    for s in sw.summary().values():
        at = s["worst_ratio_at"]
        rows.append([esc(s["label"]), num(s["added_s"], ".3g"), mm(s["worst_residual_m"]),
                     num(100 * s["worst_ratio"], ".3g"),
                     f"{num(at['rope_length_m'], '.3g')} m, {num(at['payload_mass_kg'], '.4g')} kg",
                     num(100 * s["share_within_tolerance"], ".1f")])
    out.append(table(["design", "extra length s", "worst mm", "worst % of unshaped", "worst % at",
                      f"% of rigs within {num(100 * sw.tolerance)} %"], rows, {1, 2, 3, 5}))
    out.append(figure(png.get("residual_maps"), "residual sway maps",
                      "Unshaped residual sway (mm) and each design's residual as a percentage of the unshaped one "
                      "at the same rig; green is within the tolerance, the black line marks it."))
    if sw.spot_checks:
        keys = list(sw.spot_checks[0].linear_m)
        rows = [[f"{num(c.rope_length_m)} m, {num(c.payload_mass_kg)} kg"]
                + [f"{num(1000 * c.linear_m[k], '.4g')} / {num(1000 * c.nonlinear_m[k], '.4g')}" for k in keys]
                for c in sw.spot_checks]
        out.append(f"<h3>Accuracy</h3><p>The sweep solves the linear model exactly (modal coordinates, piecewise-"
                   f"constant acceleration per drive cycle). At the envelope's corners it was re-run on the nonlinear "
                   f"simulator: largest disagreement {num(100 * sw.max_disagreement(), '.2g')} % of the unshaped "
                   f"residual, {num(100 * sw.max_disagreement_of_peak(), '.2g')} % of the peak sway during the move. "
                   "The difference comes from the nonlinear terms (second order in the sway angle); it is largest "
                   "relative to the residual where the unshaped move happens to leave little sway. "
                   "Residual sway in mm, linear / nonlinear:</p>")
        out.append(table(["rig"] + keys, rows, set(range(1, len(keys) + 1))))
    out.extend(f'<p class="small">{esc(n)}</p>' for n in sw.notes)
    return "".join(out)


def section_firmware(study) -> str:
    out = ["<h2>6. Firmware files</h2>", problem(study, "firmware")]
    fw = firmware_summary(study)
    if fw is None:
        return "".join(out)
    sz = fw["sizes"]
    pairs = [("format", esc(fw["format"].upper()) + (f" ({esc(fw['format_reason'])})" if fw["format_reason"] else "")),
             ("C prefix", f"<code>{esc(fw['prefix'])}</code>"),
             ("provenance: project input SHA-256", f"<code>{esc(fw['input_digest_sha256'])}</code>"),
             ("shaper rows", f"{fw['rows']} (lookup: {esc(fw['lookup_rule'])})"),
             ("notch in firmware", "yes" if fw["notch"] else "no"),
             ("RAM (buffers the caller provides)", f"{sz['ram_bytes']} bytes of {sz['ram_budget_bytes']} budget"),
             ("flash (const tables)", f"{sz['flash_table_bytes']} bytes plus the runtime code")]
    st = study.selftest
    if st is not None:
        pairs.append(("host self-test", esc(st["summary"])))
    out.append(kv_table(pairs))
    rows = [[f"<code>{esc(f['name'])}</code>", num(f["bytes"]), f"<code>{esc(f['sha256'][:16])}</code>"]
            for f in fw["files"]]
    out.append(table(["file", "bytes", "SHA-256 (first 16 hex)"], rows, {1}))
    out.append('<p class="small">The tables carry the same input digest in their provenance header, and '
               "<code>manifest.json</code> holds every number for tools. Re-running on the same project file gives "
               "byte-identical files.</p>")
    return "".join(out)


def section_rig(study) -> str:
    p = study.project
    env, d, mv = p.envelope, p.drive, p.move
    (L0, L1), (m0, m1) = env.rope_length_range_m, env.payload_mass_range_kg
    pairs = [("hook block mass", f"{num(env.hook_mass_kg)} kg"),
             ("rigging length (hook to payload centre of mass)", f"{num(env.rigging_length_m)} m"),
             ("rope length range (trolley to hook)", f"{num(L0)} to {num(L1)} m"),
             ("payload mass range", f"{num(m0)} to {num(m1)} kg"),
             ("nominal rig", f"{num(env.nominal_rope_length_m)} m rope, {num(env.nominal_payload_mass_kg)} kg"),
             ("sway damping ratio", num(env.damping_ratio)), ("gravity", f"{num(env.gravity_m_s2)} m/s&sup2;"),
             ("drive cycle", f"{num(d['cycle_s'])} s ({num(1.0 / d['cycle_s'])} Hz)"),
             ("trolley speed and acceleration limits",
              f"{num(d['max_speed_m_s'])} m/s, {num(d['max_accel_m_s2'])} m/s&sup2;"),
             ("project move", f"{num(mv['distance_m'])} m {esc(mv['profile'])}"
              + (f", hoisting to {num(mv['hoist_to_m'])} m rope from {num(mv['hoist_start_s'])} s"
                 if mv["hoist_to_m"] is not None else "")),
             ("residual sway tolerance", f"{num(p.design['tolerance_pct'])} % of the unshaped residual")]
    return "<h2>1. Rig and envelope</h2>" + kv_table(pairs)


def section_modes(study, png) -> str:
    env = study.project.envelope
    rig = env.nominal_rig
    rows = [[str(i + 1), num(m.frequency_hz), num(m.period_s), num(m.payload_to_hook_ratio, ".3g"),
             num(m.hook_participation_m_per_m_s2, ".3g"), num(m.payload_participation_m_per_m_s2, ".3g")]
            for i, m in enumerate(rig.modes())]
    bands = [[str(i + 1), num(lo), num(hi), num(hi / lo, ".3g")] for i, (lo, hi) in enumerate(env.mode_bands_hz())]
    out = ["<h2>2. Sway modes</h2>",
           f"<p>At the nominal rig ({num(env.nominal_rope_length_m)} m rope, {num(rig.payload_mass_kg)} kg payload). "
           "x2/x1 is the payload-to-hook displacement ratio of the mode shape (negative: hook and payload swing "
           "against each other); participation is the sway amplitude a 1 m/s&sup2; acceleration step leaves in "
           "that mode.</p>",
           table(["mode", "frequency Hz", "period s", "x2/x1", "hook m per m/s²", "payload m per m/s²"], rows,
                 {1, 2, 3, 4, 5}),
           "<h3>Bands over the envelope</h3>",
           table(["mode", "lowest Hz", "highest Hz", "highest / lowest"], bands, {1, 2, 3}),
           figure(png.get("frequency_maps"), "mode frequency maps",
                  "Both modes' frequencies over rope length and payload mass; the red dot is the nominal rig.")]
    return "".join(out)


def section_design(study, png) -> str:
    return ("<h2>3. Chosen design and why</h2>" + design_tables(study)
            + figure(png.get("sensitivity"), "sensitivity curves",
                     "Residual vibration of each design against the sway frequency. Shaded: the frequency band "
                     "each mode covers over the envelope. Dashed: the tolerance. A design holds where its "
                     "curve stays under the line across both bands; a schedule row needs to hold only over the "
                     "narrower bands of the rope lengths it serves (bars under the zoom)."))
