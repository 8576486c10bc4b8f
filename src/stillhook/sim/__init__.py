"""Motion and simulation: trolley and hoist profiles, the large-angle nonlinear dynamics, recordings.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "run_closed_loop": "stillhook.sim.closed_loop",
    "cycle_step": "stillhook.sim.closed_loop",
    "Sensor": "stillhook.sim.closed_loop",
    "ClosedLoopResult": "stillhook.sim.closed_loop",
    "CommandFilter": "stillhook.sim.command_filter",
    "check_below_half_rate": "stillhook.sim.drive_rate",
    "half_rate_hz": "stillhook.sim.drive_rate",
    "Unfiltered": "stillhook.sim.command_filter",
    "UNFILTERED": "stillhook.sim.command_filter",
    "SimResult": "stillhook.sim.dynamics",
    "time_within_s": "stillhook.sim.dynamics",
    "simulate": "stillhook.sim.dynamics",
    "mechanical_energy_j": "stillhook.sim.dynamics",
    "SETTLE_WINDOW_S": "stillhook.sim.dynamics",
    "trapezoid": "stillhook.sim.profiles",
    "s_curve": "stillhook.sim.profiles",
    "pendant_steps": "stillhook.sim.profiles",
    "hoist_speeds": "stillhook.sim.profiles",
    "hoist_lengths": "stillhook.sim.profiles",
    "project_move": "stillhook.sim.profiles",
    "DEFAULT_JERK_PER_ACCEL_1_S": "stillhook.sim.profiles",
    "sim_csv": "stillhook.sim.recording",
    "sim_plot_png": "stillhook.sim.recording",
    "CSV_COLUMNS": "stillhook.sim.recording",
    "sos_filter": "stillhook.sim.sos_filter",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
