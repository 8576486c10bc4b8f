"""The one place for input checks: numbers, the allowed range of each physical quantity, identifiers, work size.

Every user-facing number goes through :func:`finite_number`. Quantities a user types (project keys, CLI
options, library arguments) carry one :class:`Limit` each in :data:`LIMITS`, keyed by the project key name;
the project schema, the CLI options and the library all check with :func:`check_quantity`, so a number has the
same allowed range wherever it is typed, and the message names what the user typed (``--hook-mass-kg``,
``[rig] hook_mass_kg``) and says why the bound is there. :func:`check_identifier` is the one identifier rule
(C prefixes), :func:`check_work` the one "too much work" refusal (samples, grid points, LP size).

Each caller raises its own domain error (RigError, ConfigError, DesignError, EmitError) through ``error``.

The bounds are plausibility bounds a crane engineer accepts (common practice, no source): wide enough for every
overhead, gantry, tower and ship-to-shore crane, narrow enough that the models stay well conditioned and no
computation runs away. README.md ("Limits") lists them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from stillhook.errors import ConfigError

__all__ = [
    "C_RESERVED_WORDS", "LIMITS", "Limit", "MAX_MOVE_SAMPLES", "MAX_SIM_SAMPLES", "MAX_SWEEP_RIGS", "check_identifier",
    "check_quantity", "check_quantity_array", "check_work", "finite_number",
]


def finite_number(name: str, value, *, allowed: str, error: type[Exception] = ConfigError,
                  lo: float | None = None, lo_ok: bool = True, hi: float | None = None,
                  hi_ok: bool = True) -> float:
    """``float(value)`` when it is a finite number within [lo, hi] (ends open where ``*_ok`` is False).

    Raises ``error`` with "<name> = <value> is not a number | is not finite | is out of range;
    allowed: <allowed>". Booleans are not numbers.
    """
    if isinstance(value, bool):
        raise error(f"{name} = {value!r} is not a number; allowed: {allowed}")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise error(f"{name} = {value!r} is not a number; allowed: {allowed}") from None
    if not math.isfinite(v):
        raise error(f"{name} = {value!r} is not finite; allowed: {allowed}")
    below = lo is not None and (v < lo or (v == lo and not lo_ok))
    above = hi is not None and (v > hi or (v == hi and not hi_ok))
    if below or above:
        raise error(f"{name} = {value!r} is out of range; allowed: {allowed}")
    return v


def _num(x: float) -> str:
    """A bound as people write it: whole numbers in full (1000000), others with %g."""
    return str(int(x)) if float(x).is_integer() and abs(x) < 1e12 else f"{x:g}"


@dataclass(frozen=True)
class Limit:
    """Allowed values of one quantity: lo .. hi (an end is open where ``*_ok`` is False) and why.

    ``unit`` is shown in messages; ``integer`` asks for a whole number.
    """

    unit: str
    lo: float | None = None
    hi: float | None = None
    lo_ok: bool = True
    hi_ok: bool = True
    reason: str = ""
    integer: bool = False

    def allowed(self) -> str:
        """E.g. ``"a number >= 1 and <= 5e+05 (kg); a hook block ..."``."""
        parts = []
        if self.lo is not None:
            parts.append((">= " if self.lo_ok else "> ") + _num(self.lo))
        if self.hi is not None:
            parts.append(("<= " if self.hi_ok else "< ") + _num(self.hi))
        what = "a whole number" if self.integer else "a number"
        text = what + (" " + " and ".join(parts) if parts else "") + (f" ({self.unit})" if self.unit else "")
        return text + (f"; {self.reason}" if self.reason else "")

    def check(self, name: str, value, error: type[Exception] = ConfigError):
        """The checked value (float, or int when ``integer``); ``error`` names ``name`` otherwise."""
        if self.integer and not (isinstance(value, int | np.integer) and not isinstance(value, bool)):
            raise error(f"{name} = {value!r} is not a whole number; allowed: {self.allowed()}")
        v = finite_number(name, value, allowed=self.allowed(), error=error)
        unit = f" {self.unit}" if self.unit else ""
        why = f" ({self.reason})" if self.reason else ""
        if self.lo is not None and (v < self.lo or (v == self.lo and not self.lo_ok)):
            bound = "at least" if self.lo_ok else "more than"
            raise error(f"{name} = {value!r} is too small; allowed: {bound} {_num(self.lo)}{unit}{why}")
        if self.hi is not None and (v > self.hi or (v == self.hi and not self.hi_ok)):
            bound = "at most" if self.hi_ok else "less than"
            raise error(f"{name} = {value!r} is too large; allowed: {bound} {_num(self.hi)}{unit}{why}")
        return int(v) if self.integer else v


_G = "stay far enough from the numbers at which the model or the computation breaks down"

#: The allowed range of every quantity a user can type, keyed by its project key (also the CLI option's name).
LIMITS: dict[str, Limit] = {
    # rig
    "hook_mass_kg": Limit("kg", 1.0, 5e5, reason="a hook block weighs at least 1 kg, lighter makes the "
                          "two-mode model ill-conditioned; at most 500 t"),
    "payload_mass_kg": Limit("kg", 0.0, 2e7, reason="0 means no payload; the largest cranes lift about 20000 t"),
    "rope_length_m": Limit("m", 0.1, 1000.0, reason="rope from trolley to hook between 0.1 m and 1000 m"),
    "rigging_length_m": Limit("m", 0.0, 100.0, reason="hook to payload centre of mass, 0 = payload at the hook"),
    "damping_ratio": Limit("", 0.0, 0.7, reason="rope sway damps at a few percent at most; above 0.7 there is "
                           "no overshoot left to shape"),
    "gravity_m_s2": Limit("m/s2", 1.0, 30.0, reason="9.78 to 9.83 on Earth; other values only for what-if studies"),
    # drive
    "cycle_s": Limit("s", 1e-5, 0.1, reason="drive cycles run from 10 us to 100 ms"),
    "max_speed_m_s": Limit("m/s", 0.01, 10.0, reason="a travel drive moves 1 cm/s to 10 m/s"),
    "max_accel_m_s2": Limit("m/s2", 0.005, 10.0, reason="a crane drive accelerates 0.005 to 10 m/s2"),
    "max_jerk_m_s3": Limit("m/s3", 0.005, 1000.0, reason="jerk limits of crane drives lie within 0.005 to "
                           "1000 m/s3"),
    "hoist_speed_m_s": Limit("m/s", 0.005, 5.0, reason="a hoist moves 5 mm/s to 5 m/s"),
    "hoist_accel_m_s2": Limit("m/s2", 0.005, 10.0, reason="a hoist accelerates 0.005 to 10 m/s2"),
    # move
    "distance_m": Limit("m", 0.0, 1000.0, lo_ok=False, reason="one move travels more than 0 and at most 1000 m"),
    "hoist_start_s": Limit("s", 0.0, 3600.0, reason="hoisting starts within the first hour of the move"),
    # design
    "tolerance_pct": Limit("%", 0.0, 100.0, lo_ok=False, hi_ok=False,
                           reason="residual sway in percent of the unshaped sway"),
    "frequency_hz": Limit("Hz", 0.0, 1000.0, lo_ok=False, reason="a mode frequency above 0 and at most 1 kHz"),
    "band_edge_hz": Limit("Hz", 0.0, 1000.0, lo_ok=False, reason="band edges above 0 and at most 1 kHz"),
    "max_schedule_rows": Limit("rows", 1, 4096, integer=True, reason="each row is a table in the drive's memory"),
    # notch
    "width_hz": Limit("Hz", 0.0, 100.0, lo_ok=False, reason="-3 dB width of a notch, above 0 and at most 100 Hz"),
    "depth_db": Limit("dB", 3.02, 200.0, reason="attenuation at the centre, deeper than 3 dB so the notch has a -3 dB "
                      "width; a true null when unset"),
    # firmware
    "ram_budget_bytes": Limit("bytes", 64, 1 << 30, integer=True, reason="RAM the drive gives the buffers"),
    "rope_length_lsb_m": Limit("m", 1e-6, 1.0, reason="metres per count of the rope-length input"),
    "max_notch_shift_pct": Limit("%", 0.0, 50.0, lo_ok=False, reason="largest notch shift rounding may cause"),
    # study
    "grid_points": Limit("points", 1, 1000, integer=True, reason="rigs per envelope axis; 1000 x 1000 at most"),
    "random_rigs": Limit("rigs", 1, 1_000_000, integer=True, reason="as many rigs as the largest grid"),
    "seed": Limit("", 0, 2**32 - 1, integer=True, reason="random seed"),
    "window_s": Limit("s", 0.0, 1e6, reason="a time in the log, from its start"),
    "settle_s": Limit("s", 0.0, 600.0, lo_ok=False, reason="window after the move in which sway is measured"),
}
LIMITS.update({
    # commissioning: pendulum length = encoder rope length + rope_offset_m; [calibration] written by calibrate
    "rope_offset_m": Limit("m", -100.0, 100.0, reason="sheaves and hook block geometry add or remove at most 100 m"),
    "hook_mass_sd_kg": Limit("kg", 0.0, 5e5, reason="standard deviation of a fitted hook mass"),
    "rigging_length_sd_m": Limit("m", 0.0, 100.0, reason="standard deviation of a fitted rigging length"),
    "rope_offset_sd_m": Limit("m", 0.0, 100.0, reason="standard deviation of a fitted rope offset"),
    "damping_ratio_sd": Limit("", 0.0, 1.0, reason="standard deviation of a fitted damping ratio"),
    "mode": Limit("", 1.0, 2.0, reason="mode number: 1 the low mode, 2 the high mode"),
    "measured_hz": Limit("Hz", 0.0, 1000.0, lo_ok=False, reason="an identified sway frequency"),
    "measured_sd_hz": Limit("Hz", 0.0, 1000.0, reason="standard deviation of an identified frequency"),
    # feedback controller: the drive's speed loop, the sway sensor, the closed-loop design
    "speed_loop_time_constant_s": Limit("s", 0.0, 5.0, lo_ok=False, reason="the drive's closed speed loop as a "
                                        "first-order lag"),
    "noise_sd": Limit("sensor unit", 0.0, 10.0, reason="standard deviation of the sensor noise"),
    "resolution": Limit("sensor unit", 0.0, 1.0, reason="the sensor's quantization step"),
    "delay_cycles": Limit("cycles", 0, 50, integer=True, reason="sensor delay in whole drive cycles"),
    "max_abs": Limit("sensor unit", 0.0, None, lo_ok=False, reason="a reading beyond it is a sensor fault"),
    "max_jump": Limit("sensor unit", 0.0, None, lo_ok=False, reason="a change per cycle beyond it is a sensor fault"),
    "stale_cycles": Limit("cycles", 1, 1000, integer=True, reason="cycles without a new sample before the fault"),
    "target_damping_ratio": Limit("", 0.0, 0.7, lo_ok=False, reason="closed-loop damping of every pole pair"),
    "min_damping_ratio": Limit("", 0.0, 0.7, reason="least closed-loop damping accepted on the envelope"),
    "rows": Limit("rows", 1, 64, integer=True, reason="rope-length rows of the gain schedule"),
    # uncertainty study: ranges of +- k standard deviations of the calibration
    "calibration_sd": Limit("standard deviations", 0.0, 10.0, lo_ok=False, reason="ranges of +- k standard "
                            "deviations of the calibration's fit (k = 3 covers 99.7 % of a normal estimate)"),
})
for _alias, _quantity in (("nominal_rope_length_m", "rope_length_m"), ("nominal_payload_mass_kg", "payload_mass_kg"),
                          ("hoist_to_m", "rope_length_m"), ("nominal_hook_mass_kg", "hook_mass_kg"),
                          ("nominal_rigging_length_m", "rigging_length_m"), ("nominal_rope_offset_m", "rope_offset_m"),
                          ("nominal_damping_ratio", "damping_ratio"),
                          ("design_payload_mass_kg", "payload_mass_kg")):
    LIMITS[_alias] = LIMITS[_quantity]

#: Drive cycles of one move command at most: 400 000 is 2000 s at a 5 ms cycle, about 15 s of nonlinear
#: simulation on one core.
MAX_MOVE_SAMPLES = 400_000
#: Samples of one simulation (command, filter ring-out and settle window) at most: ~160 MB of recording.
MAX_SIM_SAMPLES = 2_000_000
#: Rigs of one envelope sweep at most (the sweep streams them in chunks, so memory stays bounded; time grows).
MAX_SWEEP_RIGS = 1_000_000


def check_quantity(quantity: str, value, *, name: str | None = None, error: type[Exception] = ConfigError):
    """``value`` checked against ``LIMITS[quantity]``; the error names ``name`` (default: the quantity)."""
    return LIMITS[quantity].check(name or quantity, value, error)


def check_quantity_array(quantity: str, values, *, name: str | None = None,
                         error: type[Exception] = ConfigError) -> np.ndarray:
    """Every element of ``values`` checked against ``LIMITS[quantity]``; returns a float array."""
    a = np.asarray(values, dtype=float)
    limit = LIMITS[quantity]
    bad = ~np.isfinite(a)
    if limit.lo is not None:
        bad |= (a < limit.lo) | ((a == limit.lo) & (not limit.lo_ok))
    if limit.hi is not None:
        bad |= (a > limit.hi) | ((a == limit.hi) & (not limit.hi_ok))
    if np.any(bad):
        first = a[np.argmax(bad)]
        raise error(f"{name or quantity} contains {first!r}, out of range; allowed: {limit.allowed()}")
    return a


#: Words a C prefix may not be (C99/C11/C23 keywords and the runtime's own file prefix ``shk``).
C_RESERVED_WORDS = frozenset("""
auto break case char const continue default do double else enum extern float for goto if inline int long register
restrict return short signed sizeof static struct switch typedef union unsigned void volatile while alignas alignof
bool constexpr false nullptr static_assert thread_local true typeof typeof_unqual
""".split())


def check_identifier(name: str, value, *, error: type[Exception] = ConfigError, max_len: int = 24,
                     reserved_prefix: str = "shk") -> str:
    """A C identifier usable as a prefix of emitted names and files, or ``error``.

    Allowed: ASCII letters, digits and ``_``, 1 to ``max_len`` characters, starting with a letter; not a C
    keyword; not starting with ``reserved_prefix`` (the runtime's file names, any case). A leading underscore
    is refused because C reserves ``_X`` and ``__x`` names (ISO/IEC 9899:1999, 7.1.3).
    """
    allowed = (f"a C identifier of ASCII letters, digits and '_', 1-{max_len} characters, starting with a letter, "
               f"not a C keyword and not starting with '{reserved_prefix}' (the runtime's own files)")
    ok = (isinstance(value, str) and 1 <= len(value) <= max_len and value.isascii() and value[0].isalpha()
          and all(c.isalnum() or c == "_" for c in value))
    if not ok or value in C_RESERVED_WORDS:
        raise error(f"{name} = {value!r} is not allowed; allowed: {allowed}")
    if value.lower().startswith(reserved_prefix):
        raise error(f"{name} = {value!r} collides with the runtime's files ({reserved_prefix}_*.c/h); "
                    f"allowed: {allowed}")
    return value


def check_work(what: str, amount: float, limit: float, *, hint: str, error: type[Exception] = ConfigError) -> None:
    """Refuse up front work that would exhaust memory or time: ``amount`` of ``what`` above ``limit``."""
    if amount > limit:
        raise error(f"{what}: {amount:.4g} is above the limit of {limit:.4g}; {hint}")
