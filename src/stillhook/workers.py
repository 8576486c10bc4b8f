"""How many worker processes a parallel step uses: the one rule for the sweep and the design schedule."""

from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor

__all__ = ["POOL_CONTEXT", "process_pool", "worker_count"]

#: Worker processes are forked where the platform forks (the parent's imports of numpy, scipy and
#: matplotlib are inherited instead of repeated: ~1 s per worker on a loaded machine), else spawned.
POOL_CONTEXT = multiprocessing.get_context("fork" if "fork" in multiprocessing.get_all_start_methods() else "spawn")


def worker_count(n_tasks: int, requested: int | None = None) -> int:
    """Processes for ``n_tasks`` independent tasks: ``requested``, or one per available core; never more than tasks.

    Parameters
    ----------
    n_tasks : int >= 0
        Tasks to spread (rows, chunks of rigs).
    requested : int >= 1, optional
        A caller's choice (tests pin it); default: the cores this process may run on.
    """
    if requested is None:
        try:
            requested = len(os.sched_getaffinity(0))
        except AttributeError:  # pragma: no cover - not on Linux
            requested = os.cpu_count() or 1
    return max(1, min(int(requested), int(n_tasks)))


def process_pool(n_workers: int) -> ProcessPoolExecutor:
    """A pool of ``n_workers`` processes started the one way every parallel step starts them (:data:`POOL_CONTEXT`)."""
    return ProcessPoolExecutor(n_workers, mp_context=POOL_CONTEXT)
