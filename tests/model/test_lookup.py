"""The one schedule lookup rule against its definition, in metres and in the firmware's integer counts."""

from __future__ import annotations

import numpy as np
import pytest

from stillhook.errors import ConfigError
from stillhook.model.lookup import (
    lookup_thresholds,
    rope_length_counts,
    row_edges_m,
    rule_words,
    schedule_rows,
)

ROWS_M = np.array([1.2, 1.9, 3.05, 4.4, 6.6, 9.5])


def nearest_by_definition(rows_m, L):
    """Index of the row nearest to L, the longer row on an exact tie (the rule as stated, by distance)."""
    d = np.abs(np.asarray(rows_m)[None, :] - np.asarray(L, dtype=float)[:, None])
    return np.array([np.flatnonzero(r == r.min())[-1] for r in d])


def at_or_below_by_definition(rows_m, L):
    """Index of the longest row at or below L (the first row below all of them)."""
    return np.array([max(0, int(np.sum(np.asarray(rows_m) <= x)) - 1) for x in np.atleast_1d(L)])


def test_nearest_rule_in_metres_matches_its_definition():
    probe = np.linspace(0.5, 10.5, 2001)
    np.testing.assert_array_equal(schedule_rows(ROWS_M, probe, "nearest"), nearest_by_definition(ROWS_M, probe))
    # an exact midpoint goes to the longer row (midpoints of these rows are exact in binary)
    rows = np.array([1.0, 2.0, 4.0])
    assert schedule_rows(rows, [1.5, 3.0], "nearest").tolist() == [1, 2]


def test_at_or_below_rule_matches_its_definition():
    probe = np.linspace(0.5, 10.5, 2001)
    np.testing.assert_array_equal(schedule_rows(ROWS_M, probe, "at_or_below"),
                                  at_or_below_by_definition(ROWS_M, probe))


@pytest.mark.parametrize("rule", ["nearest", "at_or_below"])
@pytest.mark.parametrize("lsb_m", [0.001, 0.0137, 0.05])
def test_integer_thresholds_pick_the_metre_rule_for_every_count(rule, lsb_m):
    # the firmware compares integer counts c with integer thresholds; for every count in range the row must
    # be the one the rule gives for the length c * lsb the count stands for
    counts = np.arange(int(rope_length_counts(ROWS_M[0], lsb_m)), int(rope_length_counts(ROWS_M[-1], lsb_m)) + 1)
    L = counts * lsb_m
    want = nearest_by_definition(ROWS_M, L) if rule == "nearest" else at_or_below_by_definition(ROWS_M, L)
    got = schedule_rows(ROWS_M, L, rule, lsb_m)
    # a length within rounding noise of an edge may go either way in metres; elsewhere they must agree
    edges = row_edges_m(ROWS_M, rule)
    clear = np.min(np.abs(L[:, None] - edges[None, :]), axis=1) > 1e-9
    np.testing.assert_array_equal(got[clear], want[clear])
    assert np.all(np.diff(lookup_thresholds(ROWS_M, rule, lsb_m)) > 0)


def test_rope_length_counts_round_half_up():
    # the firmware's input: floor(L / lsb + 1/2) (Graham, Knuth & Patashnik, Concrete Mathematics, 1994, 3.1)
    assert rope_length_counts([0.0015, 0.0025, -0.0005], 0.001).tolist() == [2.0, 3.0, 0.0]


def test_rule_words_and_unknown_rules():
    assert rule_words("nearest") == "nearest row, longer on a tie"
    for bad in (lambda: rule_words("linear"), lambda: row_edges_m(ROWS_M, "linear"),
                lambda: schedule_rows(ROWS_M, [2.0], "linear")):
        with pytest.raises(ConfigError, match="allowed: nearest, at_or_below"):
            bad()
