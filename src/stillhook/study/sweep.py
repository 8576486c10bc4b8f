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

import dataclasses
from collections.abc import Callable

import numpy as np

from stillhook.checks import MAX_SWEEP_RIGS, check_quantity, check_work
from stillhook.errors import ConfigError
from stillhook.model.uncertainty import UNCERTAIN_PARAMETERS
from stillhook.notch.design import notch_for_project
from stillhook.shaping.envelope_design import design_for_project
from stillhook.sim.dynamics import SETTLE_WINDOW_S, simulate_batch
from stillhook.sim.profiles import project_move
from stillhook.study.modal_sweep import AccelRuns, end_amplitudes, peak_after_end
from stillhook.study.rig_samples import RigSamples, random_points, random_rigs
from stillhook.study.sweep_result import SpotCheck, SweepDesign, SweepResult
from stillhook.workers import map_tasks, worker_count

__all__ = ["CHUNK_RIGS", "DESIGN_KEYS", "MAX_RIGS", "RigSamples", "SpotCheck", "SweepDesign", "SweepResult",
           "grid_points", "project_designs", "random_points", "random_rigs", "residuals", "spot_checks",
           "sweep_project"]

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


# -- the sweep -----------------------------------------------------------------------------------
def _chunk_residuals(rigs, envelope, runs, settle_s: float, rows) -> np.ndarray:
    """Residual sway (designs, r) of one chunk of rigs; runs[i][row] are design i's AccelRuns.

    ``rigs`` is a ModalBatch, or RigSamples whose modes are computed here (``envelope`` given).
    """
    batch = rigs if envelope is None else rigs.modal_batch(envelope)
    R = batch.size
    Y = np.zeros((len(runs), R, 2), dtype=complex)
    for i, (design_runs, design_rows) in enumerate(zip(runs, rows, strict=True)):
        for r, acc in enumerate(design_runs):
            idx = np.nonzero(design_rows == r)[0]
            if idx.size:
                Y[i, idx] = end_amplitudes(batch.take(idx), acc)
    return peak_after_end(batch, Y, settle_s)


def residuals(rigs, designs, cycle_s: float, *, envelope=None, settle_s: float = SETTLE_WINDOW_S,
              progress: Callable[[int, int], None] | None = None, workers: int | None = None) -> dict:
    """Residual payload sway (m) of every rig under every design: {key: ndarray (R,)}.

    Parameters
    ----------
    rigs : ModalBatch, or RigSamples with ``envelope``
        The rigs. For RigSamples the modes are computed chunk by chunk in the workers.
    designs : sequence of SweepDesign
    cycle_s : float > 0
    envelope : stillhook.model.envelope.Envelope, optional
        Needed (only) with RigSamples.
    settle_s : float > 0
    progress : callable(done, total), optional
    workers : int, optional
        Worker processes; default one per available core when there are several chunks.

    Notes
    -----
    The rigs are taken CHUNK_RIGS at a time, so the working memory does not grow with the rig count
    (only the rigs and results, 8 bytes per rig and quantity); chunks are fixed by the rig count alone,
    so the results do not depend on the worker count.
    """
    if isinstance(rigs, RigSamples) and envelope is None:
        raise ConfigError("residuals of RigSamples need the envelope; allowed: envelope=project.envelope")
    env = envelope if isinstance(rigs, RigSamples) else None
    R = rigs.size
    runs = [[AccelRuns.from_speed(cmd, cycle_s) for cmd in d.commands] for d in designs]
    rows = [d.rows_for(rigs.rope_length_m) for d in designs]
    chunks = [slice(b, min(b + CHUNK_RIGS, R)) for b in range(0, R, CHUNK_RIGS)]
    n_workers = worker_count(len(chunks), workers)
    args = ((rigs.take(sl), env, runs, settle_s, [r[sl] for r in rows]) for sl in chunks)
    out = np.empty((len(designs), R))
    for sl, part in zip(chunks, map_tasks(_chunk_residuals, args, n_workers), strict=True):
        out[:, sl] = part
        if progress is not None:
            progress(sl.stop, R)
    return {d.key: out[i] for i, d in enumerate(designs)}


#: Designs not re-run on the nonlinear simulator: none since the batch engine runs a notch's long
#: ring-out in milliseconds.
UNCHECKED_KEYS = ()


def spot_checks(project, designs, points, cycle_s: float) -> list[SpotCheck]:
    """Re-run ``points`` on the nonlinear simulator for every design not in UNCHECKED_KEYS.

    ``points`` is a RigSamples (each rig with its own uncertain parameters) or a list [(L, m), ...] of
    rigs with the envelope's hook mass, rigging length and damping.
    """
    designs = [d for d in designs if d.key not in UNCHECKED_KEYS]
    env = project.envelope
    if not isinstance(points, RigSamples):
        L, m = (np.array([p[i] for p in points], dtype=float) for i in (0, 1))
        points = RigSamples(L, m)
    lin = residuals(points, designs, cycle_s, envelope=env)
    L = points.rope_length_m
    runs = [(n, d) for n in range(points.size) for d in designs]
    rigs = [points.rig(env, n) for n in range(points.size)]
    sims = simulate_batch([rigs[n] for n, _ in runs], [d.commands[int(d.rows_for(L[n]))] for n, d in runs], cycle_s)
    out = []
    for n in range(points.size):
        mine = [(d, sim) for (i, d), sim in zip(runs, sims, strict=True) if i == n]
        nonlin = {d.key: sim.residual_payload_sway_m for d, sim in mine}
        peak = next((sim.peak_payload_offset_m for d, sim in mine if d.key == "unshaped"), 0.0)
        p = points.parameters(env, n)
        out.append(SpotCheck(p.pop("rope_length_m"), p.pop("payload_mass_kg"),
                             {d.key: float(lin[d.key][n]) for d in designs}, nonlin, peak, p))
    return out


def worst_rigs(result: SweepResult) -> list[int]:
    """Indices of the rigs with the worst ratio to the unshaped residual, one per design (distinct, in design
    order; the unshaped move has no ratio)."""
    out: list[int] = []
    for key in result.keys:
        if key != "unshaped":
            n = int(np.argmax(result.ratio(key)))
            if n not in out:
                out.append(n)
    return out


def _sweep_rigs(project, grid, samples, seed, vary_rig: bool) -> tuple[RigSamples, tuple | None, list]:
    """The sweep's rigs, the grid shape (None for samples) and notes on how uncertain parameters are treated."""
    env, unc = project.envelope, project.uncertainty
    uncertain = unc is not None and bool(unc.uncertain)
    notes = []
    if samples is not None:
        n = check_quantity("random_rigs", samples, name="samples")
        rigs = random_rigs(env, n, seed, unc if vary_rig else None)
        if uncertain and not vary_rig:
            notes.append("hook mass, rigging length and damping held at their [rig] values (nominal rig), "
                         "not sampled over [uncertainty]")
        return rigs, None, notes
    if grid is None or len(grid) != 2:
        raise ConfigError(f"grid = {grid!r}; allowed: (n_rope, n_payload), each >= 1")
    n_rope, n_payload = (check_quantity("grid_points", v, name="grid") for v in grid)
    # a range that is one point gets one grid line, not n copies of the same rig
    n_rope = 1 if env.rope_length_range_m[0] == env.rope_length_range_m[1] else n_rope
    n_payload = 1 if env.payload_mass_range_kg[0] == env.payload_mass_range_kg[1] else n_payload
    L, m = grid_points(env, n_rope, n_payload)
    if uncertain:
        notes.append("the grid holds hook mass, rigging length and damping at their [rig] values; random "
                     "samples (--samples) also draw them over [uncertainty]")
    return RigSamples(L, m), (n_rope, n_payload), notes


def sweep_project(project, *, grid: tuple[int, int] | None = DEFAULT_GRID, samples: int | None = None,
                  seed: int = 0, distance_m: float | None = None, keys=DESIGN_KEYS, design=None, notch=None,
                  check: bool = True, progress: Callable[[int, int], None] | None = None,
                  vary_rig: bool = True, workers: int | None = None) -> SweepResult:
    """Residual sway of each design over the project's envelope.

    Parameters
    ----------
    project : stillhook.project.Project
    grid : (n_rope >= 1, n_payload >= 1), default (21, 21)
        Evenly spaced grid over the envelope; ignored when ``samples`` is given. Hook mass, rigging length
        and damping keep their ``[rig]`` values.
    samples : int in [1, 10^6], optional
        Random rigs drawn uniformly over the envelope instead (reproducible with ``seed``), and over the
        ranges of ``[uncertainty]`` (hook mass, rigging length, damping) when the project gives them.
    seed : int in [0, 2^32 - 1]
    distance_m : float in (0, 1000], optional
        Travel distance of the move; default the project's ``[move] distance_m``. The move is the project's
        (``[move] profile`` at the drive's limits) with the rope length held: hoisting is in the comparison.
    keys : sequence of str
        Designs to sweep (subset of :data:`DESIGN_KEYS`).
    design, notch : optional
        Pre-computed ``design_for_project(project)`` / ``notch_for_project(project)``. The designs are always
        made for the nominal rig.
    check : bool, default True
        Re-run the envelope's corners (and, for random samples, each design's worst sampled rig) on the
        nonlinear simulator and report the disagreement.
    progress : callable(done, total), optional
        Called as blocks of rigs finish.
    vary_rig : bool, default True
        False holds hook mass, rigging length and damping at ``[rig]`` for random samples too.
    workers : int, optional
        Worker processes (default one per available core); the results do not depend on it.

    Returns
    -------
    SweepResult
    """
    env = project.envelope
    drive = project.drive
    T = drive["cycle_s"]
    d_m = project.move["distance_m"] if distance_m is None else check_quantity("distance_m", distance_m)
    speed, _ = project_move(project, d_m)  # the project's move; the linear sweep holds the rope length
    rigs, shape, rig_notes = _sweep_rigs(project, grid, samples, seed, vary_rig)
    designs, notes = project_designs(project, speed, keys=keys, design=design, notch=notch)
    notes += rig_notes
    res = residuals(rigs, designs, T, envelope=env, progress=progress, workers=workers)
    if check and any(d.key in UNCHECKED_KEYS for d in designs):
        notes.append("spot checks: the notch is not re-run on the nonlinear simulator (its ring-out makes "
                     "that slow); the linear model's error is second order in the sway amplitude")
    if project.move["hoist_to_m"] is not None:
        notes.append("the sweep holds the rope length; the project's hoisting during the move is in the comparison")
    move = {"profile": project.move["profile"], "distance_m": float(d_m), "max_speed_m_s": drive["max_speed_m_s"],
            "max_accel_m_s2": drive["max_accel_m_s2"], "cycle_s": T,
            "command_end_s": AccelRuns.from_speed(speed, T).command_end_s, "settle_window_s": SETTLE_WINDOW_S,
            "hoisting": False}
    nominal = {k: float(getattr(env, k)) for k in UNCERTAIN_PARAMETERS}
    described = project.uncertainty.describe() if rigs.varied else {}
    result = SweepResult(rigs.rope_length_m, rigs.payload_mass_kg, shape, tuple(designs), res,
                         project.design["tolerance_pct"] / 100.0, move, (), tuple(notes), rigs.varied, nominal,
                         described)
    if not check:
        return result
    corners = env.corners()
    points = RigSamples(np.array([c[0] for c in corners]), np.array([c[1] for c in corners]),
                        {k: np.full(len(corners), nominal[k]) for k in rigs.varied})
    if shape is None:  # random samples: each design's worst sampled rig too
        points = points.join(rigs.take(np.array(worst_rigs(result), dtype=np.int64)))
    return dataclasses.replace(result, spot_checks=tuple(spot_checks(project, designs, points, T)),
                               spot_check_worst=points.size - len(corners))
