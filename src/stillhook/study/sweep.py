"""Envelope sweep: residual payload sway of every design over the rope-length x payload-mass envelope.

For one move (a rest-to-rest trapezoid at the drive's speed and acceleration limits, fixed rope
length) every rig of a grid, or of random samples of the envelope, is run with each design's
command: unshaped, the project's one-for-the-envelope shaper, the length-scheduled shaper (each rig
gets the row the firmware picks for its rope length) and the notch cascade. The residual sway is
computed exactly on the linear model for all rigs at once (:mod:`stillhook.study.modal_sweep`); a few
rigs (the envelope's corners) are re-run on the nonlinear simulator (:func:`stillhook.sim.dynamics.simulate`)
and the disagreement is reported with the results.

Within the tolerance means: residual sway with the design <= tolerance x unshaped residual sway at
the same rig (``[design] tolerance_pct``, the fraction a shaper's V is held to).

Notes
-----
Residual vibration and its tolerance: Singer & Seering, "Preshaping command inputs to reduce
system vibration", ASME J. Dyn. Sys. Meas. Control 112(1):76-82, 1990. The sweep's method is
described in :mod:`stillhook.study.modal_sweep`.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from stillhook.errors import ConfigError
from stillhook.notch.design import notch_for_project
from stillhook.shaping.envelope_design import design_for_project
from stillhook.sim.dynamics import SETTLE_WINDOW_S, simulate
from stillhook.sim.profiles import trapezoid
from stillhook.study.modal_sweep import AccelRuns, ModalBatch, end_amplitudes, peak_after_end
from stillhook.study.sweep_result import SpotCheck, SweepDesign, SweepResult

__all__ = ["DESIGN_KEYS", "SpotCheck", "SweepDesign", "SweepResult", "project_designs", "residuals",
           "spot_checks", "sweep_project"]

#: Designs the sweep knows, in output order.
DESIGN_KEYS = ("unshaped", "shaper", "schedule", "notch")
#: Default grid (rope lengths x payload masses).
DEFAULT_GRID = (21, 21)
#: Default travel distance of the sweep's move (m).
DEFAULT_DISTANCE_M = 6.0
#: Largest number of rigs one sweep accepts.
MAX_RIGS = 200_000


# -- designs -------------------------------------------------------------------------------------
def project_designs(project, speed_m_s, *, keys=DESIGN_KEYS, design=None, notch=None) -> tuple[list, list]:
    """The sweep's designs for a project and one speed command.

    Parameters
    ----------
    project : stillhook.project.Project
    speed_m_s : ndarray
        The unshaped command (m/s per cycle).
    keys : sequence of str
        Subset of :data:`DESIGN_KEYS`; 'unshaped' is always included.
    design : stillhook.shaping.envelope_design.Design, optional
        Default ``design_for_project(project)``.
    notch : stillhook.notch.design.NotchDesign, optional
        Default ``notch_for_project(project)``.

    Returns
    -------
    (designs, notes) : list of SweepDesign, list of str
    """
    unknown = [k for k in keys if k not in DESIGN_KEYS]
    if unknown:
        raise ConfigError(f"unknown design(s) {', '.join(map(repr, unknown))}; allowed: {', '.join(DESIGN_KEYS)}")
    T = project.drive["cycle_s"]
    v = np.asarray(speed_m_s, dtype=float)
    out = [SweepDesign("unshaped", "unshaped", 0.0, (v,))]
    notes: list[str] = []
    if ("shaper" in keys or "schedule" in keys) and design is None:
        design = design_for_project(project)
    if "shaper" in keys:
        sh = design.shaper
        out.append(SweepDesign("shaper", f"shaper {sh.name}".strip(), sh.added_duration_s, (sh.apply(v, T),)))
    if "schedule" in keys:
        sched = design.schedule
        if sched is None:
            notes.append("no length schedule: [design] schedule = false or the design needs none")
        else:
            rule = sched.lookup_rule
            cmds = tuple(s.apply(v, T) for s in sched.shapers)
            rows = np.asarray(sched.rope_lengths_m, dtype=float)
            out.append(SweepDesign("schedule", f"length schedule ({len(rows)} rows, {rule})",
                                   max(s.added_duration_s for s in sched.shapers), cmds, rows, rule,
                                   project.firmware.get("rope_length_lsb_m")))
    if "notch" in keys:
        if notch is None:
            notch = notch_for_project(project)
        freqs = ", ".join(f"{f:.3g}" for f in notch.freqs_hz)
        out.append(SweepDesign("notch", f"notch ({freqs} Hz)", notch.added_duration_s, (notch.apply(v, T),)))
    return out, notes


# -- rigs ----------------------------------------------------------------------------------------
def grid_points(envelope, n_rope: int, n_payload: int) -> tuple[np.ndarray, np.ndarray]:
    """Paired rope lengths and payload masses of an n_rope x n_payload grid (rope-major order)."""
    _check_count("grid size", n_rope * n_payload)
    Ls, ms = envelope.grid(n_rope, n_payload)
    L, m = np.meshgrid(Ls, ms, indexing="ij")
    return L.ravel(), m.ravel()


def random_points(envelope, n: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """``n`` rigs drawn uniformly over the envelope's rectangle (numpy PCG64, fixed ``seed``)."""
    _check_count("number of samples", n)
    rng = np.random.default_rng(seed)
    (L0, L1), (m0, m1) = envelope.rope_length_range_m, envelope.payload_mass_range_kg
    return rng.uniform(L0, L1, n) if L1 > L0 else np.full(n, L0), rng.uniform(m0, m1, n) if m1 > m0 else np.full(n, m0)


def corner_points(envelope) -> list[tuple[float, float]]:
    """The envelope's distinct corners (rope length, payload mass)."""
    out = []
    for L in envelope.rope_length_range_m:
        for m in envelope.payload_mass_range_kg:
            if (L, m) not in out:
                out.append((L, m))
    return out


def _check_count(what: str, n: int) -> None:
    if not 1 <= n <= MAX_RIGS:
        raise ConfigError(f"{what} = {n} is out of range; allowed: 1 to {MAX_RIGS} rigs")


# -- the sweep -----------------------------------------------------------------------------------
def residuals(batch: ModalBatch, designs, cycle_s: float, *, settle_s: float = SETTLE_WINDOW_S,
              progress: Callable[[int, int], None] | None = None) -> dict:
    """Residual payload sway (m) of every rig of ``batch`` under every design: {key: ndarray (R,)}."""
    R = batch.size
    Y = np.zeros((len(designs), R, 2), dtype=complex)
    for i, d in enumerate(designs):
        rows = d.rows_for(batch.rope_length_m)
        for r, cmd in enumerate(d.commands):
            idx = np.nonzero(rows == r)[0]
            if idx.size:
                Y[i, idx] = end_amplitudes(batch.take(idx), AccelRuns.from_speed(cmd, cycle_s))
    peaks = np.empty((len(designs), R))
    step = 1024
    for b0 in range(0, R, step):
        sl = slice(b0, min(b0 + step, R))
        peaks[:, sl] = peak_after_end(batch.take(np.arange(sl.start, sl.stop)), Y[:, sl], settle_s)
        if progress is not None:
            progress(sl.stop, R)
    return {d.key: peaks[i] for i, d in enumerate(designs)}


#: Designs not re-run on the nonlinear simulator: the notch output changes every cycle for its whole
#: ring-out, which makes a solve_ivp run take tens of seconds (the linear model's error does not
#: depend on the command's shape; it is second order in the sway amplitude).
UNCHECKED_KEYS = ("notch",)


def spot_checks(project, designs, points, cycle_s: float) -> list[SpotCheck]:
    """Re-run ``points`` [(L, m), ...] on the nonlinear simulator for every design not in UNCHECKED_KEYS."""
    designs = [d for d in designs if d.key not in UNCHECKED_KEYS]
    env = project.envelope
    L = np.array([p[0] for p in points])
    m = np.array([p[1] for p in points])
    lin = residuals(ModalBatch.from_envelope(env, L, m), designs, cycle_s)
    out = []
    for n, (Ln, mn) in enumerate(points):
        rig = env.rig(Ln, mn)
        nonlin, peak = {}, 0.0
        for d in designs:
            sim = simulate(rig, d.commands[int(d.rows_for(Ln))], cycle_s)
            nonlin[d.key] = sim.residual_payload_sway_m
            if d.key == "unshaped":
                peak = sim.peak_payload_offset_m
        out.append(SpotCheck(float(Ln), float(mn), {d.key: float(lin[d.key][n]) for d in designs}, nonlin, peak))
    return out


def sweep_project(project, *, grid: tuple[int, int] | None = DEFAULT_GRID, samples: int | None = None,
                  seed: int = 0, distance_m: float | None = None, keys=DESIGN_KEYS, design=None, notch=None,
                  check: bool = True, progress: Callable[[int, int], None] | None = None) -> SweepResult:
    """Residual sway of each design over the project's envelope.

    Parameters
    ----------
    project : stillhook.project.Project
    grid : (n_rope >= 1, n_payload >= 1), default (21, 21)
        Evenly spaced grid over the envelope; ignored when ``samples`` is given.
    samples : int >= 1, optional
        Random rigs drawn uniformly over the envelope instead (reproducible with ``seed``).
    seed : int
    distance_m : float > 0, optional
        Travel distance of the trapezoid move; default :data:`DEFAULT_DISTANCE_M` (6 m).
    keys : sequence of str
        Designs to sweep (subset of :data:`DESIGN_KEYS`).
    design, notch : optional
        Pre-computed ``design_for_project(project)`` / ``notch_for_project(project)``.
    check : bool, default True
        Re-run the envelope's corners on the nonlinear simulator and report the disagreement.
    progress : callable(done, total), optional
        Called as blocks of rigs finish.

    Returns
    -------
    SweepResult
    """
    env = project.envelope
    drive = project.drive
    T = drive["cycle_s"]
    d_m = DEFAULT_DISTANCE_M if distance_m is None else distance_m
    if not (isinstance(d_m, int | float) and math.isfinite(d_m) and 0 < d_m <= 1000):
        raise ConfigError(f"distance = {d_m!r} m is out of range; allowed: 0 < distance <= 1000 m")
    speed = trapezoid(d_m, drive["max_speed_m_s"], drive["max_accel_m_s2"], T)
    if samples is not None:
        L, m = random_points(env, int(samples), seed)
        shape = None
    else:
        if grid is None or len(grid) != 2:
            raise ConfigError(f"grid = {grid!r}; allowed: (n_rope, n_payload), each >= 1")
        n_rope, n_payload = (int(v) for v in grid)
        if n_rope < 1 or n_payload < 1:
            raise ConfigError(f"grid = {n_rope} x {n_payload}; allowed: at least 1 x 1")
        L, m = grid_points(env, n_rope, n_payload)
        shape = (n_rope, n_payload)
    designs, notes = project_designs(project, speed, keys=keys, design=design, notch=notch)
    batch = ModalBatch.from_envelope(env, L, m)
    res = residuals(batch, designs, T, progress=progress)
    checks = spot_checks(project, designs, corner_points(env), T) if check else []
    if check and any(d.key in UNCHECKED_KEYS for d in designs):
        notes.append("spot checks: the notch is not re-run on the nonlinear simulator (its ring-out makes "
                     "that slow); the linear model's error is second order in the sway amplitude")
    move = {"profile": "trapezoid", "distance_m": float(d_m), "max_speed_m_s": drive["max_speed_m_s"],
            "max_accel_m_s2": drive["max_accel_m_s2"], "cycle_s": T,
            "command_end_s": AccelRuns.from_speed(speed, T).command_end_s, "settle_window_s": SETTLE_WINDOW_S,
            "hoisting": False}
    return SweepResult(L, m, shape, tuple(designs), res, project.design["tolerance_pct"] / 100.0, move,
                       tuple(checks), tuple(notes))
