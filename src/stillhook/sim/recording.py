"""Simulation output files: CSV time series and a plot of one move."""

from __future__ import annotations

import io

import matplotlib
import matplotlib.pyplot as plt
import numpy as np

from stillhook.model.rig import Rig
from stillhook.sim.dynamics import SimResult

__all__ = ["CSV_COLUMNS", "sim_csv", "sim_plot_png"]

#: CSV column -> SimResult attribute. The names are the sway-log columns ``stillhook identify`` and
#: ``stillhook calibrate`` read (stillhook.commission.logs), so a simulated move can be identified.
CSV_COLUMNS = {"time_s": "t_s", "trolley_position_m": "trolley_position_m", "trolley_speed_m_s": "trolley_speed_m_s",
               "rope_length_m": "rope_length_m", "hook_angle_rad": "theta1_rad", "payload_angle_rad": "theta2_rad",
               "hook_offset_m": "hook_offset_m", "payload_offset_m": "payload_offset_m"}


def sim_csv(result: SimResult, *, payload_mass_kg: float | None = None, rope_offset_m: float = 0.0) -> str:
    """CSV text of the time series, one row per output sample, fixed 9 significant digits.

    ``rope_length_m`` is written as the hoist encoder reads it: the pendulum length minus ``rope_offset_m``;
    ``payload_mass_kg``, when given, adds that column.
    """
    values = {name: getattr(result, attr) for name, attr in CSV_COLUMNS.items()}
    values["rope_length_m"] = values["rope_length_m"] - rope_offset_m
    if payload_mass_kg is not None:
        values["payload_mass_kg"] = np.full(result.t_s.size, float(payload_mass_kg))
    buf = io.StringIO()
    buf.write(",".join(values) + "\n")
    np.savetxt(buf, np.column_stack(list(values.values())), delimiter=",", fmt="%.9g")
    return buf.getvalue()


def sim_plot_png(result: SimResult, rig: Rig) -> bytes:
    """PNG of trolley speed, rope length and hook/payload offsets over time (deterministic bytes)."""
    matplotlib.use("Agg")
    fig, axes = plt.subplots(3, 1, figsize=(8, 7), sharex=True, constrained_layout=True)
    t = result.t_s
    axes[0].plot(t, result.trolley_speed_m_s, color="tab:blue")
    axes[0].set_ylabel("trolley speed (m/s)")
    axes[1].plot(t, result.rope_length_m, color="tab:gray")
    axes[1].set_ylabel("rope length L1 (m)")
    axes[2].plot(t, result.hook_offset_m, label="hook", color="tab:orange")
    axes[2].plot(t, result.payload_offset_m, label="payload", color="tab:green")
    axes[2].axvline(result.command_end_s, color="k", lw=0.8, ls="--", label="command ends")
    axes[2].set_ylabel("offset from trolley (m)")
    axes[2].set_xlabel("time (s)")
    axes[2].legend(loc="upper right")
    for ax in axes:
        ax.grid(True, alpha=0.3)
    fig.suptitle(f"payload {rig.payload_mass_kg:g} kg, hook {rig.hook_mass_kg:g} kg, rigging "
                 f"{rig.rigging_length_m:g} m: residual payload sway {result.residual_payload_sway_m:.3f} m")
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=90, metadata={"Software": None})
    plt.close(fig)
    return buf.getvalue()
