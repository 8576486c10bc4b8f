"""The schedule lookup rule: which row of a rope-length schedule serves a measured rope length.

One rule, used by the design, the sweep, the figures and the code generator alike::

    row(L) = #{k : e_k <= L}        e_k = (r_k + r_{k+1}) / 2   ('nearest', the longer row on a tie)
                                    e_k = r_{k+1}               ('at_or_below')

The firmware sees the rope length in integer counts, c = floor(L / lsb + 1/2), and compares it with
integer thresholds t_k = ceil(e_k / lsb) (an edge that is a whole count to 1e-9 stays that count), so
that ``row = #{k : t_k <= c}`` picks the same row as the rule above for every count.
"""

from __future__ import annotations

import numpy as np

from stillhook.errors import ConfigError
from stillhook.fixed_point import round_half_up

__all__ = ["LOOKUP_RULES", "RULE_WORDS", "lookup_thresholds", "rope_length_counts", "row_edges_m", "rows_for_counts",
           "rule_words", "schedule_rows"]

#: Lookup rules a schedule may use, with the words that state each in outputs.
RULE_WORDS = {"nearest": "nearest row, longer on a tie", "at_or_below": "longest row at or below the length"}
LOOKUP_RULES = tuple(RULE_WORDS)


def rule_words(rule: str) -> str:
    """The rule in words, for outputs (e.g. 'nearest row, longer on a tie')."""
    if rule not in RULE_WORDS:
        raise ConfigError(f"schedule lookup rule {rule!r} is not allowed; allowed: " + ", ".join(LOOKUP_RULES))
    return RULE_WORDS[rule]


def row_edges_m(row_lengths_m, rule: str = "nearest") -> np.ndarray:
    """Switching lengths e_k (m, n - 1) between rows of ascending ``row_lengths_m`` under ``rule``."""
    r = np.asarray(row_lengths_m, dtype=float).reshape(-1)
    if rule == "nearest":
        return 0.5 * (r[:-1] + r[1:])
    rule_words(rule)  # ConfigError for an unknown rule
    return r[1:].copy()


def rope_length_counts(rope_length_m, lsb_m: float) -> np.ndarray:
    """The firmware's rope-length input: c = floor(L / lsb + 1/2) counts (round half up)."""
    return round_half_up(np.asarray(rope_length_m, dtype=float) / lsb_m)


def lookup_thresholds(row_lengths_m, rule: str, lsb_m: float) -> np.ndarray:
    """Integer thresholds t_k (counts, int64, n - 1) so that ``row = #{k: t_k <= c}`` follows ``rule``.

    Parameters
    ----------
    row_lengths_m : ascending array (n,)
        The schedule's row lengths (m).
    rule : {'nearest', 'at_or_below'}
        See the module docstring.
    lsb_m : float > 0
        Metres per count.
    """
    c = row_edges_m(row_lengths_m, rule) / lsb_m
    near = np.round(c)
    c = np.where(np.abs(c - near) <= 1e-9 * np.maximum(1.0, np.abs(c)), near, np.ceil(c))
    return c.astype(np.int64)


def rows_for_counts(thresholds, counts) -> np.ndarray:
    """Row index #{k : t_k <= c} for integer rope-length counts (the firmware's comparison)."""
    return np.searchsorted(np.asarray(thresholds), np.asarray(counts), side="right").astype(np.int64)


def schedule_rows(row_lengths_m, rope_length_m, rule: str = "nearest", lsb_m: float | None = None) -> np.ndarray:
    """The schedule row for each rope length (int64, shape of ``rope_length_m``).

    Lengths outside the rows clamp to the first or last row. With ``lsb_m`` the row is picked
    exactly as the emitted firmware picks it (counts against integer thresholds).
    """
    if lsb_m is not None:
        return rows_for_counts(lookup_thresholds(row_lengths_m, rule, lsb_m), rope_length_counts(rope_length_m, lsb_m))
    edges = row_edges_m(row_lengths_m, rule)
    return np.searchsorted(edges, np.asarray(rope_length_m, dtype=float), side="right").astype(np.int64)
