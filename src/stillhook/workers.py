"""How many worker processes a parallel step uses: the one rule for the sweep and the design schedule."""

from __future__ import annotations

import os

__all__ = ["worker_count"]


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
