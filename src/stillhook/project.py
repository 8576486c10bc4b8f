"""Project file (TOML): the rig's envelope, the drive, and optional move, design and firmware choices.

Only ``[rig]`` and ``[drive]`` are required; every other section and key has a default.
Validation is declarative: :data:`SCHEMA` lists each section's keys with their kind, default
and allowed range, and every error names the key, the value and what is allowed.

Minimal file::

    [rig]
    hook_mass_kg = 180.0
    rigging_length_m = 2.4
    rope_length_m = [2.0, 8.0]      # one number, or [min, max] of the hoist range
    payload_mass_kg = [40.0, 900.0] # one number, or [min, max]

    [drive]
    cycle_s = 0.004
    max_speed_m_s = 0.6
    max_accel_m_s2 = 0.3
"""

from __future__ import annotations

import hashlib
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from stillhook.checks import LIMITS, check_identifier, check_quantity
from stillhook.errors import ConfigError, InputFileError, StillhookError
from stillhook.model.envelope import Envelope
from stillhook.model.sensors import SENSOR_KINDS
from stillhook.model.uncertainty import UNCERTAIN_PARAMETERS, RigUncertainty

DEMO_PROJECT_NAME = "demo_project.toml"


@dataclass(frozen=True)
class Key:
    """One key of the schema.

    kind: "number", "range" (number or [min, max]), "interval" ([min, max] only), "numbers" (a list of numbers),
    "int", "bool", "choice", "identifier". Numbers take their allowed range from :data:`stillhook.checks.LIMITS`
    under the key's name (the same range as the CLI option).
    """

    kind: str
    default: Any = None
    required: bool = False
    choices: tuple[str, ...] = ()

    def allowed(self, key: str) -> str:
        if self.kind == "bool":
            return "true or false"
        if self.kind == "choice":
            return "one of " + ", ".join(repr(c) for c in self.choices)
        if self.kind == "identifier":
            return "a C identifier (letters, digits and '_', starting with a letter)"
        text = LIMITS[key].allowed()
        if self.kind == "range":
            return "a number or [min, max] with min <= max, each " + text
        if self.kind == "interval":
            return "[min, max] with min <= max, each " + text
        if self.kind == "numbers":
            return f"a list of at most {MAX_LIST} numbers, each " + text
        return text


#: Every section and key the project file accepts. Units are in the key names; ranges in checks.LIMITS.
SCHEMA: dict[str, dict[str, Key]] = {
    "rig": {
        "hook_mass_kg": Key("number", required=True),
        "rigging_length_m": Key("number", required=True),
        "rope_length_m": Key("range", required=True),
        "payload_mass_kg": Key("range", required=True),
        "damping_ratio": Key("number", default=0.0),
        "gravity_m_s2": Key("number", default=9.80665),
        "nominal_rope_length_m": Key("number", default=None),
        "nominal_payload_mass_kg": Key("number", default=None),
        # pendulum length = encoder rope length + rope_offset_m (sheaves, hook block geometry); see Envelope
        "rope_offset_m": Key("number", default=0.0),
    },
    "drive": {
        "cycle_s": Key("number", required=True),
        "max_speed_m_s": Key("number", required=True),
        "max_accel_m_s2": Key("number", required=True),
        "max_jerk_m_s3": Key("number", default=None),
        "hoist_speed_m_s": Key("number", default=0.1),
        "hoist_accel_m_s2": Key("number", default=0.2),
        # the drive's closed speed loop as a first-order lag (s); 0.05 s is common practice for trolley
        # inverter drives (no source): used by the feedback design and the closed-loop simulation
        "speed_loop_time_constant_s": Key("number", default=0.05),
    },
    "move": {
        "distance_m": Key("number", default=6.0),
        "profile": Key("choice", default="trapezoid", choices=("trapezoid", "scurve")),
        "hoist_to_m": Key("number", default=None),
        "hoist_start_s": Key("number", default=0.0),
    },
    "design": {
        "tolerance_pct": Key("number", default=5.0),
        "method": Key("choice", default="auto",
                      choices=("auto", "zv", "zvd", "zvdd", "ei", "ei2", "ei3", "umzv", "band")),
        "schedule": Key("bool", default=True),
        "max_schedule_rows": Key("int", default=64),
    },
    "notch": {
        "width_hz": Key("number", default=None),
        "depth_db": Key("number", default=None),
        # default width: -3 dB at the mode's band edges ("band") or the tolerance over the band ("tolerance")
        "width_rule": Key("choice", default="band", choices=("band", "tolerance")),
    },
    "firmware": {
        "format": Key("choice", default="q15", choices=("q15", "q31")),
        "prefix": Key("identifier", default="sway"),
        "ram_budget_bytes": Key("int", default=32768),
        # rope length input of the schedule lookup: metres per count of the uint32 the drive passes
        "rope_length_lsb_m": Key("number", default=0.001),
        # emit the notch cascade too; unset: emit it when the file has a [notch] section
        "notch": Key("bool", default=None),
        # largest shift of a notch frequency that coefficient rounding may cause, percent of it
        "max_notch_shift_pct": Key("number", default=1.0),
        # when Q15 rounding would move a notch past that limit, emit everything in Q31 instead of refusing
        "escalate_to_q31": Key("bool", default=True),
    },
    # written by `stillhook calibrate`: the values before calibration, the fit's standard deviations and
    # the identified frequencies it fitted (one entry per identified mode); the report's commissioning section
    "calibration": {
        "nominal_hook_mass_kg": Key("number", default=None),
        "nominal_rigging_length_m": Key("number", default=None),
        "nominal_rope_offset_m": Key("number", default=None),
        "nominal_damping_ratio": Key("number", default=None),
        "hook_mass_sd_kg": Key("number", default=None),
        "rigging_length_sd_m": Key("number", default=None),
        "rope_offset_sd_m": Key("number", default=None),
        "damping_ratio_sd": Key("number", default=None),
        "rope_length_m": Key("numbers", default=()),
        "payload_mass_kg": Key("numbers", default=()),
        "mode": Key("numbers", default=()),
        "measured_hz": Key("numbers", default=()),
        "measured_sd_hz": Key("numbers", default=()),
    },
}
# sway sensor for the feedback controller: what it measures (the commissioning logs' names), its noise
# standard deviation and resolution in that unit, and its delay in whole drive cycles
SCHEMA["sensor"] = {
    "kind": Key("choice", default="hook_angle_rad", choices=SENSOR_KINDS),
    "noise_sd": Key("number", default=0.0),
    "resolution": Key("number", default=0.0),
    "delay_cycles": Key("int", default=0),
    # fault path of the feedback runtime: a reading beyond max_abs (sensor unit; unset: 0.35 rad, or 0.35 x the
    # longest rope plus rigging for offsets), one that changes by more than max_jump in a cycle (unset: 4 x the
    # fastest sway at max_abs plus 6 noise_sd and 2 resolutions), or no new sample for stale_cycles cycles
    # switches the feedback off
    "max_abs": Key("number", default=None),
    "max_jump": Key("number", default=None),
    "stale_cycles": Key("int", default=5),
}
# closed-loop sway damping (stillhook.feedback): present = the project uses a feedback controller
SCHEMA["feedback"] = {
    # damping ratio every closed-loop pole pair (both sway modes, the observer) reaches at each row's design rig
    "target_damping_ratio": Key("number", default=0.1),
    # the least damping ratio accepted anywhere on the envelope grid (the check reports pass or fail)
    "min_damping_ratio": Key("number", default=0.03),
    # rope-length rows of the gain schedule, geometrically spaced over the hoist range
    "rows": Key("int", default=8),
    # payload mass each row is designed at; unset: [rig] nominal_payload_mass_kg
    "design_payload_mass_kg": Key("number", default=None),
}
# what the rig's values may really be: the design stays made for [rig]; the sweep's random samples draw
# these too (each [min, max] around the [rig] value). calibration_sd: parameters without a range here get the
# [rig] value +- that many [calibration] standard deviations (bounded by the parameter's limits)
SCHEMA["uncertainty"] = {
    "hook_mass_kg": Key("interval", default=None),
    "rigging_length_m": Key("interval", default=None),
    "damping_ratio": Key("interval", default=None),
    "calibration_sd": Key("number", default=None),
}
REQUIRED_SECTIONS = ("rig", "drive")
#: Longest list a "numbers" key accepts.
MAX_LIST = 4096


@dataclass(frozen=True)
class Project:
    """A validated project.

    Attributes
    ----------
    envelope : Envelope
        The rig over its rope-length and payload-mass ranges.
    drive, move, design, notch, firmware : dict
        Every key of that section of :data:`SCHEMA`, with defaults filled in.
    digest : str
        SHA-256 (hex) of the project file's bytes, for provenance in emitted files.
    name : str
        File stem, e.g. ``"demo_project"``.
    given_sections : tuple of str
        The sections the file itself contains (an empty ``[notch]`` table counts).
    sensor, feedback : dict
        Every key of ``[sensor]`` and ``[feedback]``, defaults filled in (the feedback controller is
        used when ``"feedback" in given_sections``).
    calibration : dict
        ``[calibration]`` with defaults filled in (written by ``stillhook calibrate``; empty lists when absent).
    uncertainty : RigUncertainty or None
        Ranges of hook mass, rigging length and damping ratio from ``[uncertainty]`` (None without that
        section); the sweep's random samples draw them.
    """

    envelope: Envelope
    drive: dict
    move: dict
    design: dict
    notch: dict
    firmware: dict
    digest: str
    name: str = "project"
    given_sections: tuple[str, ...] = ()
    sensor: dict = field(default_factory=dict)
    feedback: dict = field(default_factory=dict)
    calibration: dict = field(default_factory=dict)
    uncertainty: RigUncertainty | None = None


def _where(section: str, key: str) -> str:
    return f"[{section}] {key}"


def _number(section: str, key: str, value: Any) -> float:
    if not isinstance(value, int | float) or isinstance(value, bool):  # a TOML string "5" is not a number
        raise ConfigError(f"{_where(section, key)} = {value!r} is not a number; allowed: {LIMITS[key].allowed()}")
    return check_quantity(key, value, name=_where(section, key))


def _value(section: str, key: str, spec: Key, value: Any) -> Any:
    where = _where(section, key)
    if spec.kind == "number":
        return _number(section, key, value)
    if spec.kind == "int":
        return check_quantity(key, value, name=where)
    if spec.kind == "interval" and not isinstance(value, list):
        raise ConfigError(f"{where} = {value!r} is not a list [min, max]; allowed: {spec.allowed(key)}")
    if spec.kind in ("range", "interval"):
        if isinstance(value, list):
            if len(value) != 2:
                raise ConfigError(f"{where} = {value!r} has {len(value)} items; allowed: {spec.allowed(key)}")
            lo, hi = (_number(section, key, v) for v in value)
            if lo > hi:
                raise ConfigError(f"{where} = {value!r} has min > max; allowed: {spec.allowed(key)}")
            return (lo, hi)
        v = _number(section, key, value)
        return (v, v)
    if spec.kind == "numbers":
        if not isinstance(value, list) or len(value) > MAX_LIST:
            raise ConfigError(f"{where} = {value!r} is not a list of numbers; allowed: {spec.allowed(key)}")
        return tuple(_number(section, key, v) for v in value)
    if spec.kind == "bool":
        if not isinstance(value, bool):
            raise ConfigError(f"{where} = {value!r} is not true/false; allowed: {spec.allowed(key)}")
        return value
    if spec.kind == "choice":
        if value not in spec.choices:
            raise ConfigError(f"{where} = {value!r} is not allowed; allowed: {spec.allowed(key)}")
        return value
    if spec.kind == "identifier":
        return check_identifier(where, value)
    raise AssertionError(f"unknown key kind {spec.kind}")  # schema bug, not user input


def validate(data: dict) -> dict[str, dict]:
    """Check parsed TOML against :data:`SCHEMA`; return every section with defaults filled in."""
    if not isinstance(data, dict):
        raise ConfigError("project file must be a TOML document of tables")
    for section in data:
        if section not in SCHEMA:
            raise ConfigError(f"unknown section [{section}]; allowed: " + ", ".join(f"[{s}]" for s in SCHEMA))
        if not isinstance(data[section], dict):
            raise ConfigError(f"{section} must be a table [{section}], got {data[section]!r}")
    for section in REQUIRED_SECTIONS:
        if section not in data:
            required = ", ".join(f"[{s}]" for s in REQUIRED_SECTIONS)
            raise ConfigError(f"missing section [{section}]; required: {required}")
    out: dict[str, dict] = {}
    for section, keys in SCHEMA.items():
        given = data.get(section, {})
        for key in given:
            if key not in keys:
                raise ConfigError(f"unknown key {_where(section, key)}; allowed keys: " + ", ".join(keys))
        values = {}
        for key, spec in keys.items():
            if key in given:
                values[key] = _value(section, key, spec, given[key])
            elif spec.required:
                raise ConfigError(f"missing key {_where(section, key)}; allowed: {spec.allowed(key)}")
            else:
                values[key] = spec.default
        out[section] = values
    return out


def project_from_dict(data: dict, *, digest: str = "", name: str = "project") -> Project:
    """Build a :class:`Project` from parsed TOML (a dict of sections)."""
    s = validate(data)
    rig = s["rig"]
    try:
        env = Envelope(
            hook_mass_kg=rig["hook_mass_kg"],
            rigging_length_m=rig["rigging_length_m"],
            rope_length_range_m=rig["rope_length_m"],
            payload_mass_range_kg=rig["payload_mass_kg"],
            damping_ratio=rig["damping_ratio"],
            gravity_m_s2=rig["gravity_m_s2"],
            nominal_rope_length_m=rig["nominal_rope_length_m"],
            nominal_payload_mass_kg=rig["nominal_payload_mass_kg"],
            rope_offset_m=rig["rope_offset_m"],
        )
    except StillhookError as exc:
        raise ConfigError(f"[rig] {exc}") from None
    hoist_to = s["move"]["hoist_to_m"]
    if hoist_to is not None:
        lo, hi = env.rope_length_range_m
        if not lo <= hoist_to <= hi:
            raise ConfigError(f"[move] hoist_to_m = {hoist_to:g} is outside the rope range; "
                              f"allowed: a value in [{lo:g}, {hi:g}]")
    cal = s["calibration"]
    lists = ("rope_length_m", "payload_mass_kg", "mode", "measured_hz", "measured_sd_hz")
    if len({len(cal[k]) for k in lists}) > 1:
        raise ConfigError("[calibration] " + ", ".join(f"{k} ({len(cal[k])})" for k in lists)
                          + " have different lengths; allowed: one entry each per identified mode")
    return Project(env, s["drive"], s["move"], s["design"], s["notch"], s["firmware"], digest, name,
                   given_sections=tuple(section for section in SCHEMA if section in data), calibration=cal,
                   sensor=s["sensor"], feedback=s["feedback"],
                   uncertainty=rig_uncertainty(s["uncertainty"], env, cal) if "uncertainty" in data else None)


#: [calibration] standard-deviation key of each uncertain parameter.
CALIBRATION_SD_KEYS = {"hook_mass_kg": "hook_mass_sd_kg", "rigging_length_m": "rigging_length_sd_m",
                       "damping_ratio": "damping_ratio_sd"}


def rig_uncertainty(section: dict, envelope: Envelope, calibration: dict) -> RigUncertainty:
    """The ``[uncertainty]`` section (validated, defaults filled in) as a :class:`RigUncertainty`.

    A parameter with its own [min, max] takes it; otherwise, with ``calibration_sd = k``, it takes
    v +- k sd (v the ``[rig]`` value, sd the ``[calibration]`` standard deviation; bounded by the parameter's
    limits in ``checks.LIMITS``); otherwise it is known exactly.
    """
    nominal = {k: getattr(envelope, k) for k in UNCERTAIN_PARAMETERS}
    ranges, sources = {}, {}
    k_sd = section["calibration_sd"]
    if k_sd is not None and not any(calibration.get(CALIBRATION_SD_KEYS[k]) for k in UNCERTAIN_PARAMETERS):
        raise ConfigError(f"[uncertainty] calibration_sd = {k_sd:g} needs standard deviations in [calibration] "
                          f"({', '.join(CALIBRATION_SD_KEYS.values())}, written by stillhook calibrate); allowed: "
                          "a calibrated project, or [min, max] ranges in [uncertainty]")
    for key in UNCERTAIN_PARAMETERS:
        sd = calibration.get(CALIBRATION_SD_KEYS[key])
        if section[key] is not None:
            ranges[key], sources[key] = section[key], f"[uncertainty] {key}"
        elif k_sd is not None and sd:
            limit = LIMITS[key]
            lo, hi = nominal[key] - k_sd * sd, nominal[key] + k_sd * sd
            ranges[key] = (max(lo, limit.lo) if limit.lo is not None else lo,
                           min(hi, limit.hi) if limit.hi is not None else hi)
            sources[key] = f"[rig] {key} +- {k_sd:g} x [calibration] {CALIBRATION_SD_KEYS[key]} ({sd:.3g})"
    return RigUncertainty(nominal, ranges, sources)


def load_project(path: str | Path) -> Project:
    """Read and validate a project TOML file.

    Raises
    ------
    InputFileError
        The file is missing, unreadable or not valid TOML.
    ConfigError
        A section or key is missing, unknown or out of range.
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise InputFileError(f"project file {str(p)!r} not found") from None
    except IsADirectoryError:
        raise InputFileError(f"project file {str(p)!r} is a directory") from None
    except OSError as exc:
        raise InputFileError(f"project file {str(p)!r} cannot be read: {exc.strerror}") from None
    return _parse(raw, str(p), p.stem)


def _parse(raw: bytes, label: str, name: str) -> Project:
    try:
        data = tomllib.loads(raw.decode("utf-8-sig"))  # a byte-order mark some editors write is skipped
    except UnicodeDecodeError:
        raise InputFileError(f"project file {label!r} is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputFileError(f"project file {label!r} is not valid TOML: {exc}") from None
    try:
        return project_from_dict(data, digest=hashlib.sha256(raw).hexdigest(), name=name)
    except ConfigError as exc:
        raise ConfigError(f"{label}: {exc}") from None


def project_from_bytes(raw: bytes, file_name: str) -> Project:
    """Parse and validate a project file's bytes; ``file_name`` labels errors and gives the project name."""
    return _parse(raw, file_name, Path(file_name).stem)


def demo_project_text() -> str:
    """The built-in demo project's TOML text (an invented scenario)."""
    return resources.files("stillhook").joinpath("data", DEMO_PROJECT_NAME).read_text(encoding="utf-8")


def load_demo_project() -> Project:
    """The built-in demo project, validated."""
    raw = demo_project_text().encode("utf-8")
    return _parse(raw, DEMO_PROJECT_NAME, Path(DEMO_PROJECT_NAME).stem)


def load_project_or_demo(path: str | None) -> Project:
    """``path`` if given, else the demo; the CLI accepts ``demo`` as a project name too."""
    if path is None or path == "demo":
        return load_demo_project()
    return load_project(path)
