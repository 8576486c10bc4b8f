"""Expected shaped output of the firmware examples, from the Python integer reference.

Reads the emitted folder's manifest.json (integer shaper rows, rope-length lookup, format) and a
recording CSV, runs the same cycle as common/travel_task.c through the integer reference
(stillhook.firmware.qformat.ScheduleTable.lookup, the creep limit outside the envelope,
stillhook.firmware.shaper_model.ShaperModel.run), and writes the shaped-output CSV the C programs must
reproduce byte for byte.

Usage: python expected_output.py --manifest DIR/manifest.json --recording REC.csv --out EXPECTED.csv
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path

import numpy as np
from recording import CREEP_LIMIT, format_output, read_recording

from stillhook.firmware.qformat import STATUS_OK, ScheduleTable
from stillhook.firmware.shaper_model import ShaperModel, ShaperTable


def tables_from_manifest(manifest: dict) -> tuple[ShaperTable, ScheduleTable]:
    """The integer shaper and schedule tables exactly as the emitted C holds them."""
    fmt = manifest["format"]
    rows = [(np.asarray(r["amplitudes"], dtype=np.int64), np.asarray(r["delays_cycles"], dtype=np.int64))
            for r in manifest["shaper_rows"]]
    shaper = ShaperTable.from_rows(rows, fmt)
    if shaper.ring_len != manifest["ring_len"]:
        raise ValueError(f"manifest ring_len {manifest['ring_len']} != {shaper.ring_len} from its rows")
    li = manifest["rope_length_input"]
    schedule = ScheduleTable(np.asarray(li["thresholds_counts"], dtype=np.int64), int(li["min_counts"]),
                             int(li["max_counts"]), float(li["lsb_m"]))
    return shaper, schedule


def expected_output(manifest: dict, speed_ref: np.ndarray, rope_length: np.ndarray):
    """(shaped, rows, status) int64 arrays: what travel_task_cycle returns, cycle by cycle."""
    shaper, schedule = tables_from_manifest(manifest)
    rows, status = schedule.lookup(rope_length)
    # outside the envelope the task limits the speed reference to the creep speed
    v = np.where(status != STATUS_OK, np.clip(speed_ref, -CREEP_LIMIT, CREEP_LIMIT), speed_ref)
    # speed_ref is Q15; Q31 samples are the same fraction: v * 2^16 (exact)
    x = v if shaper.fmt == "q15" else v * 65536
    shaped = ShaperModel(shaper).run(x, rows)
    return shaped, rows, status


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--manifest", type=Path, required=True)
    ap.add_argument("--recording", type=Path, required=True)
    ap.add_argument("--out", type=Path, required=True)
    args = ap.parse_args()
    manifest = json.loads(args.manifest.read_text(encoding="utf-8"))
    speed_ref, rope = read_recording(args.recording)
    text = format_output(*expected_output(manifest, speed_ref, rope))
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(text, encoding="ascii", newline="\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
