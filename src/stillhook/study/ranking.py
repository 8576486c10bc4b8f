"""One ranking of designs for every summary (compare, sweep, demo): residual sway AND the time it costs.

A design that leaves the least sway but stops the load several times later than another that also meets the
tolerance is not the better design for a crane: the operator waits for it on every move. The rule:

1. Designs meeting the tolerance come first, quickest first (least added time: time at rest minus the unshaped
   command's end in the comparison, the command's extra length in the sweep).
2. A design meeting the tolerance whose added time exceeds :data:`SLOW_FACTOR` times the quickest such
   design's (and by at least :data:`SLOW_MARGIN_S`) is marked slow and never recommended.
3. Then the designs missing the tolerance, least residual first.

The recommendation is the first design of that order when it meets the tolerance; otherwise there is none
and the summary says which came closest. Common practice, no source: the factor is our choice.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["SLOW_FACTOR", "SLOW_MARGIN_S", "Ranked", "rank_designs", "ranking_sentence"]

#: A design taking more than this many times the quickest qualifying design's added time is "slow".
SLOW_FACTOR = 2.0
#: ... and at least this much longer (s), so that 0.2 s against 0.1 s is not called slow.
SLOW_MARGIN_S = 1.0


@dataclass(frozen=True)
class Ranked:
    """One design in ranking order: residual (fraction of unshaped), added time (s, None: never at rest)."""

    key: str
    label: str
    residual: float
    added_s: float | None
    meets: bool
    slow: bool

    def as_dict(self) -> dict:
        return dict(self.__dict__)


def rank_designs(items, tolerance: float) -> list[Ranked]:
    """Order designs by the module's rule.

    Parameters
    ----------
    items : iterable of (key, label, residual fraction, added_s or None)
        One per design (leave the unshaped move out).
    tolerance : float in (0, 1)
        Residual fraction a design must stay within.
    """
    rows = [(k, lab, float(r), None if a is None or not math.isfinite(a) else float(a)) for k, lab, r, a in items]
    meets = [row for row in rows if row[2] <= tolerance * (1 + 1e-9) and row[3] is not None]
    quickest = min((a for *_, a in meets), default=None)

    def slow(a: float) -> bool:
        return quickest is not None and a > SLOW_FACTOR * max(quickest, 0.0) and a - quickest >= SLOW_MARGIN_S

    good = sorted(meets, key=lambda row: (slow(row[3]), row[3], row[2]))
    rest = sorted((row for row in rows if row not in meets), key=lambda row: row[2])
    return ([Ranked(k, lab, r, a, True, slow(a)) for k, lab, r, a in good]
            + [Ranked(k, lab, r, a, False, False) for k, lab, r, a in rest])


def ranking_sentence(ranked: list[Ranked], tolerance: float) -> str:
    """One line for a summary: the recommendation, the slow designs, or the closest miss."""
    if not ranked:
        return "no design to rank"
    first = ranked[0]
    if not first.meets:
        return (f"no design meets the {100 * tolerance:g} % tolerance; closest: {first.label} at "
                f"{100 * first.residual:.3g} %")
    text = (f"recommended: {first.label} ({100 * first.residual:.3g} % residual, adds {first.added_s:.3g} s); "
            "ranked by meeting the tolerance, then the time added")
    slow = [r for r in ranked if r.slow]
    if slow:
        text += "; not recommended, they stop the load much later: " + ", ".join(
            f"{r.label} (adds {r.added_s:.3g} s)" for r in slow)
    return text
