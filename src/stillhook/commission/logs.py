"""Sway logs: the CSV a commissioning session records, read and checked.

One header row; column names carry SI units like the project file::

    time_s                         required, strictly increasing
    hook_angle_rad                 sway signals, at least one: inclinometer on the hook block or rope,
    payload_angle_rad              rigging angle,
    hook_offset_m                  horizontal offsets from the trolley (e.g. a camera target)
    payload_offset_m
    trolley_speed_m_s              optional: trolley motion (speed, or position differentiated),
    trolley_position_m
    rope_length_m                  hoist encoder rope length,
    payload_mass_kg                payload mass

Other names map onto these (``columns={"payload_offset_m": "cam_x"}``) and scale
(``scales={"payload_offset_m": 0.001}`` for millimetres). Every error is one line naming the file, row
and column; rows are counted as lines of the file (the header is row 1).
"""

from __future__ import annotations

import csv
import hashlib
import io
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from stillhook.errors import InputFileError

__all__ = ["CLIPPED_SHARE", "LOG_COLUMNS", "MOTION_COLUMNS", "SIGNAL_COLUMNS", "SwayLog", "parse_log", "read_log"]

#: Sway signals, in the order identification prefers them.
SIGNAL_COLUMNS = ("hook_angle_rad", "hook_offset_m", "payload_angle_rad", "payload_offset_m")
#: Optional columns that describe the crane's state.
MOTION_COLUMNS = ("trolley_speed_m_s", "trolley_position_m", "rope_length_m", "payload_mass_kg")
#: Every column a log may carry.
LOG_COLUMNS = ("time_s", *SIGNAL_COLUMNS, *MOTION_COLUMNS)
#: Share of samples at an extreme (in 3 or more runs) that counts as a clipped sensor.
CLIPPED_SHARE = 0.005
#: Relative sample-interval spread above which a record is called jittery in its summary.
JITTER_NOTE = 0.01


@dataclass(frozen=True)
class SwayLog:
    """A checked sway record.

    Attributes
    ----------
    name : str
        File name (or label) for messages.
    sha256 : str
        SHA-256 of the file's bytes.
    time_s : ndarray (n,)
        Strictly increasing sample times.
    columns : dict of str to ndarray (n,)
        Every known column present (after mapping and scaling), finite.
    sample_rate_hz : float
        1 / median sample interval.
    jitter : float
        (largest - smallest interval) / median interval.
    warnings : list of str
    """

    name: str
    sha256: str
    time_s: np.ndarray
    columns: dict
    sample_rate_hz: float
    jitter: float
    warnings: list = field(default_factory=list)

    @property
    def signals(self) -> tuple[str, ...]:
        """Sway signals present, in :data:`SIGNAL_COLUMNS` order."""
        return tuple(c for c in SIGNAL_COLUMNS if c in self.columns)

    def trolley_speed_m_s(self) -> np.ndarray | None:
        """Trolley speed: the column, or the position differentiated (central differences), or None."""
        if "trolley_speed_m_s" in self.columns:
            return self.columns["trolley_speed_m_s"]
        if "trolley_position_m" in self.columns:
            return np.gradient(self.columns["trolley_position_m"], self.time_s)
        return None


def read_log(path, columns: dict | None = None, scales: dict | None = None) -> SwayLog:
    """Read and check a sway log CSV file (see the module docstring).

    Raises
    ------
    InputFileError
        Unreadable file, missing column, bad number, NaN gap, non-increasing time, constant signal.
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise InputFileError(f"log file {str(p)!r} not found") from None
    except IsADirectoryError:
        raise InputFileError(f"log file {str(p)!r} is a directory") from None
    except OSError as exc:
        raise InputFileError(f"log file {str(p)!r} cannot be read: {exc.strerror}") from None
    return parse_log(raw, p.name, columns=columns, scales=scales)


def parse_log(raw: bytes, name: str, *, columns: dict | None = None, scales: dict | None = None) -> SwayLog:
    """Check and parse the bytes of a sway log; ``name`` labels every message."""
    columns, scales = dict(columns or {}), dict(scales or {})
    for key in (*columns, *scales):
        if key not in LOG_COLUMNS:
            raise InputFileError(f"{name}: {key!r} is not a log column; allowed: " + ", ".join(LOG_COLUMNS))
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputFileError(f"{name}: not UTF-8 text") from None
    header, body = _split_header(text, name)
    source = {key: columns.get(key, key) for key in LOG_COLUMNS}
    for key, col in columns.items():
        if col not in header:
            raise InputFileError(f"{name}: column {col!r} (for {key}) not in the header; found: " + ", ".join(header))
    present = {key: header.index(src) for key, src in source.items() if src in header}
    if "time_s" not in present:
        raise InputFileError(f"{name}: missing column 'time_s'; found: {', '.join(header)} "
                             "(map another name with --column time_s=NAME)")
    if not any(c in present for c in SIGNAL_COLUMNS):
        raise InputFileError(f"{name}: no sway signal column; need at least one of {', '.join(SIGNAL_COLUMNS)} "
                             f"(found: {', '.join(header)}; map another name with --column NAME=SRC)")
    table = _numbers(body, len(header), name, header)
    data = {key: table[:, i] * scales.get(key, 1.0) for key, i in present.items()}
    for key, values in data.items():
        _check_finite(values, key, source[key], name)
    t = data.pop("time_s")
    return _checked(name, hashlib.sha256(raw).hexdigest(), t, data, source)


def _split_header(text: str, name: str) -> tuple[list[str], str]:
    head, _, body = text.partition("\n")
    header = [h.strip() for h in next(csv.reader([head]), [])]
    if not header or header == [""]:
        raise InputFileError(f"{name}: empty file; need a header row of column names (time_s, ...)")
    return header, body


def _numbers(body: str, width: int, name: str, header: list[str]) -> np.ndarray:
    """All cells as floats (empty cells and 'nan' as NaN), shape (rows, width)."""
    try:
        table = np.loadtxt(io.StringIO(body), delimiter=",", ndmin=2, dtype=float)
        if table.shape[1] == width:
            return table
    except ValueError:
        pass
    rows = []  # slow path: find the bad cell, or read empty cells as gaps
    for r, cells in enumerate(csv.reader(io.StringIO(body)), start=2):
        if not cells:
            continue
        if len(cells) != width:
            raise InputFileError(f"{name} row {r}: {len(cells)} cells; the header has {width}")
        row = []
        for c, cell in enumerate(cells):
            cell = cell.strip()
            try:
                row.append(float(cell) if cell else float("nan"))
            except ValueError:
                raise InputFileError(f"{name} row {r}, column {header[c]}: {cell!r} is not a number") from None
        rows.append(row)
    return np.array(rows, dtype=float).reshape(-1, width)


def _check_finite(values: np.ndarray, key: str, src: str, name: str) -> None:
    bad = ~np.isfinite(values)
    if not bad.any():
        return
    i = int(np.argmax(bad))
    j = i + int(np.argmax(~bad[i:])) if not bad[i:].all() else values.size
    label = key if src == key else f"{src} ({key})"
    raise InputFileError(f"{name} rows {i + 2}-{j + 1}, column {label}: gap of {j - i} missing or non-finite "
                         f"values ({int(bad.sum())} in all); allowed: finite numbers (cut the record around the "
                         "gap, or use --window)")


def _checked(name: str, sha: str, t: np.ndarray, data: dict, source: dict) -> SwayLog:
    if t.size < 3:
        raise InputFileError(f"{name}: {t.size} data rows; a sway record needs many periods of samples")
    dt = np.diff(t)
    if np.any(dt <= 0):
        i = int(np.argmax(dt <= 0))
        raise InputFileError(f"{name} row {i + 3}, column {source['time_s']}: time {t[i + 1]:g} s is not after the "
                             f"previous row's {t[i]:g} s; allowed: strictly increasing time")
    for key in SIGNAL_COLUMNS:
        if key in data and np.ptp(data[key]) == 0.0:
            raise InputFileError(f"{name}, column {source[key]}: constant ({data[key][0]:g}) over all "
                                 f"{t.size} rows; a sway signal must move")
    med = float(np.median(dt))
    jitter = float((dt.max() - dt.min()) / med)
    warnings = [w for key in SIGNAL_COLUMNS if key in data for w in _clipping(data[key], source[key], name)]
    if jitter > JITTER_NOTE:
        warnings.append(f"{name}: sample interval varies by {100 * jitter:.3g} % of its median {med:.4g} s "
                        "(the fit uses the recorded times)")
    return SwayLog(name, sha, t, data, 1.0 / med, jitter, warnings)


def _clipping(x: np.ndarray, col: str, name: str) -> list[str]:
    """A flat top: the signal sits at its extreme in 3 or more separate runs (a decaying sway touches it once)."""
    out = []
    for label, extreme in (("maximum", x.max()), ("minimum", x.min())):
        at = x == extreme
        runs = int(np.count_nonzero(at[1:] & ~at[:-1]) + at[0])
        if runs >= 3 and np.count_nonzero(at) >= max(6, CLIPPED_SHARE * x.size):
            out.append(f"{name}, column {col}: {np.count_nonzero(at)} samples in {runs} separate runs sit at the "
                       f"{label} {extreme:g} (flat tops): a clipped sensor biases the fit")
    return out
