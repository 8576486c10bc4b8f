"""The benchmarks' one timing rule: best wall time of a few repeats (with that run's CPU time and result)."""

from __future__ import annotations

import time

__all__ = ["best_of"]


def best_of(fn, repeat: int) -> tuple[float, float, object]:
    """(best wall s, CPU s of that run, result) over ``repeat`` calls of ``fn()``."""
    best = None
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        w, c = time.perf_counter() - w0, time.process_time() - c0
        if best is None or w < best[0]:
            best = (w, c, out)
    return best
