"""Fixed-point C for the drive: design -> integer tables -> C text -> a self-contained folder.

Pipeline (pure until the last step)::

    plan_for_project(project)      design the schedule (and the notch), quantize -> EmitPlan
    render_files(plan)             EmitPlan -> {file name: text}   (runtime copied from codegen/)
    write_emit(project, out_dir)   both, then write every file at once (all or nothing)

What gets emitted
    * the shaper schedule: one impulse row per rope length of ``stillhook.shaping.envelope_design.schedule_for_project``
      (by default a length-scheduled two-mode shaper within the project's tolerance over the
      envelope), amplitudes as integers summing to exactly 2^F, delays in whole drive cycles;
    * the rope-length lookup: thresholds in input counts (``[firmware] rope_length_lsb_m`` metres
      per count) that reproduce the schedule's own row rule (see :func:`stillhook.model.lookup.lookup_thresholds`);
    * the notch cascade, only when asked: ``[firmware] notch = true``, or, with that key unset, when
      the project file has a ``[notch]`` section (an empty ``[notch]`` table asks for the
      default notch). Its coefficients are checked for notch shift (:mod:`stillhook.firmware.notch_tables`);
      when Q15 fails, the whole folder moves to Q31 if ``[firmware] escalate_to_q31`` (default) and
      the format was not forced by the caller, else the emit is refused with the numbers.
    * a RAM check: accumulator ring + notch state must fit ``[firmware] ram_budget_bytes``;
    * an accumulator check: the rows' amplitudes, all rows together, must fit the ring's slots
      whatever the row switches (:func:`stillhook.firmware.shaper_model.abs_sum_limit`).

Notes
-----
Unity-gain amplitude rounding and the runtime contracts: :mod:`stillhook.firmware.qformat` and
:mod:`stillhook.firmware.shaper_model` (scatter-form shaper, exact distance across row switches).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from stillhook.cautions import CAUTIONS, FEEDBACK_CAUTIONS
from stillhook.checks import check_identifier
from stillhook.errors import ConfigError, EmitError
from stillhook.feedback.robust import feedback_for_project
from stillhook.feedback.robustness import check_envelope
from stillhook.firmware.feedback_tables import feedback_tables
from stillhook.firmware.notch_tables import choose_notch_format
from stillhook.firmware.qformat import FRACTION_BITS, ScheduleTable, quantize_amplitudes
from stillhook.firmware.render_c import render_readme, render_tables_c, render_tables_h
from stillhook.firmware.render_feedback import render_feedback_c, render_feedback_h
from stillhook.firmware.render_st import check_st_prefix, render_st_files
from stillhook.firmware.runtime import INSTANCE_BYTES_32BIT, RUNTIME_VERSION, runtime_sources
from stillhook.firmware.selftest import render_selftest
from stillhook.firmware.shaper_model import SLOT_BYTES, SLOT_SHIFT, ShaperTable, abs_sum_limit, switch_transient
from stillhook.model.lookup import LOOKUP_RULES, lookup_thresholds, rope_length_counts
from stillhook.notch.design import notch_for_project
from stillhook.outputs import check_out_dir, to_json, write_files
from stillhook.shaping.envelope_design import schedule_for_project
from stillhook.version import __version__

__all__ = [
    "EMIT_TARGETS", "EmitPlan", "ShaperRow", "emit_files", "notch_requested", "plan_for_project", "quantize_shaper",
    "render_files", "render_target", "write_emit",
]


# -- schedule rows -------------------------------------------------------------------------------
@dataclass(frozen=True)
class ShaperRow:
    """One schedule row as emitted: rope length, integer amplitudes, whole-cycle delays."""

    rope_length_m: float
    amplitudes: tuple[int, ...]
    delays_cycles: tuple[int, ...]
    name: str = ""

    def as_dict(self) -> dict:
        return {"rope_length_m": self.rope_length_m, "amplitudes": list(self.amplitudes),
                "delays_cycles": list(self.delays_cycles), "name": self.name}


def quantize_shaper(shaper, cycle_s: float, fmt: str) -> tuple[np.ndarray, np.ndarray]:
    """Integer (amplitudes, delays) of an on-grid shaper: coincident delays merged, then rounded.

    Parameters
    ----------
    shaper : stillhook.shaping.shaper.Shaper
        On the drive-cycle grid (``shaper.delays_cycles(cycle_s)`` must succeed).
    cycle_s : float > 0
    fmt : {'q15', 'q31'}

    Returns
    -------
    (amplitudes, delays) : int64 arrays, amplitudes summing to exactly 2^F, delays ascending.
        Impulses whose integer amplitude rounds to 0 are dropped (the sum is unchanged).
    """
    d = np.asarray(shaper.delays_cycles(cycle_s), dtype=np.int64)
    a = np.asarray(shaper.amplitudes, dtype=float)
    uniq, inverse = np.unique(d, return_inverse=True)
    merged = np.zeros(uniq.size)
    np.add.at(merged, inverse, a)
    q = quantize_amplitudes(merged, fmt)
    keep = q != 0
    return q[keep], uniq[keep]


def _schedule_rule(schedule) -> str:
    rule = getattr(schedule, "lookup_rule", "nearest")
    if rule not in LOOKUP_RULES:
        raise EmitError(f"schedule lookup rule {rule!r} is not supported; allowed: " + ", ".join(LOOKUP_RULES))
    return rule


# -- the plan ------------------------------------------------------------------------------------
@dataclass(frozen=True)
class EmitPlan:
    """Everything the emitted files say, as objects (no text yet)."""

    prefix: str
    fmt: str
    fmt_requested: str
    format_reason: str | None
    cycle_s: float
    digest: str
    project_name: str
    envelope_summary: dict
    tolerance: float
    lookup_rule: str
    rows: tuple[ShaperRow, ...]
    shaper: ShaperTable
    schedule: ScheduleTable
    notch: object | None  # stillhook.firmware.notch_tables.NotchCheck
    ram_budget_bytes: int
    design_note: str = ""
    #: stillhook.firmware.feedback_tables.FeedbackTables when the project has [feedback], and its check summary
    feedback: object | None = None
    feedback_summary: dict | None = None

    def sizes(self) -> dict:
        """RAM (caller buffers) and flash (const tables) in bytes."""
        notch_state = self.notch.table.state_bytes() if self.notch is not None else 0
        notch_flash = self.notch.table.flash_bytes() if self.notch is not None else 0
        ram = self.shaper.ring_bytes() + notch_state
        instances = INSTANCE_BYTES_32BIT["shaper"] + (INSTANCE_BYTES_32BIT["notch"] if self.notch else 0)
        return {
            "ring_slots": self.shaper.ring_len,
            "ring_slot_bytes": SLOT_BYTES[self.fmt],
            "ring_bytes": self.shaper.ring_bytes(),
            "notch_state_bytes": notch_state,
            "ram_bytes": ram,
            "instance_bytes_32bit": instances,
            "ram_budget_bytes": self.ram_budget_bytes,
            "shaper_table_bytes": self.shaper.flash_bytes(),
            "schedule_table_bytes": self.schedule.flash_bytes(),
            "notch_table_bytes": notch_flash,
            "flash_table_bytes": self.shaper.flash_bytes() + self.schedule.flash_bytes() + notch_flash,
        }

    def manifest(self, files: list[str]) -> dict:
        """The manifest.json content but the cautions, which :func:`render_files` adds (deterministic key order)."""
        s = self.schedule
        out = {
            "tool": "stillhook",
            "tool_version": __version__,
            "runtime_version": RUNTIME_VERSION,
            "project": self.project_name,
            "input_digest_sha256": self.digest,
            "prefix": self.prefix,
            "format": self.fmt,
            "format_requested": self.fmt_requested,
            "format_reason": self.format_reason,
            "cycle_s": self.cycle_s,
            "envelope": self.envelope_summary,
            "tolerance": self.tolerance,
            "design_note": self.design_note,
            "amplitude_full_scale": 1 << FRACTION_BITS[self.fmt],
            "rope_length_input": {
                "type": "uint32", "lsb_m": s.lsb_m, "min_counts": s.length_min, "max_counts": s.length_max,
                "lookup_rule": self.lookup_rule, "thresholds_counts": [int(t) for t in s.thresholds]},
            "shaper_rows": [r.as_dict() for r in self.rows],
            "shaper_form": "scatter: each sample spread with the row selected at its arrival; "
                           "rounding remainder carried (exact distance across row switches)",
            "ring_len": self.shaper.ring_len,
            "ring_slot_bytes": SLOT_BYTES[self.fmt],
            "slot_shift": SLOT_SHIFT,
            "amplitude_abs_sum": self.shaper.abs_sum,
            "amplitude_abs_sum_limit": abs_sum_limit(self.fmt, self.shaper.stride),
            "row_switch_transient_max": switch_transient(self.shaper),
        }
        if self.notch is not None:
            t = self.notch.table
            out["notch"] = {
                "coefficient_order": "{b0, b1, b2, a1, a2} per stage, feedback added (a1, a2 = -scipy); "
                                     + ("stored Q15 as {b0, 0, b1, b2, a1, a2}" if t.fmt == "q15"
                                        else "stored Q31 as {b0, b1, b2, a1, a2}"),
                "stages": t.n_stages,
                "coefficients": [[int(c) for c in row] for row in t.coeffs],
                "sos": [[float(c) for c in row] for row in t.sos()],
                **self.notch.as_dict(),
            }
        if self.feedback is not None:
            t = self.feedback
            out["feedback"] = {**self.feedback_summary, "rows": t.n_rows, "observer_states": t.n_obs,
                               "sensor_full_scale": t.fs_y, "speed_full_scale_m_s": t.fs_v,
                               "thresholds_counts": [int(v) for v in t.thresholds],
                               "fractions": {"obs_next": t.frac_o, "du_row": t.frac_u, "vhat_row": t.frac_v,
                                             "drive": t.frac_d}}
        out["sizes"] = self.sizes()
        out["files"] = sorted(files)
        return out


def notch_requested(project) -> bool:
    """``[firmware] notch`` if set, else whether the project file has a ``[notch]`` section (even empty)."""
    flag = project.firmware.get("notch")
    if flag is not None:
        return bool(flag)
    return "notch" in project.given_sections


def plan_for_project(project, *, fmt: str | None = None, prefix: str | None = None, schedule=None,
                     notch_sos=None, include_notch: bool | None = None) -> EmitPlan:
    """Design and quantize everything the folder will hold.

    Parameters
    ----------
    project : stillhook.project.Project
    fmt : {'q15', 'q31'}, optional
        Force the format (never escalated); default ``[firmware] format`` (escalated to Q31 when a
        Q15 notch fails and ``[firmware] escalate_to_q31``).
    prefix : str, optional
        C prefix of the tables; default ``[firmware] prefix``.
    schedule : Schedule-like, optional
        ``rope_lengths_m`` ascending, ``shapers`` on the drive-cycle grid, ``cycle_s``, ``tolerance``
        (and optionally ``lookup_rule``); default ``stillhook.shaping.envelope_design.schedule_for_project(project)``.
    notch_sos : array_like (n, 6), optional
        Notch cascade to emit; default ``stillhook.notch.design.notch_for_project(project).sos`` when a
        notch is requested.
    include_notch : bool, optional
        Override :func:`notch_requested`.

    Raises
    ------
    EmitError
        Off-grid shaper, rows closer than one input count, notch shift past tolerance, RAM budget.
    """
    fw = project.firmware
    forced = fmt is not None
    fmt_requested = fmt if forced else fw["format"]
    if fmt_requested not in FRACTION_BITS:
        raise ConfigError(f"format {fmt_requested!r} is not allowed; allowed: 'q15', 'q31'")
    prefix = check_identifier("prefix", prefix if prefix is not None else fw["prefix"])
    cycle_s = float(project.drive["cycle_s"])
    if schedule is None:
        schedule = schedule_for_project(project)
    if not math.isclose(float(schedule.cycle_s), cycle_s, rel_tol=1e-9):
        raise EmitError(f"schedule is for a {schedule.cycle_s:g} s cycle but [drive] cycle_s = {cycle_s:g} s")

    check, reason = _notch_check(project, fmt_requested, forced, cycle_s, notch_sos, include_notch)
    fmt_out = check.table.fmt if check is not None else fmt_requested
    rows, table = _shaper_rows(schedule, cycle_s, fmt_out)
    rule, sched = _schedule_table(project.envelope, schedule, float(fw["rope_length_lsb_m"]))
    fb_tables, fb_summary = _feedback(project, float(fw["rope_length_lsb_m"]))
    plan = EmitPlan(prefix, fmt_out, fmt_requested, reason, cycle_s, project.digest, project.name,
                    project.envelope.describe(), float(schedule.tolerance), rule, tuple(rows), table, sched, check,
                    int(fw["ram_budget_bytes"]), getattr(schedule, "reason", "") or "", fb_tables, fb_summary)
    _check_ram(plan)
    return plan


def _feedback(project, lsb: float):
    """(FeedbackTables, check summary) when the project has ``[feedback]``, else (None, None)."""
    if "feedback" not in project.given_sections:
        return None, None
    env = project.envelope
    design = feedback_for_project(project)
    check = check_envelope(design, env, project.feedback["min_damping_ratio"])
    summary = {**check.as_dict(), "sensor_kind": design.sensor_kind, "delay_cycles": design.delay_cycles}
    return feedback_tables(design, env, project.sensor, lsb), summary


def _notch_check(project, fmt_requested: str, forced: bool, cycle_s: float, notch_sos, include_notch):
    """(NotchCheck or None, reason for a format change or None): the notch, rounded, when one is emitted."""
    fw = project.firmware
    want_notch = notch_requested(project) if include_notch is None else include_notch
    if not (want_notch or notch_sos is not None):
        return None, None
    if notch_sos is None:
        notch_sos = notch_for_project(project).sos
    return choose_notch_format(notch_sos, fmt_requested, cycle_s, fw["max_notch_shift_pct"] / 100.0,
                               escalate=bool(fw["escalate_to_q31"]) and not forced)


def _shaper_rows(schedule, cycle_s: float, fmt: str) -> tuple[list[ShaperRow], ShaperTable]:
    """Each schedule row's shaper quantized (integer amplitudes, whole-cycle delays), and the runtime table."""
    rows_m = np.asarray(schedule.rope_lengths_m, dtype=float)
    if rows_m.ndim != 1 or rows_m.size != len(schedule.shapers) or rows_m.size == 0:
        raise EmitError("schedule needs one rope length per shaper (at least one row)")
    if np.any(np.diff(rows_m) <= 0):
        raise EmitError("schedule rope lengths must be strictly ascending")
    rows, pairs = [], []
    for L, sh in zip(rows_m, schedule.shapers, strict=True):
        if not sh.on_grid(cycle_s):
            raise EmitError(f"the shaper for {L:g} m rope is not on the {cycle_s:g} s drive-cycle grid")
        a, d = quantize_shaper(sh, cycle_s, fmt)
        pairs.append((a, d))
        rows.append(ShaperRow(float(L), tuple(int(v) for v in a), tuple(int(v) for v in d),
                              getattr(sh, "name", "")))
    return rows, ShaperTable.from_rows(pairs, fmt)


def _schedule_table(env, schedule, lsb: float) -> tuple[str, ScheduleTable]:
    """(lookup rule, ScheduleTable): the row rule as integer thresholds on rope-length counts of ``lsb`` m."""
    lo_m, hi_m = env.rope_length_range_m
    if hi_m / lsb >= 2**32:
        raise EmitError(f"rope length {hi_m:g} m does not fit a uint32 count of {lsb:g} m; "
                        "allowed: a larger [firmware] rope_length_lsb_m")
    rule = _schedule_rule(schedule)
    th = lookup_thresholds(np.asarray(schedule.rope_lengths_m, dtype=float), rule, lsb)
    sched = ScheduleTable(th, int(rope_length_counts(lo_m, lsb)), int(rope_length_counts(hi_m, lsb)), lsb)
    if th.size and (np.any(np.diff(th) <= 0) or th[0] <= sched.length_min or th[-1] > sched.length_max):
        raise EmitError(f"schedule rows are closer than one input count ({lsb:g} m) or outside the rope "
                        f"range [{lo_m:g}, {hi_m:g}] m; allowed: a smaller [firmware] rope_length_lsb_m "
                        "or fewer [design] max_schedule_rows")
    return rule, sched


def _check_ram(plan: EmitPlan) -> None:
    """EmitError with the numbers when the ring and the notch state exceed ``[firmware] ram_budget_bytes``."""
    sizes = plan.sizes()
    if sizes["ram_bytes"] > plan.ram_budget_bytes:
        longest = max(plan.rows, key=lambda r: r.delays_cycles[-1])
        raise EmitError(
            f"the design needs {sizes['ram_bytes']} bytes of RAM (accumulator ring {plan.shaper.ring_len} slots x "
            f"{SLOT_BYTES[plan.fmt]} bytes = {sizes['ring_bytes']} for the longest shaper, "
            f"{longest.delays_cycles[-1] * plan.cycle_s:g} s at {longest.rope_length_m:g} m rope, + "
            f"{sizes['notch_state_bytes']} notch state) but [firmware] ram_budget_bytes = "
            f"{plan.ram_budget_bytes}; allowed: a budget of at least {sizes['ram_bytes']} bytes")


def render_files(plan: EmitPlan) -> dict[str, str]:
    """``{file name: text}`` of the whole folder, sorted by name, manifest.json included."""
    p = plan.prefix
    files = dict(runtime_sources())
    files[f"{p}_tables.h"] = render_tables_h(plan)
    files[f"{p}_tables.c"] = render_tables_c(plan)
    files[f"{p}_selftest.c"] = render_selftest(plan)
    files[f"{p}_README.md"] = render_readme(plan)
    if plan.feedback is not None:
        files[f"{p}_feedback.h"] = render_feedback_h(plan, plan.feedback, plan.feedback_summary)
        files[f"{p}_feedback.c"] = render_feedback_c(plan, plan.feedback)
    names = sorted([*files, "manifest.json"])
    cautions = list(CAUTIONS) + (list(FEEDBACK_CAUTIONS) if plan.feedback is not None else [])
    files["manifest.json"] = to_json({**plan.manifest(names), "cautions": cautions})
    return {k: files[k] for k in sorted(files)}


#: Emit targets: ``c`` (tables + portable C runtime, the default) and ``st`` (IEC 61131-3 Structured
#: Text + PLCopen XML, :mod:`stillhook.firmware.render_st`). Both render the same EmitPlan.
EMIT_TARGETS = {"c": render_files, "st": render_st_files}
#: Extra rule a target puts on the prefix, checked before any design work.
_PREFIX_RULES = {"st": check_st_prefix}


def _renderer(target: str):
    if target not in EMIT_TARGETS:
        raise ConfigError(f"emit target {target!r} is not allowed; allowed: " + ", ".join(EMIT_TARGETS))
    return EMIT_TARGETS[target]


def render_target(plan: EmitPlan, target: str = "c") -> dict[str, str]:
    """``{file name: text}`` of ``plan`` for ``target`` (a key of :data:`EMIT_TARGETS`)."""
    return _renderer(target)(plan)


def emit_files(project, *, target: str = "c", **options) -> dict[str, str]:
    """Pure: project -> ``{file name: text}`` (options as :func:`plan_for_project`)."""
    return render_target(plan_for_project(project, **options), target)


def write_emit(project, out_dir, *, target: str = "c", force: bool = False,
               **options) -> tuple[EmitPlan, list[Path]]:
    """Emit into ``out_dir`` (checked before any work; see :mod:`stillhook.outputs` for ``force``).

    Parameters
    ----------
    target : {'c', 'st'}
        C tables and runtime (default) or IEC 61131-3 Structured Text for a PLC.

    Returns
    -------
    (plan, written paths)
    """
    check_out_dir(out_dir, force=force)
    render = _renderer(target)  # an unknown target or a prefix it cannot use is refused before the design work
    if target in _PREFIX_RULES:
        _PREFIX_RULES[target](check_identifier("prefix", prefix if (prefix := options.get("prefix")) is not None
                                               else project.firmware["prefix"]))
    plan = plan_for_project(project, **options)
    files = render(plan)
    return plan, write_files(out_dir, files, force=force)
