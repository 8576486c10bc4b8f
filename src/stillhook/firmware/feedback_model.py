"""Integer reference of codegen/shk_feedback.c, bit for bit (the header states every step).

One call of :meth:`FeedbackModel.step` is one drive cycle::

    row, status = schedule lookup of the rope length (shk_schedule.h)
    fault checks (first call excepted): no new sample for stale_cycles cycles, |y| > sensor_max,
      a new sample that moved more than jump_max  ->  feedback off for good (until init), u = r
    du   = fin(du_row[row]   . [o, d, y, x_r],   frac_u)
    v^   = fin(vhat_row[row] . [o, y],           frac_v)
    u    = min(max(sat32(r + du), v^ - room, -speed_max), v^ + room, speed_max)
    o    = fin(obs_next[row] . [o, y, u],        frac_o)      (each row of the matrix)
    d    = fin(drive . [d, sat32(u - r)],        frac_d)
    x_r  = fin(ref_next[row] . [x_r, r],         frac_r)      (each row; zero tables: x_r stays 0)

with fin(acc, F) = sat32(floor((acc + 2^(F-1)) / 2^F)) of the exact sum (the C splits each int32 state
into 16-bit halves so no partial sum leaves int64, and finishes with shk_finish_split).
"""

from __future__ import annotations

import numpy as np

from stillhook.firmware.feedback_tables import FeedbackTables

__all__ = ["FB_JUMP", "FB_LIMITED", "FB_RANGE", "FB_STALE", "FeedbackModel", "SHK_CLAMPED_HIGH",
           "SHK_CLAMPED_LOW", "finish"]

SHK_CLAMPED_LOW, SHK_CLAMPED_HIGH = 0x1, 0x2
FB_RANGE, FB_STALE, FB_JUMP, FB_LIMITED = 0x10, 0x20, 0x40, 0x80
_I32 = (-(2**31), 2**31 - 1)


def _sat32(v: int) -> int:
    return min(max(int(v), _I32[0]), _I32[1])


def finish(c: np.ndarray, x: np.ndarray, F: int) -> int:
    """sat32(round(sum c_j x_j / 2^F)), ties up, on the exact sum (int64 halves, like the C)."""
    hi = np.floor_divide(x, 1 << 16)
    lo = x - hi * (1 << 16)
    acc = int(c @ hi) * (1 << 16) + int(c @ lo)
    return _sat32((acc + (1 << (F - 1))) >> F)


class FeedbackModel:
    """State and step of one feedback instance (see the module docstring)."""

    def __init__(self, tables: FeedbackTables):
        self.t = tables
        self.reset()

    def reset(self) -> None:
        self.o = np.zeros(self.t.n_obs, dtype=np.int64)
        self.d = np.zeros(2, dtype=np.int64)
        self.x_r = np.zeros(self.t.n_ref, dtype=np.int64)
        self.y_prev, self.seq_prev, self.stale, self.fault, self.started = 0, 0, 0, 0, False

    def lookup(self, length: int) -> tuple[int, int]:
        t = self.t
        if length < t.length_min:
            return 0, SHK_CLAMPED_LOW
        status = 0
        if length > t.length_max:
            length, status = t.length_max, SHK_CLAMPED_HIGH
        return int(np.searchsorted(t.thresholds, length, side="right")), status

    def step(self, length: int, y: int, seq: int, r: int) -> tuple[int, int]:
        """(command u, status bits) for one cycle; all arguments are the C's integers."""
        t = self.t
        row, status = self.lookup(int(length))
        y, seq, r = int(y), int(seq), int(r)
        if self.fault == 0:
            if self.started:
                self.stale = self.stale + 1 if seq == self.seq_prev else 0
                if self.stale >= t.stale_cycles:
                    self.fault |= FB_STALE
                if seq != self.seq_prev and abs(y - self.y_prev) > t.jump_max:
                    self.fault |= FB_JUMP
            if abs(y) > t.sensor_max:
                self.fault |= FB_RANGE
            self.y_prev, self.seq_prev, self.started = y, seq, True
        if self.fault:
            return r, status | self.fault
        du = finish(t.du_row[row], np.concatenate([self.o, self.d, [y], self.x_r]), t.frac_u)
        vhat = finish(t.vhat_row[row], np.concatenate([self.o, [y]]), t.frac_v)
        raw = _sat32(r + du)
        u = min(max(raw, vhat - t.accel_room, -t.speed_max), vhat + t.accel_room, t.speed_max)
        if u != r + du:
            status |= FB_LIMITED
        x = np.concatenate([self.o, [y, u]])
        self.o = np.array([finish(t.obs_next[row, i], x, t.frac_o) for i in range(t.n_obs)], dtype=np.int64)
        du_applied = _sat32(u - r)
        dx = np.concatenate([self.d, [du_applied]])
        self.d = np.array([finish(t.drive[i], dx, t.frac_d) for i in range(2)], dtype=np.int64)
        rx = np.concatenate([self.x_r, [r]])
        self.x_r = np.array([finish(t.ref_next[row, i], rx, t.frac_r) for i in range(t.n_ref)], dtype=np.int64)
        return u, status
