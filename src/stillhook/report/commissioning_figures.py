"""Figure of an identified segment: measured vs fitted sway and the residual, per signal (matplotlib)."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

__all__ = ["sway_fit_figure"]


def sway_fit_figure(data: dict):
    """Two rows per signal: measured and fitted over time, then the residual (measured - fitted)."""
    series = data["series"]
    fig = Figure(figsize=(8.0, 2.6 * max(1, len(series))), layout="constrained")
    axes = fig.subplots(2 * max(1, len(series)), 1, sharex=True, squeeze=False)[:, 0]
    for n, s in enumerate(series):
        t, y, f = (np.asarray(s[k]) for k in ("t_s", "measured", "fitted"))
        ax, res = axes[2 * n], axes[2 * n + 1]
        ax.plot(t, y, color="tab:gray", lw=0.8, label="measured")
        ax.plot(t, f, color="tab:blue", lw=1.0, ls="--", label="fitted")
        ax.set_ylabel(s["signal"])
        ax.legend(loc="upper right")
        res.plot(t, y - f, color="tab:red", lw=0.6)
        res.set_ylabel("residual")
    axes[-1].set_xlabel("time (s)")
    fig.suptitle(data["title"], x=0.01, ha="left", fontsize=10)
    return fig
