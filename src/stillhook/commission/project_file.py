"""The calibrated project file: the user's TOML text with the fitted [rig] values, a record of the fit.

Edits are made on the text, so the user's comments and layout stay: the [rig] keys hook_mass_kg,
rigging_length_m, rope_offset_m and damping_ratio get the fitted values (a missing key is added at the
end of [rig]); a comment block at the top records the logs (SHA-256), the fit and its uncertainty; a
``[calibration]`` table at the end carries the values before calibration and the fitted frequencies for
the report. Calibrating a calibrated file replaces both and keeps the first nominal values.
The result is parsed back and checked before it is returned.
"""

from __future__ import annotations

import re
import tomllib

from stillhook.cautions import CAUTIONS
from stillhook.commission.calibrate import PARAMETERS
from stillhook.errors import ConfigError
from stillhook.project import project_from_dict

__all__ = ["BLOCK_BEGIN", "BLOCK_END", "CALIBRATION_CAUTION", "calibrated_project_text"]

BLOCK_BEGIN = "# >>> stillhook calibrate: this file was calibrated against sway logs"
BLOCK_END = "# <<< stillhook calibrate"
#: The caution every calibration output carries (besides stillhook.cautions.CAUTIONS).
CALIBRATION_CAUTION = ("Calibration fits the model to the logs given; re-verify on the crane at low speed after "
                       "re-tuning.")
_SECTION = re.compile(r"^\s*\[([A-Za-z0-9_.]+)\]\s*(#.*)?$")
_SD_KEYS = {"hook_mass_kg": "hook_mass_sd_kg", "rigging_length_m": "rigging_length_sd_m",
            "rope_offset_m": "rope_offset_sd_m", "damping_ratio": "damping_ratio_sd"}


def _sections(lines: list[str]) -> list[tuple[str, int, int]]:
    """(name, first line, end line) of each [section] (end exclusive)."""
    heads = [(m.group(1), i) for i, line in enumerate(lines) if (m := _SECTION.match(line))]
    return [(name, i, heads[n + 1][1] if n + 1 < len(heads) else len(lines)) for n, (name, i) in enumerate(heads)]


def _strip_previous(text: str) -> list[str]:
    lines = text.splitlines()
    if BLOCK_BEGIN in lines and BLOCK_END in lines:
        lines = lines[: lines.index(BLOCK_BEGIN)] + lines[lines.index(BLOCK_END) + 1:]
    for name, a, b in _sections(lines):
        if name == "calibration":
            lines = lines[:a] + lines[b:]
            break
    while lines and not lines[-1].strip():
        lines.pop()
    return lines


def _set_rig_keys(lines: list[str], values: dict) -> list[str]:
    rig = [(a, b) for name, a, b in _sections(lines) if name == "rig"]
    if not rig:
        raise ConfigError("the project file has no [rig] section to calibrate")
    a, b = rig[0]
    body = lines[a + 1: b]
    for key in PARAMETERS:
        pattern = re.compile(rf"^(\s*){key}\s*=\s*[^#]*?(\s*#.*)?$")
        new = f"{key} = {values[key]:.6g}"
        hits = [i for i, line in enumerate(body) if pattern.match(line)]
        if hits:
            m = pattern.match(body[hits[0]])
            body[hits[0]] = f"{m.group(1)}{new}{m.group(2) or ''}"
        else:
            last = max((i for i, line in enumerate(body) if line.strip() and not line.lstrip().startswith("#")),
                       default=-1)
            body.insert(last + 1, new + "  # added by stillhook calibrate")
    return lines[: a + 1] + body + lines[b:]


def _fmt_list(values) -> str:
    return "[" + ", ".join(f"{v:.9g}" for v in values) + "]"


def _calibration_table(cal, nominal: dict) -> list[str]:
    obs = cal.observations
    out = ["", "[calibration]", "# written by stillhook calibrate: values before calibration, the fit's standard "
           "deviations, the identified frequencies fitted"]
    out += [f"nominal_{k} = {nominal[k]:.9g}" for k in PARAMETERS]
    out += [f"{_SD_KEYS[k]} = {cal.sds[k]:.6g}" for k in PARAMETERS if cal.sds[k] is not None]
    out += [f"rope_length_m = {_fmt_list(o.rope_length_m for o in obs)}",
            f"payload_mass_kg = {_fmt_list(o.payload_mass_kg for o in obs)}",
            f"mode = {_fmt_list(o.mode for o in obs)}",
            f"measured_hz = {_fmt_list(o.measured_hz for o in obs)}",
            f"measured_sd_hz = {_fmt_list(o.measured_sd_hz for o in obs)}"]
    return out


def _comment_block(cal, logs) -> list[str]:
    out = [BLOCK_BEGIN, "# weighted least squares of the two-mode model's frequencies against the identified ones;",
           "# logs (SHA-256):"]
    out += [f"#   {name}  {sha}" for name, sha in logs]
    for k in PARAMETERS:
        sd = cal.sds[k]
        how = f"+- {sd:.3g} (1 sd, fitted)" if sd is not None else "(fixed at the project's value)"
        out.append(f"#   {k} = {cal.values[k]:.6g} {how}; before: {cal.nominal[k]:.6g}")
    c = cal.correlation
    for i, a in enumerate(c["parameters"]):
        for j in range(i + 1, len(c["parameters"])):
            out.append(f"#   correlation {a} / {c['parameters'][j]} = {c['matrix'][i][j]:.3f}")
    chi2 = "n/a" if cal.chi2_reduced is None else f"{cal.chi2_reduced:.3g}"
    out.append(f"#   {len(cal.observations)} identified frequencies, reduced chi-square {chi2}")
    out += [f"#   note: {n}" for n in cal.notes]
    out += [f"# caution: {c}" for c in (CALIBRATION_CAUTION, *CAUTIONS)]
    return out + [BLOCK_END]


def calibrated_project_text(text: str, cal, logs) -> str:
    """The calibrated project file's text.

    Parameters
    ----------
    text : str
        The project file as the user wrote it.
    cal : stillhook.commission.calibrate.Calibration
    logs : list of (name, sha256)
    """
    before = tomllib.loads(text).get("calibration", {})
    nominal = {k: before.get(f"nominal_{k}", cal.nominal[k]) for k in PARAMETERS}
    lines = _set_rig_keys(_strip_previous(text), cal.values)
    out = "\n".join(_comment_block(cal, logs) + lines + _calibration_table(cal, nominal)) + "\n"
    check = project_from_dict(tomllib.loads(out))  # the file must read back as the fit
    env = check.envelope
    for key in PARAMETERS:
        if abs(getattr(env, key) - cal.values[key]) > 1e-5 * max(1.0, abs(cal.values[key])):
            raise ConfigError(f"calibrated file does not read back {key} = {cal.values[key]:g}")
    return out
