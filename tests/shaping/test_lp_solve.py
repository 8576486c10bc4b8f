"""Design LPs: the iteration cap and the interior-point retry (shaping.lp_solve)."""

import numpy as np
import pytest
from scipy.optimize import linprog

from stillhook.shaping import lp_solve

# Wyndor Glass: maximize 3 x + 5 y s.t. x <= 4, 2 y <= 12, 3 x + 2 y <= 18, x, y >= 0; optimum (2, 6), 36.
# Hillier & Lieberman, Introduction to Operations Research, 9th ed., McGraw-Hill, 2010, section 3.1.
C = np.array([-3.0, -5.0])
A_UB = np.array([[1.0, 0.0], [0.0, 2.0], [3.0, 2.0]])
B_UB = np.array([4.0, 12.0, 18.0])


def test_a_normal_lp_is_solved_by_the_first_method():
    res = lp_solve.solve_lp(C, A_ub=A_UB, b_ub=B_UB, bounds=[(0, None)] * 2)
    assert res.status == 0 and not res.retried
    np.testing.assert_allclose(res.x, [2.0, 6.0], atol=1e-9)
    assert -res.fun == pytest.approx(36.0)


def test_an_lp_that_reaches_the_iteration_cap_is_solved_by_interior_point(monkeypatch):
    # a cap of one simplex iteration stands in for a stalled dual simplex
    monkeypatch.setattr(lp_solve, "MIN_ITERATIONS", 1)
    monkeypatch.setattr(lp_solve, "ITERATIONS_PER_SIZE", 0)
    res = lp_solve.solve_lp(C, A_ub=A_UB, b_ub=B_UB, bounds=[(0, None)] * 2,
                            options={"presolve": False, "primal_feasibility_tolerance": 1e-10})
    assert res.status == 0 and res.retried
    np.testing.assert_allclose(res.x, [2.0, 6.0], atol=1e-7)


def _linprog_minimax(G):
    """The same LP through scipy's linprog (the outside reference): min s, sum x = 1, x >= 0, G x <= s."""
    k, n = G.shape
    res = linprog(np.r_[np.zeros(n), 1.0], A_ub=np.hstack([G, -np.ones((k, 1))]), b_ub=np.zeros(k),
                  A_eq=np.r_[np.ones(n), 0.0][None, :], b_eq=[1.0], bounds=[(0, None)] * (n + 1), method="highs")
    return res.fun


def test_cut_lp_of_the_identity_spreads_evenly():
    # min max_i x_i over the simplex is 1/n at x_i = 1/n (symmetry and convexity; common fact, no source)
    lp = lp_solve.CutLP(4)
    lp.add_cuts(np.eye(4))
    res = lp.solve()
    assert res.status == 0 and not res.retried
    np.testing.assert_allclose(res.x, 0.25, atol=1e-9)
    assert res.s == pytest.approx(0.25)


def test_cut_lp_warm_started_over_rounds_matches_linprog_from_scratch():
    rng = np.random.default_rng(7)
    G = rng.normal(size=(60, 12))
    lp = lp_solve.CutLP(12)
    for k in (20, 40, 60):  # cuts arrive in rounds, as in the cutting-plane loop
        lp.add_cuts(G[k - 20:k])
        res = lp.solve()
        assert res.status == 0 and res.s == pytest.approx(_linprog_minimax(G[:k]), abs=1e-9)
        assert np.all(G[:k] @ res.x <= res.s + 1e-9) and res.x.sum() == pytest.approx(1.0)


def test_cut_lp_at_the_iteration_cap_is_solved_by_interior_point(monkeypatch):
    monkeypatch.setattr(lp_solve, "MIN_ITERATIONS", 1)
    monkeypatch.setattr(lp_solve, "ITERATIONS_PER_SIZE", 0)
    G = np.random.default_rng(3).normal(size=(30, 8))
    lp = lp_solve.CutLP(8)
    lp.add_cuts(G)
    res = lp.solve()
    assert res.status == 0 and res.retried
    assert res.s == pytest.approx(_linprog_minimax(G), abs=1e-6)


def _linprog_minimax_scaled(G, scales):
    """min s, sum x = 1, x >= 0, G x <= c s (row scales c > 0), through scipy's linprog (the outside reference)."""
    k, n = G.shape
    res = linprog(np.r_[np.zeros(n), 1.0], A_ub=np.hstack([G, -np.asarray(scales)[:, None]]), b_ub=np.zeros(k),
                  A_eq=np.r_[np.ones(n), 0.0][None, :], b_eq=[1.0], bounds=[(0, None)] * (n + 1), method="highs")
    return res.fun


def test_cut_lp_restricted_to_column_subsets_and_rescaled_matches_linprog_on_each_subset():
    # one instance serves several grids of a search: columns switched off, row scales changed, warm-started
    rng = np.random.default_rng(11)
    G = rng.normal(size=(50, 14))
    lp = lp_solve.CutLP(14)
    lp.add_cuts(G[:30], np.full(30, 1.0))
    lp.add_cuts(G[30:], rng.uniform(0.3, 1.0, 20))
    for keep, scales in ((np.arange(14) < 9, rng.uniform(0.3, 1.0, 50)),
                         (np.arange(14) % 2 == 0, np.ones(50)),
                         (np.arange(14) < 12, rng.uniform(0.3, 1.0, 50))):
        lp.restrict(keep)
        lp.rescale(scales)
        res = lp.solve()
        assert res.status == 0 and not res.retried
        assert res.s == pytest.approx(_linprog_minimax_scaled(G[:, keep], scales), abs=1e-9)
        assert np.all(res.x[~keep] == 0.0) and res.x.sum() == pytest.approx(1.0)


def test_degenerate_lp_at_the_cap_is_solved_by_interior_point_without_crossover(monkeypatch):
    # min s s.t. x1 - x2 <= s, x2 - x1 <= s on the simplex: optimum s = 0 at x = (1/2, 1/2), the only point
    # where both cuts are equal (common fact, no source); optimum 0 as in the hard envelope's stalled LP
    monkeypatch.setattr(lp_solve, "MIN_ITERATIONS", 1)
    monkeypatch.setattr(lp_solve, "ITERATIONS_PER_SIZE", 0)
    lp = lp_solve.CutLP(2)
    lp.add_cuts(np.array([[1.0, -1.0], [-1.0, 1.0]]))
    res = lp.solve()
    assert res.status == 0 and res.retried
    assert abs(res.s) < 1e-7
    np.testing.assert_allclose(res.x, [0.5, 0.5], atol=1e-6)


@pytest.mark.parametrize("method", ["highs", "highs-ds", "highs-ipm"])
def test_solve_lp_with_equalities_and_free_variables_matches_linprog(method):
    # the cycle-grid LP's shape (equalities, free and bounded variables) against scipy's linprog
    rng = np.random.default_rng(5)
    n = 8
    A_ub, b_ub = rng.normal(size=(12, n)), rng.uniform(1.0, 2.0, 12)
    A_eq, b_eq = np.vstack([np.ones(n), rng.normal(size=n)]), np.array([1.0, 0.3])
    c = rng.normal(size=n)
    bounds = [(None, None), (-1.0, 1.0)] + [(0.0, None)] * (n - 3) + [(0.0, 2.0)]
    ref = linprog(c, A_ub=A_ub, b_ub=b_ub, A_eq=A_eq, b_eq=b_eq, bounds=bounds, method="highs")
    res = lp_solve.solve_lp(c, A_ub=A_ub, b_ub=b_ub, A_eq=A_eq, b_eq=b_eq, bounds=bounds, method=method)
    assert ref.status == 0 and res.status == 0 and not res.retried
    assert res.fun == pytest.approx(ref.fun, abs=1e-8)
    np.testing.assert_allclose(A_eq @ res.x, b_eq, atol=1e-8)
    assert np.all(A_ub @ res.x <= b_ub + 1e-8)


def test_solve_lp_reports_an_infeasible_lp():
    # x >= 0 and x1 + x2 <= -1 cannot both hold
    res = lp_solve.solve_lp(np.ones(2), A_ub=np.array([[1.0, 1.0]]), b_ub=np.array([-1.0]))
    assert res.status == 2
