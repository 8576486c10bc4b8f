"""Envelope sweep: residual payload sway of every design over the rope-length x payload-mass envelope.

For one move (the project's [move]: distance and profile at the drive's speed and acceleration limits, fixed
rope length) every rig of a grid, or of random samples of the envelope, is run with each design's
command: unshaped, the project's one-for-the-envelope shaper, the length-scheduled shaper (each rig
gets the row the firmware picks for its rope length) and the notch cascade. The residual sway is
computed exactly on the linear model for all rigs at once (:mod:`stillhook.study.modal_sweep`); a few
rigs (the envelope's corners) are re-run on the nonlinear simulator, all in one batch
(:func:`stillhook.sim.dynamics.simulate_batch`)
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

import contextlib
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor

import numpy as np

from stillhook.checks import MAX_SWEEP_RIGS, check_quantity, check_work
from stillhook.errors import ConfigError
from stillhook.notch.design import notch_for_project
from stillhook.shaping.envelope_design import design_for_project
from stillhook.sim.dynamics import SETTLE_WINDOW_S, simulate_batch
from stillhook.sim.profiles import project_move
from stillhook.study.modal_sweep import AccelRuns, ModalBatch, end_amplitudes, peak_after_end
from stillhook.study.sweep_result import SpotCheck, SweepDesign, SweepResult
from stillhook.workers import worker_count

__all__ = ["CHUNK_RIGS", "DESIGN_KEYS", "MAX_RIGS", "SpotCheck", "SweepDesign", "SweepResult", "project_designs",
           "residuals", "spot_checks", "sweep_project"]

#: Designs the sweep knows, in output order.
DESIGN_KEYS = ("unshaped", "shaper", "schedule", "notch")
#: Default grid (rope lengths x payload masses).
DEFAULT_GRID = (21, 21)
#: Travel distance of the benchmarks' sweep move (m); sweep_project uses the project's [move] distance_m.
DEFAULT_DISTANCE_M = 6.0
#: Largest number of rigs one sweep accepts (memory: ~50 bytes per rig and design for points and results).
MAX_RIGS = MAX_SWEEP_RIGS
#: Rigs per chunk: the sweep's working memory is bounded by this (~100 MB at most for a notch command).
CHUNK_RIGS = 4096


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
    check_work("sweep rigs (grid size)", n_rope * n_payload, MAX_RIGS, hint="use a coarser --grid")
    Ls, ms = envelope.grid(n_rope, n_payload)
    L, m = np.meshgrid(Ls, ms, indexing="ij")
    return L.ravel(), m.ravel()


def random_points(envelope, n: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """``n`` rigs drawn uniformly over the envelope's rectangle (numpy PCG64, fixed ``seed``)."""
    check_quantity("random_rigs", n, name="number of samples")
    rng = np.random.default_rng(seed)
    (L0, L1), (m0, m1) = envelope.rope_length_range_m, envelope.payload_mass_range_kg
    return rng.uniform(L0, L1, n) if L1 > L0 else np.full(n, L0), rng.uniform(m0, m1, n) if m1 > m0 else np.full(n, m0)


# -- the sweep -----------------------------------------------------------------------------------
def _chunk_residuals(batch: ModalBatch, runs, settle_s: float, rows) -> np.ndarray:
    """Residual sway (designs, r) of one chunk of rigs; runs[i][row] are design i's AccelRuns."""
    R = batch.size
    Y = np.zeros((len(runs), R, 2), dtype=complex)
    for i, (design_runs, design_rows) in enumerate(zip(runs, rows, strict=True)):
        for r, acc in enumerate(design_runs):
            idx = np.nonzero(design_rows == r)[0]
            if idx.size:
                Y[i, idx] = end_amplitudes(batch.take(idx), acc)
    return peak_after_end(batch, Y, settle_s)


def residuals(batch: ModalBatch, designs, cycle_s: float, *, settle_s: float = SETTLE_WINDOW_S,
              progress: Callable[[int, int], None] | None = None, workers: int | None = None) -> dict:
    """Residual payload sway (m) of every rig of ``batch`` under every design: {key: ndarray (R,)}.

    The rigs are taken CHUNK_RIGS at a time, so the working memory does not grow with the rig count
    (only the results, 8 bytes per rig and design); chunks run in ``workers`` processes (default one
    per available core when there are several chunks). Results do not depend on the worker count.
    """
    R = batch.size
    runs = [[AccelRuns.from_speed(cmd, cycle_s) for cmd in d.commands] for d in designs]
    rows = [d.rows_for(batch.rope_length_m) for d in designs]
    chunks = [slice(b, min(b + CHUNK_RIGS, R)) for b in range(0, R, CHUNK_RIGS)]
    n_workers = worker_count(len(chunks), workers)
    args = ((batch.take(sl), runs, settle_s, [r[sl] for r in rows]) for sl in chunks)
    out = np.empty((len(designs), R))
    with contextlib.ExitStack() as stack:
        if n_workers > 1:
            pool = stack.enter_context(ProcessPoolExecutor(n_workers))
            parts = pool.map(_chunk_residuals, *zip(*args, strict=True))
        else:
            parts = (_chunk_residuals(*a) for a in args)
        for sl, part in zip(chunks, parts, strict=True):
            out[:, sl] = part
            if progress is not None:
                progress(sl.stop, R)
    return {d.key: out[i] for i, d in enumerate(designs)}


#: Designs not re-run on the nonlinear simulator: none since the batch engine runs a notch's long
#: ring-out in milliseconds.
UNCHECKED_KEYS = ()


def spot_checks(project, designs, points, cycle_s: float) -> list[SpotCheck]:
    """Re-run ``points`` [(L, m), ...] on the nonlinear simulator for every design not in UNCHECKED_KEYS."""
    designs = [d for d in designs if d.key not in UNCHECKED_KEYS]
    env = project.envelope
    L = np.array([p[0] for p in points])
    m = np.array([p[1] for p in points])
    lin = residuals(ModalBatch.from_envelope(env, L, m), designs, cycle_s)
    runs = [(n, d) for n in range(len(points)) for d in designs]
    sims = simulate_batch([env.rig(L[n], m[n]) for n, _ in runs],
                          [d.commands[int(d.rows_for(L[n]))] for n, d in runs], cycle_s)
    out = []
    for n, (Ln, mn) in enumerate(points):
        mine = [(d, sim) for (i, d), sim in zip(runs, sims, strict=True) if i == n]
        nonlin = {d.key: sim.residual_payload_sway_m for d, sim in mine}
        peak = next((sim.peak_payload_offset_m for d, sim in mine if d.key == "unshaped"), 0.0)
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
    distance_m : float in (0, 1000], optional
        Travel distance of the move; default the project's ``[move] distance_m``. The move is the project's
        (``[move] profile`` at the drive's limits) with the rope length held: hoisting is in the comparison.
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
    d_m = project.move["distance_m"] if distance_m is None else check_quantity("distance_m", distance_m)
    speed, _ = project_move(project, d_m)  # the project's move; the linear sweep holds the rope length
    if samples is not None:
        L, m = random_points(env, check_quantity("random_rigs", samples, name="samples"), seed)
        shape = None
    else:
        if grid is None or len(grid) != 2:
            raise ConfigError(f"grid = {grid!r}; allowed: (n_rope, n_payload), each >= 1")
        n_rope, n_payload = (check_quantity("grid_points", v, name="grid") for v in grid)
        # a range that is one point gets one grid line, not n copies of the same rig
        n_rope = 1 if env.rope_length_range_m[0] == env.rope_length_range_m[1] else n_rope
        n_payload = 1 if env.payload_mass_range_kg[0] == env.payload_mass_range_kg[1] else n_payload
        L, m = grid_points(env, n_rope, n_payload)
        shape = (n_rope, n_payload)
    designs, notes = project_designs(project, speed, keys=keys, design=design, notch=notch)
    batch = ModalBatch.from_envelope(env, L, m)
    res = residuals(batch, designs, T, progress=progress)
    checks = spot_checks(project, designs, env.corners(), T) if check else []
    if check and any(d.key in UNCHECKED_KEYS for d in designs):
        notes.append("spot checks: the notch is not re-run on the nonlinear simulator (its ring-out makes "
                     "that slow); the linear model's error is second order in the sway amplitude")
    if project.move["hoist_to_m"] is not None:
        notes.append("the sweep holds the rope length; the project's hoisting during the move is in the comparison")
    move = {"profile": project.move["profile"], "distance_m": float(d_m), "max_speed_m_s": drive["max_speed_m_s"],
            "max_accel_m_s2": drive["max_accel_m_s2"], "cycle_s": T,
            "command_end_s": AccelRuns.from_speed(speed, T).command_end_s, "settle_window_s": SETTLE_WINDOW_S,
            "hoisting": False}
    return SweepResult(L, m, shape, tuple(designs), res, project.design["tolerance_pct"] / 100.0, move,
                       tuple(checks), tuple(notes))
