"""Figures of the feedback section: closed-loop damping map and scenario time responses (matplotlib, Agg)."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

__all__ = ["closed_loop_response_figure", "damping_map_figure"]

_CONTROLLER_COLORS = {"none": "#7f7f7f", "shaper": "#1f77b4", "feedback": "#d62728", "shaper+feedback": "#2ca02c"}


def damping_map_figure(data: dict):
    """Least closed-loop damping ratio over payload mass (x) and rope length (y), rows' switches marked."""
    L, m, Z = (np.asarray(data[k]) for k in ("rope_length_m", "payload_mass_kg", "damping_ratio"))
    fig = Figure(figsize=(6.4, 4.6), layout="constrained")
    ax = fig.subplots()
    pc = ax.pcolormesh(m, L, Z, shading="nearest", rasterized=True, cmap="viridis")
    fig.colorbar(pc, ax=ax, label="least closed-loop damping ratio")
    for e in data["switch_lengths_m"]:
        ax.axhline(e, color="white", lw=0.6, ls="--")
    w = data["worst_at"]
    ax.plot([w["payload_mass_kg"]], [w["rope_length_m"]], marker="x", color="tab:red", ms=9, ls="none")
    ax.set_xlabel("payload mass (kg)")
    ax.set_ylabel("rope length (m)")
    ax.grid(False)
    ax.set_title(f"{data['title']}\nx: worst point; dashed: row switches; accepted >= {data['min_damping_ratio']:g}",
                 loc="left", fontsize=9)
    return fig


def closed_loop_response_figure(data: dict):
    """Payload offset against time for each scenario and controller."""
    scen = data["scenarios"]
    fig = Figure(figsize=(8.0, 2.8 * len(scen)), layout="constrained")
    axes = np.atleast_1d(fig.subplots(len(scen), 1))
    for ax, sc in zip(axes, scen, strict=True):
        for name, y in sc["payload_offset_m"].items():
            t = np.asarray(sc["t_s"][name])
            ax.plot(t, 1000.0 * np.asarray(y), lw=1.0, color=_CONTROLLER_COLORS.get(name, "black"), label=name)
        ax.set_ylabel("payload offset (mm)")
        ax.set_title(sc["label"], loc="left", fontsize=9)
        ax.legend(loc="upper right", fontsize=8, framealpha=0.9)
    axes[-1].set_xlabel("time (s)")
    fig.suptitle(data["title"], x=0.01, ha="left", fontsize=10)
    return fig
