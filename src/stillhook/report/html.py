"""HTML of the design report: one self-contained page (inline CSS, figures as base64 PNG, no scripts).

Every value shown comes from the :class:`stillhook.report.study.Study`; every text is HTML-escaped.
"""

from __future__ import annotations

import base64
import html

from stillhook.cautions import CAUTIONS

__all__ = ["CSS", "cautions_box", "esc", "figure", "kv_table", "mm", "num", "problem", "table"]

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
