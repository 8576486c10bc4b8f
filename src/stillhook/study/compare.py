"""Side-by-side comparison of command shapers and notch filters on the project's move.

Every candidate filters the same trolley speed command (the project's reference move at the nominal
rig, hoisting included when the project asks for it) and the result is run on the nonlinear model
(:func:`stillhook.sim.dynamics.simulate`). Rows:

- ``unshaped``: the raw command.
- ``zv``, ``zvd``, ``ei``: the classic single-mode shapers, tuned to the nominal mode that moves the
  payload most (normally the low mode), damped forms at the rig's damping ratio.
- ``band``: the shortest shaper with V <= tolerance over that mode's band over the envelope.
- ``two_mode``: the project's design (:func:`stillhook.shaping.envelope_design.envelope_shaper_for_project`: the
  whole-envelope shaper of ``design_for_project``, without its schedule rows), which treats both
  modes over the envelope or says why the high mode can be skipped.
- ``notch``: the project's notch cascade (:func:`stillhook.notch.design.notch_for_project`), both modes.

Every shaper is put on the drive-cycle grid (:func:`stillhook.shaping.cycle_grid.to_cycle_grid`).

Metrics (definitions travel with the JSON output):

- ``residual_sway_m``: peak |payload offset from the trolley| in the settle window after the
  command ends (``SimResult.residual_payload_sway_m``); ``residual_pct`` relative to unshaped.
- ``peak_sway_m``: peak |payload offset| while the command runs (includes the lean under acceleration).
- ``at_rest_s``: time from the start until the payload stays within the rest threshold of its
  destination: |trolley position + payload offset - distance| <= threshold from then on, with
  threshold = tolerance x the unshaped residual sway (the same fraction a shaper's V is held to).
  Measuring the payload's place, not only its sway, charges a slow filter tail (the trolley still
  creeping in) to the filter: a load that hangs still short of the destination is not at rest.
- ``added_delay_s``: ``at_rest_s`` minus the time the unshaped command ends (when the raw move has
  put the trolley at the destination): how much later the load is at rest. None when the load is not
  at rest within the simulated window (the unshaped move itself, on a lightly damped rig).
- ``duration_s``: how much longer the command is: a shaper's last impulse time; for the notch the
  zero padding that lets it ring out (every filter mode down to 1e-4, :meth:`NotchDesign.apply`).
- ``centroid_delay_s``: mean delay of the filter, sum A_i t_i for a shaper, the DC group delay of the notch.
- ``final_position_error_m``: trolley position at the end minus the commanded distance. Exact for a
  shaper (amplitudes sum to 1); for the notch the tail cut off by the padding.
- ``peak_speed_m_s``, ``peak_accel_m_s2``: of the command the drive receives (limits can be exceeded
  by negative-impulse shapers or by the notch's transient).

Notes
-----
Residual vibration of shapers: Singer & Seering, ASME J. Dyn. Sys. Meas. Control 112(1):76-82, 1990;
EI: Singhose, Seering & Singer, J. Mech. Design 116(2):654-659, 1994. Input shapers and digital
notch filters compared as command filters: Singhose & Vaughan, "Reducing vibration by digital
filtering and input shaping", IEEE Trans. Control Systems Technology 19(6):1410-1420, 2011 (from
memory); this table measures the trade on the project's own rig.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from stillhook.errors import ConfigError
from stillhook.notch.design import notch_for_project
from stillhook.shaping import closed_forms as shapers
from stillhook.shaping.band_design import band_shaper
from stillhook.shaping.cycle_grid import to_cycle_grid
from stillhook.shaping.envelope_design import envelope_shaper_for_project
from stillhook.sim.command_filter import UNFILTERED, CommandFilter
from stillhook.sim.dynamics import simulate_batch, time_within_s
from stillhook.sim.profiles import project_move
from stillhook.study.move_check import cancelled_sway_note, swings_cancel

__all__ = [
    "Candidate", "Comparison", "DEFINITIONS", "METHODS", "Row", "candidates", "compare_project", "time_at_rest_s",
]

#: Order of the rows.
METHODS = ("unshaped", "zv", "zvd", "ei", "band", "two_mode", "notch")

DEFINITIONS = {
    "residual_sway_m": "peak |payload offset from the trolley| in the settle window after the command ends",
    "residual_pct": "residual_sway_m as a percentage of the unshaped move's",
    "peak_sway_m": "peak |payload offset from the trolley| while the command runs",
    "at_rest_s": "time from the start until |trolley position + payload offset - distance| stays "
                 "<= rest_threshold_m (tolerance x unshaped residual sway)",
    "added_delay_s": "at_rest_s minus the end time of the unshaped command; null if not at rest in the window",
    "duration_s": "extra command length: last impulse time (shaper) or ring-out padding (notch)",
    "centroid_delay_s": "mean delay: sum A_i t_i (shaper), group delay at DC (notch)",
    "final_position_error_m": "trolley position at the end minus the commanded distance",
    "peak_speed_m_s": "largest |speed| of the command the drive receives",
    "peak_accel_m_s2": "largest |speed change| per cycle / cycle_s of that command",
}


@dataclass(frozen=True)
class Candidate:
    """One row's command filter before simulation (a shaper on the cycle grid, a notch cascade, ...)."""

    method: str
    label: str
    filter: CommandFilter
    tuned_to: str


@dataclass(frozen=True)
class Row:
    """Measured metrics of one candidate (see module docstring for the definitions)."""

    method: str
    label: str
    tuned_to: str
    duration_s: float
    centroid_delay_s: float
    residual_sway_m: float
    residual_pct: float
    peak_sway_m: float
    at_rest_s: float | None
    added_delay_s: float | None
    command_end_s: float
    final_position_error_m: float
    peak_speed_m_s: float
    peak_accel_m_s2: float

    def as_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class Comparison:
    """The comparison table and its context."""

    rows: tuple[Row, ...]
    project: str
    distance_m: float
    cycle_s: float
    tolerance: float
    rest_threshold_m: float
    unshaped_end_s: float
    settle_window_s: float
    hoist: bool
    rig: dict
    notes: tuple[str, ...]

    def row(self, method: str) -> Row:
        """The row of one method (KeyError if absent)."""
        for r in self.rows:
            if r.method == method:
                return r
        raise KeyError(method)

    @property
    def cancelled_sway(self) -> str | None:
        """The note saying the unshaped move cancels its own sway (:func:`swings_cancel`), else None."""
        base = self.row("unshaped")
        if not swings_cancel(base.residual_sway_m, base.peak_sway_m):
            return None
        return ("unshaped: " + cancelled_sway_note(base.residual_sway_m, base.peak_sway_m)
                + "; compare the residuals in mm")

    def as_dict(self) -> dict:
        return {
            "project": self.project,
            "rig": self.rig,
            "distance_m": self.distance_m,
            "cycle_s": self.cycle_s,
            "hoist_during_move": self.hoist,
            "tolerance": self.tolerance,
            "rest_threshold_m": self.rest_threshold_m,
            "unshaped_command_end_s": self.unshaped_end_s,
            "settle_window_s": self.settle_window_s,
            "rows": [r.as_dict() for r in self.rows],
            "definitions": dict(DEFINITIONS),
            "notes": list(self.notes),
        }


def _dominant_mode(rig):
    """The nominal mode with the largest payload participation (index, Mode)."""
    modes = rig.modes()
    i = int(np.argmax([abs(m.payload_participation_m_per_m_s2) for m in modes]))
    return i, modes[i]


def candidates(project) -> tuple[list[Candidate], list[str]]:
    """The filters to compare for a project (module docstring), and notes on how they were chosen."""
    env = project.envelope
    T = project.drive["cycle_s"]
    tol = project.design["tolerance_pct"] / 100.0
    zeta = env.damping_ratio
    i, mode = _dominant_mode(env.nominal_rig)
    f = mode.frequency_hz
    where = f"mode {i + 1} at {f:.4g} Hz (nominal)"
    out = [Candidate("unshaped", "unshaped", UNFILTERED, "-")]
    for name, make in (("zv", shapers.zv), ("zvd", shapers.zvd)):
        out.append(Candidate(name, name.upper(), to_cycle_grid(make(f, zeta), T, freqs_hz=[f], damping_ratio=zeta),
                             where))
    out.append(Candidate("ei", "EI", to_cycle_grid(shapers.ei(f, zeta, tol), T, freqs_hz=[f], damping_ratio=zeta),
                         where))
    notes = []
    env_lo, env_hi = env.mode_bands_hz()[i]
    lo, hi = env.design_bands_hz()[i]  # the same implicit band as the shaper design and the notch
    if (lo, hi) != (env_lo, env_hi):
        notes.append(f"band shaper: the envelope gives mode {i + 1} only {env_lo:.4g}-{env_hi:.4g} Hz; the "
                     f"narrowest design band {lo:.4g}-{hi:.4g} Hz (about +-10 %) is used, as by the shaper and notch")
    out.append(Candidate("band", "band", band_shaper(lo, hi, tol, zeta, cycle_s=T),
                         f"mode {i + 1} band {lo:.4g}-{hi:.4g} Hz"))
    design = envelope_shaper_for_project(project)  # the one shaper; the comparison needs no schedule rows
    out.append(Candidate("two_mode", "two-mode (project design)", design.shaper,
                         "both bands" if design.high_mode_treated else "low band only (see reason)"))
    notes.append(f"project design: {design.reason}")
    notch = notch_for_project(project)
    out.append(Candidate("notch", "notch (project)", notch,
                         "bands, centres " + ", ".join(f"{s.frequency_hz:.4g}" for s in notch.sections) + " Hz"))
    notes.extend(f"notch: {w}" for w in notch.warnings)
    return out, notes


def _command(candidate: Candidate, speed: np.ndarray, T: float) -> tuple[np.ndarray, float, float]:
    """(filtered speed, duration_s, centroid_delay_s) of one candidate."""
    flt = candidate.filter
    return flt.apply(speed, T), flt.added_duration_s, flt.mean_delay_s


def time_at_rest_s(result, target_m: float, threshold_m: float) -> float | None:
    """Time from which |trolley position + payload offset - target_m| stays <= threshold_m (s).

    None when the payload is outside the threshold at the last simulated sample
    """
    err = np.abs(result.trolley_position_m + result.payload_offset_m - target_m)
    t = time_within_s(result.t_s, err, threshold_m)
    return None if t == float("inf") else t


def compare_project(project, *, distance_m: float | None = None, include_hoist: bool = True,
                    methods=METHODS, rtol: float = 1e-7) -> Comparison:
    """Simulate the project's move with every candidate and measure it.

    Parameters
    ----------
    project : stillhook.project.Project
    distance_m : float > 0, optional
        Overrides ``[move] distance_m``.
    include_hoist : bool, default True
        Hoist during travel as ``[move] hoist_to_m`` asks (the hoist command is never filtered).
    methods : sequence of str
        Subset of :data:`METHODS` (``unshaped`` is always run: the others are measured against it).
    rtol : float, default 1e-7
        Relative tolerance of the nonlinear integration (the sway figures agree with 1e-9 to about
        0.1 %; the long notch-filtered command is the slow run).

    Returns
    -------
    Comparison
    """
    unknown = [m for m in methods if m not in METHODS]
    if unknown:
        raise ConfigError(f"unknown comparison method(s) {', '.join(unknown)}; allowed: {', '.join(METHODS)}")
    speed, hoist = project_move(project, distance_m)
    if not include_hoist:
        hoist = None
    T = project.drive["cycle_s"]
    tol = project.design["tolerance_pct"] / 100.0
    rig = project.envelope.nominal_rig
    distance = float(T * np.sum(speed))
    cands, notes = candidates(project)
    cands = [c for c in cands if c.method == "unshaped" or c.method in methods]
    commands = [(c, *_command(c, speed, T)) for c in cands]
    results = simulate_batch(rig, [y for _, y, _, _ in commands], T, hoist_speed_m_s=hoist, rtol=rtol)
    runs = [(*cmd, res) for cmd, res in zip(commands, results, strict=True)]
    base = runs[0][4]
    unshaped_end = base.command_end_s
    threshold = tol * base.residual_payload_sway_m
    rows = []
    for c, y, duration, centroid, res in runs:
        at_rest = time_at_rest_s(res, distance, threshold)
        rows.append(Row(
            method=c.method, label=c.label, tuned_to=c.tuned_to, duration_s=duration, centroid_delay_s=centroid,
            residual_sway_m=res.residual_payload_sway_m,
            residual_pct=100.0 * res.residual_payload_sway_m / base.residual_payload_sway_m
            if base.residual_payload_sway_m > 0 else 0.0,
            peak_sway_m=res.peak_payload_offset_m, at_rest_s=at_rest,
            added_delay_s=None if at_rest is None else at_rest - unshaped_end,
            command_end_s=res.command_end_s,
            final_position_error_m=float(res.trolley_position_m[-1] - distance),
            peak_speed_m_s=float(np.max(np.abs(y))),
            peak_accel_m_s2=float(np.max(np.abs(np.diff(y)))) / T,
        ))
    comparison = Comparison(
        rows=tuple(rows), project=project.name, distance_m=distance, cycle_s=T, tolerance=tol,
        rest_threshold_m=threshold, unshaped_end_s=unshaped_end, settle_window_s=base.settle_s,
        hoist=hoist is not None,
        rig={"hook_mass_kg": rig.hook_mass_kg, "payload_mass_kg": rig.payload_mass_kg,
             "rope_length_m": project.envelope.nominal_rope_length_m, "rigging_length_m": rig.rigging_length_m,
             "damping_ratio": rig.damping_ratio,
             "modes_hz": [m.frequency_hz for m in rig.modes()]},
        notes=tuple(notes),
    )
    cancelled = comparison.cancelled_sway
    return comparison if cancelled is None else replace(comparison, notes=(*notes, cancelled))
