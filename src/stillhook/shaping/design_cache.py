"""The one process-wide cache of shaper designs, with a public way to empty it.

Designing a band shaper or a project's schedule takes seconds (linear programs); the same inputs
give the same shaper, so recent results are kept. Every memo of the shaping stage lives in the one
:data:`DESIGN_CACHE`, split into named shelves each holding at most a fixed number of entries
(oldest dropped first):

========================  ====================================================  =========
shelf                     what                                                  entries
========================  ====================================================  =========
``unit_form``             closed forms designed for 1 Hz (scaled to any f0)     256
``family_region``         a closed form's insensitive region at 1 Hz            256
``undamped_start``        start of the damped EI-family continuation            64
``band_design``           band / multi-band shaper designs                      64
``project_design``        a project's design and schedule                       32
``worst_vibration``       a shaper's worst V over a band (dense sampling)       256
========================  ====================================================  =========

:func:`clear_design_caches` empties every shelf (or the named ones), e.g. so a benchmark really
designs again; ``with DESIGN_CACHE.emptied():`` designs afresh inside the block and puts the cache back
after it (tests). Cached values are shared: callers must not mutate them (shapers are frozen).
"""

from __future__ import annotations

from collections.abc import Callable, Hashable, Iterator
from contextlib import contextmanager
from typing import Any

__all__ = ["DESIGN_CACHE", "DesignCache", "clear_design_caches"]


class DesignCache:
    """Named shelves of recent results, each bounded (first in, first out).

    Parameters
    ----------
    shelf_sizes : dict of str to int > 0
        Shelf name -> most entries it keeps.
    """

    def __init__(self, shelf_sizes: dict[str, int]) -> None:
        self._sizes = dict(shelf_sizes)
        self._shelves: dict[str, dict[Hashable, Any]] = {name: {} for name in self._sizes}

    def get(self, shelf: str, key: Hashable, make: Callable[[], Any]) -> Any:
        """The value stored under ``key`` on ``shelf``; ``make()`` computes and stores it when absent."""
        entries = self._shelves[shelf]
        if key not in entries:
            self.put(shelf, key, make())
        return entries[key]

    def lookup(self, shelf: str, key: Hashable) -> Any | None:
        """The stored value, or None."""
        return self._shelves[shelf].get(key)

    def put(self, shelf: str, key: Hashable, value: Any) -> None:
        """Store ``value``, dropping the oldest entry when the shelf is full."""
        entries = self._shelves[shelf]
        if key not in entries and len(entries) >= self._sizes[shelf]:
            entries.pop(next(iter(entries)))
        entries[key] = value

    def sizes(self) -> dict[str, int]:
        """Entries held per shelf."""
        return {name: len(entries) for name, entries in self._shelves.items()}

    @contextmanager
    def emptied(self) -> Iterator[DesignCache]:
        """Every shelf empty inside the ``with`` block and as it was after it (to design afresh once)."""
        saved = {name: dict(entries) for name, entries in self._shelves.items()}
        self.clear()
        try:
            yield self
        finally:
            for name, entries in saved.items():
                self._shelves[name].clear()
                self._shelves[name].update(entries)

    def clear(self, *shelves: str) -> None:
        """Empty the named shelves (every shelf when none is named)."""
        for name in shelves or tuple(self._shelves):
            self._shelves[name].clear()


#: The shaping stage's cache (see the module docstring for the shelves).
DESIGN_CACHE = DesignCache({"unit_form": 256, "family_region": 256, "undamped_start": 64,
                            "band_design": 64, "project_design": 32, "worst_vibration": 256})


def clear_design_caches(*shelves: str) -> None:
    """Forget cached designs, so the next call designs again (tests, benchmarks, long sessions).

    Parameters
    ----------
    *shelves : str
        Shelves to empty (module docstring); none given: all of them.
    """
    DESIGN_CACHE.clear(*shelves)
