"""HTML of the design report: one self-contained page (inline CSS, figures as base64 PNG, no scripts).

Every value shown comes from the :class:`stillhook.report.Study`; every text is HTML-escaped.
"""

from __future__ import annotations

import base64
import html

from stillhook import CAUTIONS, __version__

CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif;color:#1d2329;
 background:#f4f6f8;margin:0;line-height:1.45;font-size:15px}
main{max-width:1080px;margin:0 auto;background:#fff;padding:28px 40px 48px;box-shadow:0 0 12px #0001}
h1{font-size:26px;margin:0 0 4px} h2{font-size:20px;margin:36px 0 10px;padding-bottom:4px;
 border-bottom:2px solid #d9e1e8} h3{font-size:16px;margin:20px 0 6px}
.sub{color:#5b6770;margin:0 0 16px;font-size:13px}
.caution{background:#fff6e0;border:1px solid #e8c46a;border-left:6px solid #d89b00;padding:10px 16px;margin:16px 0}
.caution ul{margin:4px 0 0 0;padding-left:20px}
.verdict{background:#eef6ee;border-left:6px solid #3c8d40;padding:10px 16px;margin:12px 0}
.verdict.bad{background:#fdeeee;border-left-color:#c0392b}
.problem{background:#fdeeee;border-left:6px solid #c0392b;padding:8px 14px;margin:10px 0}
table{border-collapse:collapse;margin:8px 0 12px;font-size:13.5px}
th,td{padding:4px 10px;border-bottom:1px solid #e3e8ec;text-align:left;vertical-align:top}
th{background:#eef2f5;font-weight:600} td.n,th.n{text-align:right;font-variant-numeric:tabular-nums}
tr:nth-child(even) td{background:#fafbfc}
table.kv th{background:none;font-weight:normal;color:#5b6770;border-bottom:1px solid #eef1f3}
figure{margin:14px 0 22px} figure img{width:100%;height:auto;border:1px solid #e3e8ec}
figcaption{color:#5b6770;font-size:13px;margin-top:4px}
code{font-family:"DejaVu Sans Mono",Consolas,monospace;font-size:12.5px;background:#f1f3f5;padding:1px 4px}
.cols{display:flex;flex-wrap:wrap;gap:0 22px;align-items:flex-start}
.cols th,.cols td{padding:3px 7px}
.small{font-size:13px;color:#5b6770}
"""


def esc(value) -> str:
    return html.escape(str(value), quote=True)


def num(value, fmt: str = ".4g") -> str:
    if value is None:
        return "&ndash;"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    return esc(format(float(value), fmt))


def mm(value_m) -> str:
    """A length in m shown in mm: whole mm from 100 mm up, 3 significant digits below."""
    v = 1000.0 * float(value_m)
    return esc(f"{v:.0f}" if abs(v) >= 100 else f"{v:.3g}")


def table(headers: list[str], rows: list[list], numeric: set[int] | None = None) -> str:
    """An HTML table; columns in ``numeric`` are right-aligned. Cells are pre-formatted HTML."""
    numeric = numeric or set()
    head = "".join(f'<th class="n">{esc(h)}</th>' if i in numeric else f"<th>{esc(h)}</th>"
                   for i, h in enumerate(headers))
    body = "".join("<tr>" + "".join(f'<td class="n">{c}</td>' if i in numeric else f"<td>{c}</td>"
                                    for i, c in enumerate(r)) + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def kv_table(pairs: list[tuple[str, str]]) -> str:
    return '<table class="kv">' + "".join(f"<tr><th>{esc(k)}</th><td>{v}</td></tr>" for k, v in pairs) + "</table>"


def figure(png: bytes | None, alt: str, caption: str) -> str:
    if png is None:
        return ""
    b64 = base64.b64encode(png).decode("ascii")
    return (f'<figure><img alt="{esc(alt)}" src="data:image/png;base64,{b64}">'
            f"<figcaption>{caption}</figcaption></figure>")


def cautions_box() -> str:
    items = "".join(f"<li>{esc(c)}</li>" for c in CAUTIONS)
    return f'<div class="caution"><strong>Cautions</strong><ul>{items}</ul></div>'


def problem(study, stage: str) -> str:
    msg = study.problems.get(stage)
    return f'<div class="problem"><strong>{esc(stage)}:</strong> {esc(msg)}</div>' if msg else ""


# -- sections ------------------------------------------------------------------------------------
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
           f"<p>At the nominal rig ({num(rig.rope_length_m)} m rope, {num(rig.payload_mass_kg)} kg payload). "
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
    from stillhook.report_sections import design_tables

    return ("<h2>3. Chosen design and why</h2>" + design_tables(study)
            + figure(png.get("sensitivity"), "sensitivity curves",
                     "Residual vibration of each design against the sway frequency. Shaded: the frequency band "
                     "each mode covers over the envelope. Dashed: the tolerance. A design holds where its "
                     "curve stays under the line across both bands; a schedule row needs to hold only over the "
                     "narrower bands of the rope lengths it serves (bars under the zoom)."))


def render_html(study, png: dict) -> str:
    """The whole page."""
    from stillhook.report_sections import (
        section_comparison,
        section_firmware,
        section_summary,
        section_sweep,
    )

    p = study.project
    title = f"Sway study: {p.name}"
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{esc(title)}</title><style>{CSS}</style></head><body><main>",
        f"<h1>{esc(title)}</h1>",
        f'<p class="sub">stillhook {esc(__version__)} &middot; project input SHA-256 '
        f"<code>{esc(p.digest or '-')}</code></p>",
        section_summary(study), cautions_box(), problem(study, "design"),
        section_rig(study), section_modes(study, png), section_design(study, png),
        section_comparison(study, png), section_sweep(study, png), section_firmware(study),
        "<h2>7. Cautions</h2>", cautions_box(),
        '<p class="small">Generated by stillhook from the project file above; the same inputs give the same '
        "report byte for byte.</p>",
        "</main></body></html>", ""]
    return "\n".join(x for x in parts if x is not None)
