"""Figures of the study, drawn from the data dicts of :mod:`stillhook.report.figure_data` (matplotlib, Agg).

Every figure is a plain :class:`matplotlib.figure.Figure` (no pyplot state) and is written as PNG and
SVG with fixed metadata and a fixed SVG hash salt, so the same data gives byte-identical files. A figure
is laid out once (constrained layout, at its first format) and every format is written from that layout.
SVG text stays text (``svg.fonttype = "none"``): smaller files, editable labels, and a third less time
than drawing every glyph as a path. The figures of a report are drawn in worker processes, one figure
per task, so they take about 1 / cores of the serial time; the bytes do not depend on the worker count.
"""

from __future__ import annotations

import io

import matplotlib
import numpy as np
from matplotlib.colors import TwoSlopeNorm
from matplotlib.figure import Figure

from stillhook.errors import ConfigError
from stillhook.report.commissioning_figures import sway_fit_figure
from stillhook.report.feedback_figures import closed_loop_response_figure, damping_map_figure
from stillhook.report.figure_data import DESIGN_COLORS
from stillhook.workers import map_tasks, worker_count

__all__ = [
    "FORMATS", "PNG_DPI", "RC", "figure_bytes", "figure_files", "frequency_map_figure", "render",
    "render_formats", "residual_map_figure", "submit_figures", "sensitivity_figure", "time_response_figure",
]

#: matplotlib settings used for every figure (deterministic SVG ids, no timestamps).
RC = {"svg.hashsalt": "stillhook", "svg.fonttype": "none", "font.size": 9.0, "axes.titlesize": 10.0,
      "axes.grid": True, "grid.alpha": 0.3, "image.cmap": "viridis"}
#: Raster resolution of the PNG files (dots per inch).
PNG_DPI = 110
#: File formats a figure is written in.
FORMATS = ("png", "svg")
_BAND_COLORS = ("#9ecae1", "#fdd0a2")


def _color(key: str) -> str:
    return DESIGN_COLORS.get(key, "tab:purple")


def _new_figure(width_in: float, height_in: float):
    return Figure(figsize=(width_in, height_in), layout="constrained")


def sensitivity_figure(data: dict):
    """V (%) against frequency: full scale on top, a zoom around the tolerance below."""
    f = np.asarray(data["frequency_hz"])
    tol = data["tolerance_pct"]
    fig = _new_figure(8.0, 5.6)
    axes = fig.subplots(2, 1, sharex=True, height_ratios=(1.0, 1.2))
    for k, ax in enumerate(axes):
        for i, (lo, hi) in enumerate(data["bands_hz"]):
            ax.axvspan(lo, hi, color=_BAND_COLORS[i % 2], alpha=0.6, lw=0,
                       label=f"mode {i + 1} band {lo:.3g}-{hi:.3g} Hz" if k == 0 else None)
        for c in data["curves"]:
            ax.plot(f, c["residual_pct"], color=_color(c["key"]), lw=1.4, label=c["label"] if k == 0 else None)
        ax.axhline(tol, color="tab:red", ls="--", lw=1.0, label=f"tolerance {tol:g} %" if k == 0 else None)
    for c in data["curves"]:
        # a curve designed for part of the envelope (a schedule row): bars under the zoom mark its bands
        for j, (lo, hi) in enumerate(c.get("bands_hz", [])):
            axes[1].hlines(0.12 * tol, lo, hi, color=_color(c["key"]), lw=5,
                           label=f"bands of {c['label']}" if j == 0 else None)
        ax.set_ylabel("residual sway (% of unshaped)")
    axes[0].set_ylim(0, 105)
    axes[1].set_ylim(0, 3.0 * tol)
    axes[1].set_title(f"zoom: 0 to {3 * tol:g} %", loc="left", fontsize=9)
    axes[1].set_xlabel("sway mode frequency (Hz)")
    axes[1].set_xlim(0, float(f[-1]))
    axes[0].set_title(data["title"] + f" (damping ratio {data['damping_ratio']:g})", loc="left")
    axes[0].legend(loc="upper right", fontsize=8, framealpha=0.9)
    if any(c.get("bands_hz") for c in data["curves"]):
        axes[1].legend(loc="upper right", fontsize=8, framealpha=0.9)
    return fig


def time_response_figure(data: dict):
    """Speed command, hook offset and payload offset against time for every run."""
    t = np.asarray(data["t_s"])
    fig = _new_figure(8.0, 7.0)
    axes = fig.subplots(3, 1, sharex=True)
    for s in data["series"]:
        kw = {"color": _color(s["key"]), "lw": 1.2 if s["key"] != "unshaped" else 1.0}
        axes[0].plot(t, s["speed_m_s"], label=s["label"], **kw)
        axes[1].plot(t, np.asarray(s["hook_offset_m"]) * 1000.0, **kw)
        axes[2].plot(t, np.asarray(s["payload_offset_m"]) * 1000.0, **kw)
    axes[0].set_ylabel("trolley speed (m/s)")
    axes[1].set_ylabel("hook offset (mm)")
    axes[2].set_ylabel("payload offset (mm)")
    axes[2].set_xlabel("time (s)")
    axes[2].set_xlim(0, float(t[-1]))
    rig = data["rig"]
    hoist = ", hoisting during the move" if data["hoisting"] else ""
    fig.suptitle(f"{data['title']}\nrope {rig['rope_length_m']:g} m, payload {rig['payload_mass_kg']:g} kg{hoist}",
                 x=0.01, ha="left", fontsize=10)
    axes[0].legend(loc="upper right", fontsize=8, framealpha=0.9)
    return fig


def _mesh(ax, x, y, z, **kw):
    return ax.pcolormesh(x, y, z, shading="nearest", rasterized=True, **kw)


def frequency_map_figure(data: dict):
    """One heat map per mode: frequency (Hz) over payload mass (x) and rope length (y)."""
    L, m = np.asarray(data["rope_length_m"]), np.asarray(data["payload_mass_kg"])
    modes = data["modes"]
    fig = _new_figure(4.2 * len(modes), 3.8)
    axes = np.atleast_1d(fig.subplots(1, len(modes)))
    for ax, mode in zip(axes, modes, strict=True):
        F = np.asarray(mode["frequency_hz"])
        pc = _mesh(ax, m, L, F)
        if F.max() > F.min() and len(L) > 1 and len(m) > 1:
            cs = ax.contour(m, L, F, levels=8, colors="white", linewidths=0.6)
            ax.clabel(cs, fontsize=7, fmt="%.3g")
        ax.plot(*data["nominal"][::-1], marker="o", color="tab:red", ms=5, ls="none")
        ax.set_title(f"mode {mode['mode']}: {F.min():.3g}-{F.max():.3g} Hz", loc="left")
        ax.set_xlabel("payload mass (kg)")
        ax.set_ylabel("rope length (m)")
        ax.grid(False)
        fig.colorbar(pc, ax=ax, label="frequency (Hz)")
    fig.suptitle(data["title"] + " (red dot: nominal rig)", x=0.01, ha="left", fontsize=10)
    return fig


def residual_map_figure(data: dict):
    """Unshaped residual (mm) and each design's residual (% of unshaped) over the envelope."""
    L, m = np.asarray(data["rope_length_m"]), np.asarray(data["payload_mass_kg"])
    maps = data["maps"]
    tol = data["tolerance_pct"]
    ncol = min(2, len(maps))
    nrow = -(-len(maps) // ncol)
    fig = _new_figure(4.4 * ncol, 3.6 * nrow)
    axes = np.atleast_1d(fig.subplots(nrow, ncol)).ravel()
    share = data.get("share_within_tolerance", {})
    for ax, mp in zip(axes, maps, strict=False):
        ax.grid(False)
        if mp["key"] == "unshaped":
            Z = np.asarray(mp["residual_mm"])
            pc = _mesh(ax, m, L, Z, cmap="viridis")
            fig.colorbar(pc, ax=ax, label="residual sway (mm)")
            top_mm = f"{Z.max():.0f}" if Z.max() >= 100 else f"{Z.max():.3g}"
            ax.set_title(f"unshaped\nup to {top_mm} mm", loc="left", fontsize=9)
        else:
            Z = np.asarray(mp["ratio_pct"])
            top = max(2.0 * tol, float(Z.max()))
            pc = _mesh(ax, m, L, Z, cmap="RdYlGn_r", norm=TwoSlopeNorm(vmin=0.0, vcenter=tol, vmax=top))
            if Z.max() > tol and Z.min() < tol and len(L) > 1 and len(m) > 1:
                ax.contour(m, L, Z, levels=[tol], colors="black", linewidths=1.0)
            fig.colorbar(pc, ax=ax, label="% of unshaped residual")
            within = share.get(mp["key"])
            extra = f"; {100 * within:.1f} % of rigs within {tol:g} %" if within is not None else ""
            ax.set_title(f"{mp['label']}\nworst {Z.max():.3g} % of unshaped{extra}", loc="left", fontsize=9)
        ax.set_xlabel("payload mass (kg)")
        ax.set_ylabel("rope length (m)")
    for ax in axes[len(maps):]:
        ax.set_visible(False)
    mv = data["move"]
    fig.suptitle(f"{data['title']}\n{mv['distance_m']:g} m {mv['profile']} at {mv['max_speed_m_s']:g} m/s, "
                 f"{mv['max_accel_m_s2']:g} m/s2, rope held; black line: {tol:g} % of unshaped",
                 x=0.01, ha="left", fontsize=10)
    return fig


_RENDERERS = {"sensitivity": sensitivity_figure, "time_response": time_response_figure,
              "frequency_map": frequency_map_figure, "residual_map": residual_map_figure,
              "damping_map": damping_map_figure, "closed_loop_response": closed_loop_response_figure,
              "sway_fit": sway_fit_figure}


def render(data: dict):
    """The Figure for one figure-data dict (dispatch on ``data['kind']``)."""
    kind = data.get("kind")
    if kind not in _RENDERERS:
        raise ConfigError(f"unknown figure kind {kind!r}; allowed: {', '.join(_RENDERERS)}")
    with matplotlib.rc_context(RC):
        return _RENDERERS[kind](data)


def figure_bytes(fig, fmt: str) -> bytes:
    """PNG or SVG bytes of ``fig``, deterministic (no date or software stamps, fixed SVG ids)."""
    buf = io.BytesIO()
    with matplotlib.rc_context(RC):
        if fmt == "png":
            fig.savefig(buf, format="png", dpi=PNG_DPI, metadata={"Software": None})
        elif fmt == "svg":
            fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
        else:
            raise ConfigError(f"figure format {fmt!r} is not allowed; allowed: 'png', 'svg'")
    return buf.getvalue()


def render_formats(data: dict, formats=FORMATS) -> dict[str, bytes]:
    """``{fmt: bytes}`` of one figure-data dict, drawn once and laid out once for every format."""
    fig = render(data)
    out = {}
    for fmt in formats:
        out[fmt] = figure_bytes(fig, fmt)
        fig.set_layout_engine("none")  # keep the layout just computed for the next formats
    return out


def submit_figures(pool, figures: dict, formats=FORMATS):
    """Hand every figure to ``pool`` (one task each); returns a callable that waits and gives the files.

    The caller may do other work in this process (the demo builds its C self-test) while the pool draws.

    Returns
    -------
    callable () -> dict
        ``{"<name>.<fmt>": bytes}`` in name order, as :func:`figure_files`.
    """
    names = sorted(figures)
    jobs = [pool.submit(render_formats, figures[k], tuple(formats)) for k in names]

    def collect() -> dict[str, bytes]:
        return {f"{name}.{fmt}": job.result()[fmt] for name, job in zip(names, jobs, strict=True) for fmt in formats}

    return collect


def figure_files(figures: dict, formats=FORMATS, *, n_workers: int | None = None) -> dict[str, bytes]:
    """``{"<name>.<fmt>": bytes}`` for every ``{name: figure data}``, in name order.

    Parameters
    ----------
    figures : dict
        ``{name: figure data}`` (:mod:`stillhook.report.figure_data`).
    formats : sequence of {"png", "svg"}
    n_workers : int >= 1, optional
        Processes drawing figures (default: one per core, never more than figures; 1 draws here).
    """
    names = sorted(figures)
    drawn = map_tasks(render_formats, [(figures[k], tuple(formats)) for k in names],
                      worker_count(len(names), n_workers))
    return {f"{name}.{fmt}": data for name, by_fmt in zip(names, drawn, strict=True) for fmt, data in by_fmt.items()}
