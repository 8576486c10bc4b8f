"""The demo's commissioning logs: an invented session on the demo crane, written by the nonlinear simulator.

The "true" crane differs from the nominal demo project the way real ones do: a heavier hook block, longer
rigging, an offset between the encoder's rope length and the pendulum length, a little damping. At three
rope lengths the trolley makes a short move and stops; the logs record the free sway that follows with an
inclinometer on the hook block and a camera target on the payload, each with white noise, quantization
and a small delay, at 100 Hz. Fixed seeds: the same files every time (``scripts/make_demo_logs.py`` writes
them into ``stillhook/data``).
"""

from __future__ import annotations

from dataclasses import replace
from importlib import resources

import numpy as np

from stillhook.model.envelope import Envelope
from stillhook.sim.dynamics import simulate
from stillhook.sim.profiles import trapezoid

__all__ = ["DEMO_LOGS", "SENSORS", "TRUE_CRANE", "demo_log_bytes", "demo_log_texts", "true_envelope"]

#: The invented true crane (the nominal demo project says 340 kg, 3.1 m, 0 m, 0.002).
TRUE_CRANE = {"hook_mass_kg": 430.0, "rigging_length_m": 3.55, "rope_offset_m": 0.4, "damping_ratio": 0.006}
#: Log file name -> (encoder rope length m, payload mass kg, test move distance m, noise seed).
DEMO_LOGS = {
    "commissioning_rope_2m.csv": (2.0, 150.0, 0.3, 11),
    "commissioning_rope_5m.csv": (5.0, 150.0, 0.4, 12),
    "commissioning_rope_8m5.csv": (8.5, 150.0, 0.5, 13),
}
#: Column -> (noise sd, quantization step, delay s) of the invented sensors; rope and speed as the drive reads them.
SENSORS = {"hook_angle_rad": (2e-4, 1e-4, 0.02), "payload_offset_m": (3e-3, 1e-3, 0.04)}
#: Sample interval (s), rest before the move (s), free sway recorded after it (s).
SAMPLE_S, REST_S, FREE_S = 0.01, 2.0, 45.0
#: The test moves: gentle, so the sway stays small (the pendulum frequency falls as amplitude^2 / 16).
TEST_SPEED_M_S, TEST_ACCEL_M_S2 = 0.2, 0.1


def true_envelope(envelope: Envelope) -> Envelope:
    """The demo envelope with the true crane's values."""
    return replace(envelope, **TRUE_CRANE)


def _sensor(rng, x: np.ndarray, noise: float, step: float, delay_s: float) -> np.ndarray:
    """x delayed by whole samples, plus white noise, quantized to step."""
    lag = int(round(delay_s / SAMPLE_S))
    delayed = np.concatenate([np.full(lag, x[0]), x[: x.size - lag]])
    return np.round((delayed + rng.normal(0.0, noise, x.size)) / step) * step


def demo_log_texts(envelope: Envelope) -> dict[str, str]:
    """``{file name: CSV text}`` of the demo logs for the demo project's envelope."""
    true = true_envelope(envelope)
    out = {}
    for name, (rope_m, payload_kg, distance_m, seed) in DEMO_LOGS.items():
        move = trapezoid(distance_m, TEST_SPEED_M_S, TEST_ACCEL_M_S2, SAMPLE_S)
        speed = np.concatenate([np.zeros(int(REST_S / SAMPLE_S)), move])
        sim = simulate(true.rig(rope_m, payload_kg), speed, SAMPLE_S, settle_s=FREE_S)
        rng = np.random.default_rng(seed)
        cols = {"time_s": (sim.t_s, "%.2f"), "trolley_speed_m_s": (np.round(sim.trolley_speed_m_s, 3), "%.3f"),
                "rope_length_m": (np.full(sim.t_s.size, rope_m), "%.3f"),
                "payload_mass_kg": (np.full(sim.t_s.size, payload_kg), "%g")}
        truth = {"hook_angle_rad": sim.theta1_rad, "payload_offset_m": sim.payload_offset_m}
        for col, (noise, step, delay) in SENSORS.items():
            cols[col] = (_sensor(rng, truth[col], noise, step, delay), "%.4f" if step < 1e-3 else "%.3f")
        rows = [",".join(fmt % v for v, fmt in zip(vals, (f for _, f in cols.values()), strict=True))
                for vals in zip(*(c for c, _ in cols.values()), strict=True)]
        out[name] = ",".join(cols) + "\n" + "\n".join(rows) + "\n"
    return out


def demo_log_bytes() -> dict[str, bytes]:
    """The shipped demo logs (package data), ``{file name: bytes}``."""
    data = resources.files("stillhook").joinpath("data")
    return {name: data.joinpath(name).read_bytes() for name in DEMO_LOGS}
