"""Design LPs: the iteration cap and the interior-point retry (shaping.lp_solve)."""

import numpy as np
import pytest

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
