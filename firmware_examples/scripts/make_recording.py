"""Write the demo operator recording: firmware_examples/data/operator_recording.csv.

An invented pendant session on the demo crane (stillhook's built-in demo project): the load is
picked from a pit with 9.8 m of rope out, beyond the designed 1.2-9.5 m envelope, and hoisted
to 8.2 m while the operator travels the trolley: idle, creep forward, full speed, creep to
position, pause, inch back, stop. The hoist and the pendant follow the drive's own limits
(stillhook.sim.profiles.pendant_steps and hoist_lengths), sampled at the drive cycle.

Usage: python make_recording.py [--out PATH]
Deterministic: the same stillhook version writes the same bytes.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np
from recording import RECORDING_HEADER, SPEED_100PCT

from stillhook.sim.profiles import hoist_lengths, pendant_steps
from stillhook.project import load_demo_project

DEFAULT_OUT = Path(__file__).resolve().parents[1] / "data" / "operator_recording.csv"
#: Recording length: the pendant session plus the rest of a 24 s log.
DURATION_S = 24.0
#: Rope: from the pit (outside the envelope) up to 8.2 m, starting 0.5 s into the log.
ROPE_START_M, ROPE_END_M, HOIST_START_S = 9.8, 8.2, 0.5


def pendant_session(max_speed_m_s: float) -> list[tuple[float, float]]:
    """(duration_s, speed_m_s) steps of a two-speed pendant; creep = 1/4 of full speed."""
    creep = 0.25 * max_speed_m_s
    return [(1.0, 0.0), (1.5, creep), (5.0, max_speed_m_s), (1.5, creep), (1.0, 0.0), (2.0, -creep)]


def build_recording() -> tuple[np.ndarray, np.ndarray, dict]:
    """(speed_ref ints, rope_length counts, facts) of the demo session."""
    project = load_demo_project()
    drive = project.drive
    Ts = drive["cycle_s"]
    n = round(DURATION_S / Ts)
    v = pendant_steps(pendant_session(drive["max_speed_m_s"]), drive["max_accel_m_s2"], Ts)
    v = np.concatenate([v, np.zeros(n - v.size)])
    L = hoist_lengths(ROPE_START_M, ROPE_END_M, drive["hoist_speed_m_s"], drive["hoist_accel_m_s2"], Ts,
                      n_samples=n, start_s=HOIST_START_S)[:n]
    lsb_m = project.firmware["rope_length_lsb_m"]
    # round half up to the integer the drive would log
    speed_ref = np.floor(v / drive["max_speed_m_s"] * SPEED_100PCT + 0.5).astype(np.int64)
    rope = np.floor(L / lsb_m + 0.5).astype(np.int64)
    lo_m, hi_m = project.envelope.rope_length_range_m
    facts = {"cycle_s": Ts, "max_speed_m_s": drive["max_speed_m_s"], "lsb_m": lsb_m, "n": n,
             "envelope": f"{lo_m:g}-{hi_m:g} m"}
    return speed_ref, rope, facts


def recording_text() -> str:
    speed_ref, rope, f = build_recording()
    head = [
        "# stillhook firmware example: recorded trolley speed reference and hoist rope length, one row per drive",
        f"# cycle ({f['cycle_s']:g} s, {f['n']} cycles). Invented pendant session on the demo crane: the load leaves",
        f"# a pit with {ROPE_START_M:g} m of rope out (outside the {f['envelope']} envelope) and is hoisted to "
        f"{ROPE_END_M:g} m while",
        "# the trolley creeps, runs at full speed, creeps to position, pauses and inches back.",
        f"# speed_ref: int16, {SPEED_100PCT} = 100 % of {f['max_speed_m_s']:g} m/s. rope_length: uint32 counts of "
        f"{f['lsb_m']:g} m.",
        "# Written by firmware_examples/scripts/make_recording.py; do not edit.",
        RECORDING_HEADER,
    ]
    rows = [f"{int(s)},{int(r)}" for s, r in zip(speed_ref, rope, strict=True)]
    return "\n".join(head + rows) + "\n"


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=DEFAULT_OUT)
    args = ap.parse_args()
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(recording_text(), encoding="ascii", newline="\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
