"""Shaper design for a project: bands over the envelope, high-mode decision, schedule by rope length.

Steps (:func:`design_for_project`):

1. Each mode's band (lowest, highest frequency) over the envelope (rope range x payload range),
   at least the narrowest design band (``Envelope.design_bands_hz``: about +-10 %, also for the notch and the
   comparison); a schedule row's band at least +-2 % (``ROW_MIN_EDGE_RATIO``).
2. A shaper for the low mode's band alone. Its residual payload sway ratio
   sum_i |P_i| V_i / sum_i |P_i| (see :mod:`stillhook.shaping.residual_map`) is evaluated on a dense
   envelope grid. If it stays within the tolerance everywhere the high mode is left untreated,
   and ``reason`` gives the numbers; otherwise the design covers both bands (a direct two-mode
   band shaper, never longer than the convolution of the two single-band shapers).
3. Every shaper is designed on the drive-cycle grid (band designs place impulses on whole
   cycles; closed forms are re-solved on the grid) and to ``(1 - DESIGN_MARGIN)`` of the
   tolerance, which leaves room for rounding the amplitudes to fixed point.
4. Optionally a length schedule: one shaper per rope-length row, each designed for the whole
   span of rope lengths that selects it (see :class:`Schedule` for the lookup rule) over the
   whole payload range, and checked on a dense grid including between rows.

The default project (method "auto") keeps the ratio within the tolerance over the whole envelope;
``Design.worst_ratio`` reports the figure and where it occurs.

Notes
-----
Residual vibration V: Singer & Seering, ASME JDSMC 112(1):76-82, 1990. Mode shapes and
participations: Kibble & Berkshire, *Classical Mechanics*, 5th ed., 2004 (see
:mod:`stillhook.shaping.residual_map`). The skip criterion (weighted mean of the V_i within the tolerance)
and the row spacing are derived here; the design margin is common practice, no source.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np

from stillhook.errors import DesignError
from stillhook.model.envelope import MIN_BAND_EDGE_RATIO
from stillhook.model.lookup import row_edges_m, rule_words, schedule_rows
from stillhook.shaping.band_design import band_shaper, family_region, multi_band_shaper, two_mode_shapers
from stillhook.shaping.closed_forms import CLOSED_FORMS
from stillhook.shaping.cycle_grid import to_cycle_grid
from stillhook.shaping.design_cache import DESIGN_CACHE
from stillhook.shaping.design_store import load_or_make, load_stored
from stillhook.shaping.residual_map import mode_shares, residual_ratio
from stillhook.shaping.shaper import Shaper, worst_vibration
from stillhook.sim.drive_rate import check_below_half_rate
from stillhook.workers import map_tasks, worker_count

__all__ = [
    "CHECK_GRID", "DESIGN_MARGIN", "Design", "POOL_MIN_SECONDS", "ROW_MIN_EDGE_RATIO", "ROW_OVERLAP",
    "ROW_SECONDS_PER_IMPULSE", "ROW_SPREAD", "Schedule", "design_for_project", "design_schedule",
    "envelope_shaper_for_project", "schedule_for_project", "schedule_ratio", "schedule_row_count",
    "schedule_rope_lengths", "schedule_workers",
]

#: Design to this fraction below the tolerance (fixed-point amplitude rounding, grid sampling).
DESIGN_MARGIN = 0.02
#: Narrowest band of one schedule row (+-2 %): a row serves a short span of rope lengths next to its
#: neighbours (ROW_OVERLAP), so it needs less margin than the whole envelope's design band.
ROW_MIN_EDGE_RATIO = 1.02
#: Dense envelope grid (rope lengths x payload masses) for every check.
CHECK_GRID = (41, 41)
#: Target spread of the low-mode frequency across the rope lengths one schedule row serves.
ROW_SPREAD = 0.08
#: Each row's design span is widened by this fraction of its span on both sides (inside the range).
ROW_OVERLAP = 0.05
#: Estimated design time of one schedule row per impulse of the whole-envelope shaper (s): measured 2-3.3 ms
#: on the demo, the small gantry and the hard envelope (benchmarks/projects), one core of the shared machine.
ROW_SECONDS_PER_IMPULSE = 3e-3
#: Schedule rows go to a process pool only when their estimated serial time exceeds this (s): starting
#: the workers costs ~0.1 s of CPU (fork, copy-on-write, pickling) and a loaded machine may have no free core.
POOL_MIN_SECONDS = 1.0
#: Schedule rows skip trying a low-mode-only shaper when the high mode's share of the payload
#: participation exceeds this multiple of the tolerance.
_GATE_SHARE_PER_TOL = 2.0


@dataclass(frozen=True, eq=False)
class Schedule:
    """Shapers tabulated by rope length, for firmware.

    LOOKUP RULE (the firmware must implement the same): for a measured rope length L, use row
    ``k = number of entries of switch_lengths_m that are <= L`` -- i.e. the row whose rope length
    is NEAREST to L, with an exact midpoint going to the longer row. ``switch_lengths_m[k]`` is the
    midpoint between rows k and k + 1. Lengths below the first row use row 0 and above the last
    row use the last row (outside the designed envelope: the firmware should flag this).
    Each row's shaper is designed for every rope length that selects it (from the switch length
    below to the switch length above, the range ends for the first and last rows), widened by
    ROW_OVERLAP of the row's span on each side inside the range (so a length measured or
    quantized slightly past a switch length is still covered), over the whole payload range: the
    tolerance also holds between rows.

    Attributes
    ----------
    rope_lengths_m : ndarray (n,), ascending
        Row rope lengths; the first and last are the ends of the rope range.
    shapers : list of Shaper (n,)
        One per row, each on the drive-cycle grid.
    cycle_s : float
    tolerance : float
        Fraction (0.05 = 5 %).
    high_mode_treated : tuple of bool (n,)
    """

    rope_lengths_m: np.ndarray
    shapers: list
    cycle_s: float
    tolerance: float
    high_mode_treated: tuple = ()
    reason: str = ""

    #: The lookup rule by name, as the code generator reads it.
    lookup_rule = "nearest"

    def __post_init__(self) -> None:
        L = np.array(self.rope_lengths_m, dtype=float).reshape(-1)
        if L.size == 0 or L.size != len(self.shapers) or np.any(np.diff(L) <= 0.0):
            raise DesignError("a schedule needs one shaper per rope length, lengths strictly ascending")
        for s in self.shapers:
            s.delays_cycles(self.cycle_s)  # raises if off the grid
        L.setflags(write=False)
        object.__setattr__(self, "rope_lengths_m", L)
        object.__setattr__(self, "shapers", list(self.shapers))

    @property
    def switch_lengths_m(self) -> np.ndarray:
        """Midpoints between neighbouring rows (n - 1,): row k serves [switch[k-1], switch[k])."""
        return row_edges_m(self.rope_lengths_m, self.lookup_rule)

    def row_for(self, rope_length_m) -> np.ndarray | int:
        """Row index for measured rope length(s) by the lookup rule (vectorized)."""
        k = schedule_rows(self.rope_lengths_m, rope_length_m, self.lookup_rule)
        return int(k) if np.ndim(k) == 0 else k

    def shaper_for(self, rope_length_m: float) -> Shaper:
        return self.shapers[self.row_for(rope_length_m)]

    def row_spans_m(self) -> list[tuple[float, float]]:
        """Rope-length span each row serves (closed interval used for its design)."""
        L, sw = self.rope_lengths_m, self.switch_lengths_m
        edges = np.concatenate([[L[0]], sw, [L[-1]]])
        return [(float(a), float(b)) for a, b in zip(edges[:-1], edges[1:], strict=True)]

    @property
    def max_delay_cycles(self) -> int:
        return max(int(s.delays_cycles(self.cycle_s)[-1]) for s in self.shapers)

    @property
    def max_impulses(self) -> int:
        return max(s.n_impulses for s in self.shapers)

    def as_dict(self) -> dict:
        return {
            "lookup_rule": self.lookup_rule,
            "lookup": f"row = count of switch_lengths_m <= measured rope length ({rule_words(self.lookup_rule)})",
            "reason": self.reason,
            "cycle_s": self.cycle_s,
            "tolerance": self.tolerance,
            "switch_lengths_m": [float(v) for v in self.switch_lengths_m],
            "max_delay_cycles": self.max_delay_cycles,
            "max_impulses": self.max_impulses,
            "rows": [dict(rope_length_m=float(L), high_mode_treated=None if h is None else bool(h),
                          **s.as_dict(self.cycle_s))
                     for L, s, h in zip(self.rope_lengths_m, self.shapers,
                                        self.high_mode_treated or (None,) * len(self.shapers), strict=True)],
        }


@dataclass(frozen=True, eq=False)
class Design:
    """A shaper design for a whole envelope.

    Attributes
    ----------
    shaper : Shaper
        One shaper for the whole envelope, on the drive-cycle grid.
    schedule : Schedule or None
        Length-scheduled alternative (when the project asks for it).
    high_mode_treated : bool
    reason : str
        Why the high mode is or is not treated, with the numbers.
    bands_hz : list of (lo, hi)
        Each mode's band over the envelope, low first.
    method, tolerance, cycle_s, damping_ratio
    worst_ratio : float
        Largest residual payload sway ratio of ``shaper`` over the dense envelope grid.
    worst_at : (rope_length_m, payload_mass_kg)
    worst_vibration : list of float
        Largest V of ``shaper`` over each band.
    convolved : Shaper or None
        The convolution of single-band shapers (two-mode designs), for comparison.
    """

    shaper: Shaper
    schedule: Schedule | None
    high_mode_treated: bool
    reason: str
    bands_hz: list
    method: str
    tolerance: float
    cycle_s: float
    damping_ratio: float
    worst_ratio: float
    worst_at: tuple
    worst_vibration: list
    convolved: Shaper | None = None
    schedule_worst_ratio: float | None = None

    @property
    def meets_tolerance(self) -> bool:
        ok = self.worst_ratio <= self.tolerance
        if self.schedule_worst_ratio is not None:
            ok = ok and self.schedule_worst_ratio <= self.tolerance
        return ok

    def as_dict(self) -> dict:
        out = {
            "method": self.method,
            "tolerance": self.tolerance,
            "cycle_s": self.cycle_s,
            "damping_ratio": self.damping_ratio,
            "bands_hz": [[float(lo), float(hi)] for lo, hi in self.bands_hz],
            "high_mode_treated": self.high_mode_treated,
            "reason": self.reason,
            "meets_tolerance": self.meets_tolerance,
            "worst_residual_ratio": self.worst_ratio,
            "worst_at": {"rope_length_m": self.worst_at[0], "payload_mass_kg": self.worst_at[1]},
            "worst_vibration_per_mode": list(self.worst_vibration),
        }
        out.update(self.shaper.as_dict(self.cycle_s))
        out["convolved_duration_s"] = None if self.convolved is None else self.convolved.duration_s
        out["schedule"] = None if self.schedule is None else self.schedule.as_dict()
        out["schedule_worst_residual_ratio"] = self.schedule_worst_ratio
        return out


# -- helpers ------------------------------------------------------------------------------------
def _sub_envelope(env, rope_lo: float, rope_hi: float):
    return replace(env, rope_length_range_m=(rope_lo, rope_hi), nominal_rope_length_m=None)


def _bands(env, min_edge_ratio: float = MIN_BAND_EDGE_RATIO) -> list[tuple[float, float]]:
    """Each mode's band over the envelope, at least the narrowest design band (Envelope.design_bands_hz)."""
    return env.design_bands_hz(9, 61, min_edge_ratio=min_edge_ratio)


def _closed_form_for_band(method: str, band, tol: float, zeta: float, cycle_s: float) -> Shaper:
    """Closed form centred (geometrically) on the band's insensitive region, re-solved on the grid."""
    lo, hi = band
    r_lo, r_hi, _ = family_region(method, tol, zeta) if method != "umzv" else (1.0, 1.0, 0.0)
    f0 = math.sqrt(lo * hi / (r_lo * r_hi)) if r_lo > 0 else math.sqrt(lo * hi)
    s = CLOSED_FORMS[method](f0, zeta, tol)
    return to_cycle_grid(s, cycle_s, remedy="resolve", freqs_hz=[f0], damping_ratio=zeta)


def _single_band(method: str, band, tol: float, zeta: float, cycle_s: float) -> Shaper:
    if method in ("auto", "band"):
        return band_shaper(band[0], band[1], tol, zeta, cycle_s=cycle_s)
    return _closed_form_for_band(method, band, tol, zeta, cycle_s)


def _both_bands(method: str, bands, tol: float, zeta: float, cycle_s: float, start: Shaper | None = None,
                with_convolved: bool = True, hint_s: float | None = None,
                start_covers=()) -> tuple[Shaper, Shaper | None]:
    if method in ("auto", "band"):
        if with_convolved:
            r = two_mode_shapers(bands, tol, zeta, cycle_s=cycle_s)
            return r.direct, r.convolved
        return multi_band_shaper(bands, tol, zeta, cycle_s=cycle_s, start=start, name="direct",
                                 hint_s=hint_s, start_covers_hz=start_covers), None
    s = _closed_form_for_band(method, bands[0], tol, zeta, cycle_s)
    s = s.convolve(_closed_form_for_band(method, bands[1], tol, zeta, cycle_s))
    return s, s


def _decide(env, method: str, bands, tol: float, tol_d: float, zeta: float, cycle_s: float,
            grid, start: Shaper | None = None, with_convolved: bool = True, hint_s: float | None = None,
            gate: bool = False, start_covers=()):
    """Return (shaper, convolved, high_treated, reason) for one (sub-)envelope.

    With ``gate`` (schedule rows, for speed) a low-mode-only shaper is not even tried when the
    high mode's share of the payload participation exceeds ``_GATE_SHARE_PER_TOL`` times the
    tolerance somewhere: it would need to attenuate the high mode by chance. The gate only ever
    errs toward treating the mode. ``start_covers``: bands (Hz) over which ``start`` is known to keep
    V <= ``tol_d`` (see :func:`stillhook.shaping.band_design.multi_band_shaper`).
    """
    Ls, ms = grid
    if len(bands) == 1:
        low = _single_band(method, bands[0], tol_d, zeta, cycle_s)
        return low, None, False, "single sway mode (no rigging below the hook or no payload): one band treated"
    _, shares = mode_shares(env, Ls, ms)
    if gate and shares[..., 1].max() > _GATE_SHARE_PER_TOL * tol:
        both, conv = _both_bands(method, bands, tol_d, zeta, cycle_s, start, with_convolved, hint_s, start_covers)
        return both, conv, True, (f"high mode treated: it carries up to {100 * shares[..., 1].max():.2f} % of the "
                                  "payload's sway participation")
    low = _single_band(method, bands[0], tol_d, zeta, cycle_s)
    ratio, contrib = residual_ratio(env, low, Ls, ms)
    k = np.unravel_index(int(np.argmax(ratio)), ratio.shape)
    numbers = (f"with a low-mode shaper alone the residual payload sway reaches {100 * ratio[k]:.2f} % of "
               f"unshaped (rope {Ls[k[0]]:.3g} m, payload {ms[k[1]]:.4g} kg); the high mode contributes up to "
               f"{100 * contrib[..., 1].max():.2f} % and carries up to {100 * shares[..., 1].max():.2f} % of the "
               f"payload's sway participation")
    if ratio[k] <= tol:
        return low, None, False, f"high mode not treated: {numbers}, within the {100 * tol:g} % tolerance"
    check_below_half_rate([bands[1][1]], cycle_s, what="the high sway mode's highest frequency",
                          detail=f" and it needs treatment ({numbers})")
    both, conv = _both_bands(method, bands, tol_d, zeta, cycle_s, start, with_convolved, hint_s, start_covers)
    return both, conv, True, f"high mode treated: {numbers}, above the {100 * tol:g} % tolerance"


def _covered(bands, worst_v, tol_d: float) -> list[tuple[float, float]]:
    """The bands where a shaper's worst V (``worst_v``, one per band) meets ``tol_d`` (the band designs' slack)."""
    return [b for b, v in zip(bands, worst_v, strict=True) if v <= tol_d * (1.0 + 1e-6)]


def _check_low_band(bands, cycle_s: float) -> None:
    check_below_half_rate([bands[0][1]], cycle_s, what="the low sway mode's highest frequency")


def _key(project, what: str) -> str:
    return what + json.dumps([project.envelope.describe(), project.drive, project.design], sort_keys=True)


# -- schedule ----------------------------------------------------------------------------------
def schedule_rope_lengths(env, max_rows: int) -> np.ndarray:
    """Row rope lengths: evenly spaced in log(L1 + L2), so each row spans about ROW_SPREAD of
    low-mode frequency (a pendulum of length L1 + L2 has w = sqrt(g / (L1 + L2))), at most max_rows."""
    lo, hi = env.rope_length_range_m
    if hi <= lo:
        return np.array([lo])
    L2 = env.rigging_length_m
    spread = 0.5 * math.log((hi + L2) / (lo + L2))
    n = int(min(max_rows, max(2, math.ceil(spread / math.log1p(ROW_SPREAD)) + 1)))
    rows = np.exp(np.linspace(math.log(lo + L2), math.log(hi + L2), n)) - L2
    rows[0], rows[-1] = lo, hi
    return rows


def _row_shaper(env, method: str, span_m, tol: float, tol_d: float, cycle: float, whole: Shaper, covers=()):
    """(shaper, high mode treated) for the rope-length span ``span_m`` of one schedule row; ``covers``: the
    bands (Hz) over which ``whole`` keeps V <= ``tol_d``.

    A pure function of its arguments (no hint from a neighbouring row), so rows run in any order,
    in any process, and give the same schedule for any worker count.
    """
    a, b = span_m
    sub = _sub_envelope(env, a, b)
    bands = _bands(sub, ROW_MIN_EDGE_RATIO)
    _check_low_band(bands, cycle)
    grid = (np.linspace(a, b, 5), np.linspace(*env.payload_mass_range_kg, CHECK_GRID[1]))
    s, _, high, _ = _decide(sub, method, bands, tol, tol_d, env.damping_ratio, cycle, grid,
                            start=whole, with_convolved=False, gate=True, start_covers=covers)
    if s.duration_s > whole.duration_s and method in ("auto", "band"):
        s = whole  # the whole-envelope shaper also serves this row and is shorter
    return s, high


def schedule_workers(n_rows: int, whole: Shaper, workers: int | None = None) -> int:
    """Processes for ``n_rows`` schedule rows: one (in this process) when their estimated serial design time,
    n_rows x ``whole.n_impulses`` x :data:`ROW_SECONDS_PER_IMPULSE`, is below :data:`POOL_MIN_SECONDS`, else
    :func:`stillhook.workers.worker_count`; ``workers`` given: that many (at most one per row). The schedule is
    the same either way (each row is designed from its own span alone).
    """
    if workers is None and n_rows * whole.n_impulses * ROW_SECONDS_PER_IMPULSE < POOL_MIN_SECONDS:
        return 1
    return worker_count(n_rows, workers)


def design_schedule(project, whole: Shaper, *, progress: Callable[[int, int], None] | None = None,
                    total: int = 0, workers: int | None = None, covers_hz=None) -> Schedule:
    """The length schedule of ``project`` (rows solved in parallel), ``whole`` its whole-envelope shaper.

    Parameters
    ----------
    project : stillhook.project.Project
    whole : Shaper
        The whole-envelope shaper: each row's first upper bound, and its fallback when shorter.
    progress : callable(done, total), optional
        Called as each row finishes (done counts from 2: stage 1 is the whole-envelope shaper).
    total : int
        The ``total`` passed to ``progress``.
    workers : int, optional
        Processes (default :func:`schedule_workers`: one per available core when the rows are estimated to take
        long enough, else one). The result does not depend on it: every row is designed from its own span alone.
    covers_hz : list of (lo, hi), optional
        The whole-envelope bands (Hz) over which ``whole`` is known to keep V within the design tolerance
        (speed only: the rows do not check it again there); default: found here.

    Returns
    -------
    Schedule
    """
    env, cycle = project.envelope, float(project.drive["cycle_s"])
    tol = project.design["tolerance_pct"] / 100.0
    tol_d = tol * (1.0 - DESIGN_MARGIN)
    method = project.design["method"]
    rows = schedule_rope_lengths(env, int(project.design["max_schedule_rows"]))
    probe = Schedule(rows, [whole] * rows.size, cycle, tol)
    lo_range, hi_range = env.rope_length_range_m
    spans = [(max(lo_range, a - ROW_OVERLAP * (b - a)), min(hi_range, b + ROW_OVERLAP * (b - a)))
             for a, b in probe.row_spans_m()]
    if covers_hz is None:
        bands = _bands(env)
        covers_hz = _covered(bands, [worst_vibration(whole, lo, hi, env.damping_ratio)[0] for lo, hi in bands], tol_d)
    n_workers = schedule_workers(len(spans), whole, workers)
    args = [(env, method, span, tol, tol_d, cycle, whole, tuple(covers_hz)) for span in spans]
    shapers, treated = [], []
    for s, high in map_tasks(_row_shaper, args, n_workers):
        shapers.append(s)
        treated.append(high)
        if progress is not None:
            progress(1 + len(shapers), total)
    n_high = sum(treated)
    reason = (f"{rows.size} rows spaced evenly in log(rope + rigging length) (about {100 * ROW_SPREAD:g} % of "
              f"low-mode frequency per row); high mode treated in {n_high} of {rows.size} rows")
    return Schedule(rows, shapers, cycle, tol, tuple(treated), reason)


def schedule_ratio(env, schedule: Schedule, rope_lengths_m, payload_masses_kg) -> np.ndarray:
    """Residual payload sway ratio on a grid, each rope length using its row by the lookup rule."""
    Ls = np.asarray(rope_lengths_m, dtype=float)
    rows = schedule.row_for(Ls)
    out = np.empty((Ls.size, np.size(payload_masses_kg)))
    for i, (L, k) in enumerate(zip(Ls, np.atleast_1d(rows), strict=True)):
        out[i] = residual_ratio(env, schedule.shapers[int(k)], [L], payload_masses_kg)[0][0]
    return out


# -- public API ---------------------------------------------------------------------------------
def design_for_project(project, *, progress: Callable[[int, int], None] | None = None) -> Design:
    """Design the envelope shaper (and the schedule when ``[design] schedule`` is true).

    Parameters
    ----------
    project : stillhook.project.Project
        Uses the envelope, ``[drive] cycle_s`` and ``[design]`` tolerance_pct, method, schedule,
        max_schedule_rows. Results are cached per (envelope, drive, design) within the process and on
        disk (:mod:`stillhook.shaping.design_cache`).
    progress : callable(done, total), optional
        Called as the stages finish: the whole-envelope shaper, then each schedule row
        (total = 1 + :func:`schedule_row_count`). Not called for a cached design.

    Returns
    -------
    Design

    Raises
    ------
    DesignError
        A mode that needs treatment lies above half the drive rate, or no shaper meets the
        tolerance over the bands.
    """
    key = _key(project, "design")
    # in-process cache first, then the disk store (a design this code computed before), else design now
    return DESIGN_CACHE.get("project_design", key, lambda: load_or_make(key, lambda: _design(project, progress)))


def envelope_shaper_for_project(project) -> Design:
    """The project's whole-envelope shaper design, without designing the schedule rows.

    For what needs the one shaper only (the comparison): the schedule rows are most of a design's time. A full
    design (:func:`design_for_project`) already made in this process or stored on disk is returned as it is;
    otherwise the project is designed with ``[design] schedule = false``. The whole-envelope shaper, its
    reason and its checks are the same either way (the schedule is designed after the shaper, from it).
    """
    full_key = _key(project, "design")
    full = DESIGN_CACHE.lookup("project_design", full_key)
    if full is None:
        full = load_stored(full_key)
    if full is not None or not project.design["schedule"]:
        return full if full is not None else design_for_project(project)
    return design_for_project(replace(project, design={**project.design, "schedule": False}))


def schedule_row_count(project) -> int:
    """Schedule rows the design of ``project`` will solve (0 without a schedule): the work estimate up front."""
    if not project.design["schedule"]:
        return 0
    return int(schedule_rope_lengths(project.envelope, int(project.design["max_schedule_rows"])).size)


def schedule_for_project(project) -> Schedule:
    """The length schedule for ``project`` (computed even if ``[design] schedule`` is false)."""
    d = design_for_project(project)
    if d.schedule is not None:
        return d.schedule
    return DESIGN_CACHE.get("project_design", _key(project, "schedule"), lambda: design_schedule(project, d.shaper))


def _design(project, progress=None) -> Design:
    env, cycle = project.envelope, float(project.drive["cycle_s"])
    tol = project.design["tolerance_pct"] / 100.0
    tol_d = tol * (1.0 - DESIGN_MARGIN)
    method = project.design["method"]
    zeta = env.damping_ratio
    bands = _bands(env)
    _check_low_band(bands, cycle)
    grid = env.grid(*CHECK_GRID)
    shaper, conv, high, reason = _decide(env, method, bands, tol, tol_d, zeta, cycle, grid)
    ratio, _ = residual_ratio(env, shaper, *grid)
    k = np.unravel_index(int(np.argmax(ratio)), ratio.shape)
    worst_v = [worst_vibration(shaper, lo, hi, zeta)[0] for lo, hi in bands]
    schedule, sched_ratio = None, None
    total = 1 + schedule_row_count(project)
    if progress is not None:
        progress(1, total)
    if project.design["schedule"]:
        schedule = design_schedule(project, shaper, progress=progress, total=total,
                                   covers_hz=_covered(bands, worst_v, tol_d))
        Ls_dense = np.linspace(*env.rope_length_range_m, 4 * CHECK_GRID[0])
        sched_ratio = float(schedule_ratio(env, schedule, Ls_dense, grid[1]).max())
    return Design(shaper=shaper, schedule=schedule, high_mode_treated=high, reason=reason,
                  bands_hz=[(float(lo), float(hi)) for lo, hi in bands], method=method, tolerance=tol,
                  cycle_s=cycle, damping_ratio=zeta, worst_ratio=float(ratio[k]),
                  worst_at=(float(grid[0][k[0]]), float(grid[1][k[1]])), worst_vibration=worst_v,
                  convolved=conv, schedule_worst_ratio=sched_ratio)
