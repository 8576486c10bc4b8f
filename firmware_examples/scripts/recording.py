"""Shared by the firmware-example scripts: the CSV files the host program and the scripts exchange.

Recording (input, one row per drive cycle)::

    # comment lines
    speed_ref,rope_length
    <int16>,<uint32>

``speed_ref`` is the trolley speed reference with 16384 = 100 % of rated speed; ``rope_length`` is
in counts of the emitted ``rope_length_input.lsb_m``.

Shaped output (written by the C programs, and by expected_output.py from the Python reference)::

    cycle,shaped_speed_ref,row,status
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

RECORDING_HEADER = "speed_ref,rope_length"
OUTPUT_HEADER = "cycle,shaped_speed_ref,row,status"
#: 16384 = 100 % of rated speed (see common/travel_task.h).
SPEED_100PCT = 16384
#: Speed limit applied outside the envelope; must equal TRAVEL_CREEP_LIMIT in common/travel_task.h.
CREEP_LIMIT = 4096


def read_recording(path) -> tuple[np.ndarray, np.ndarray]:
    """(speed_ref int64 array, rope_length int64 array) from a recording CSV.

    Raises
    ------
    ValueError
        With the line number when a line is not two integers in range, or the header is missing.
    """
    speed, rope = [], []
    seen_header = False
    for n, line in enumerate(Path(path).read_text(encoding="ascii").splitlines(), start=1):
        if not line or line.startswith("#"):
            continue
        if not seen_header:
            if line != RECORDING_HEADER:
                raise ValueError(f"{path}:{n}: header {line!r}; expected {RECORDING_HEADER!r}")
            seen_header = True
            continue
        parts = line.split(",")
        try:
            s, r = (int(p) for p in parts)
        except ValueError:
            raise ValueError(f"{path}:{n}: {line!r} is not two integers 'speed_ref,rope_length'") from None
        if not (-32768 <= s <= 32767 and 0 <= r <= 2**32 - 1):
            raise ValueError(f"{path}:{n}: {line!r} out of range (int16 speed_ref, uint32 rope_length)")
        speed.append(s)
        rope.append(r)
    if not speed:
        raise ValueError(f"{path}: no data rows")
    return np.asarray(speed, dtype=np.int64), np.asarray(rope, dtype=np.int64)


def format_output(shaped, rows, status) -> str:
    """The shaped-output CSV text, byte for byte as the C programs write it."""
    lines = [OUTPUT_HEADER]
    lines += [f"{k},{int(y)},{int(r)},{int(s)}" for k, (y, r, s) in enumerate(zip(shaped, rows, status, strict=True))]
    return "\n".join(lines) + "\n"
