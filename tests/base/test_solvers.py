"""The numpy-only solvers against scipy.optimize (brentq, bounded minimize_scalar, fsolve) and known values.

``brent_root`` and ``bounded_minimum`` do the operations of their scipy counterparts in the same order, so they
are compared for equality to the last bit; ``solve_square_system`` (Newton) and fsolve (MINPACK's hybrid
Powell method) take different paths to the same root, compared within the tolerance the design asks for. The
damped-form systems are written here again from their defining conditions (independently of
``shaping/damped_forms.py``) and solved with fsolve by continuation as the reference.
"""

import math
import subprocess
import sys

import numpy as np
import pytest
from scipy.optimize import brentq, fsolve, minimize_scalar

from stillhook.errors import DesignError
from stillhook.shaping.closed_forms import ei, ei2, ei3, umzv, zv, zvd
from stillhook.shaping.damped_forms import damped_hump_shaper, damped_umzv_times, undamped_hump_amplitudes
from stillhook.shaping.shaper import insensitive_band_hz
from stillhook.solvers import bounded_minimum, brent_root, solve_square_system


def _vibration_excess(shaper, zeta, tol):
    return lambda f: float(shaper.vibration_at_hz(f, zeta)) - tol


#: (f, a, b): roots bracketed by a, b. Polynomials, transcendental, and the upper band edge of real shapers.
ROOT_CASES = [
    (lambda x: x ** 3 - 2.0 * x - 5.0, 2.0, 3.0),
    (lambda x: x * x - 2.0, 0.0, 2.0),
    (lambda x: (x - 0.5) * (x - 0.25) * (x + 3.0), 0.4, 2.0),
    (lambda x: math.cos(x) - x, 0.0, 1.0),
    (lambda x: x * math.exp(x) - 1.0, 0.0, 1.0),
    (lambda x: math.exp(x) - 10.0, -5.0, 5.0),
    (lambda x: math.atan(x - 0.3), -1e3, 10.0),
    (lambda x: math.log(x) + x, 0.01, 2.0),
    (_vibration_excess(zv(0.3, 0.05), 0.05, 0.05), 0.3, 0.6),
    (_vibration_excess(zvd(0.3, 0.1), 0.1, 0.05), 0.3, 0.6),
    (_vibration_excess(zvd(0.3, 0.1), 0.1, 0.05), 0.3, 0.05),
    (_vibration_excess(ei(0.3, 0.1, 0.05), 0.1, 0.05 * (1 + 1e-9)), 0.35, 0.6),
    (_vibration_excess(ei2(0.3, 0.0, 0.03), 0.0, 0.03 * (1 + 1e-9)), 0.3, 0.6),
]


@pytest.mark.parametrize("case", range(len(ROOT_CASES)))
@pytest.mark.parametrize("xtol", [1e-12, 1e-6])
def test_brent_root_is_brentq(case, xtol):
    f, a, b = ROOT_CASES[case]
    x = brent_root(f, a, b, xtol=xtol)
    assert x == brentq(f, a, b, xtol=xtol)  # same operations: same bits
    assert min(a, b) <= x <= max(a, b)


def test_brent_root_known_values():
    # sqrt 2; the Dottie number cos x = x = 0.7390851332151607; the omega constant x e^x = 1 = 0.5671432904097838
    # (from memory); Wallis's cubic x^3 - 2x - 5 = 0 at 2.0945514815423265 (from memory).
    for f, a, b, root in [(lambda x: x * x - 2.0, 0.0, 2.0, math.sqrt(2.0)),
                          (lambda x: math.cos(x) - x, 0.0, 1.0, 0.7390851332151607),
                          (lambda x: x * math.exp(x) - 1.0, 0.0, 1.0, 0.5671432904097838),
                          (lambda x: x ** 3 - 2.0 * x - 5.0, 2.0, 3.0, 2.0945514815423265)]:
        assert abs(brent_root(f, a, b, xtol=1e-14) - root) <= 1e-14 + 8 * np.finfo(float).eps * root


def test_brent_root_exact_ends_and_bad_brackets():
    assert brent_root(lambda x: x - 1.0, 1.0, 3.0, xtol=1e-12) == 1.0
    assert brent_root(lambda x: x - 3.0, 1.0, 3.0, xtol=1e-12) == 3.0
    with pytest.raises(DesignError, match="bracket no root") as info:
        brent_root(lambda x: x * x + 1.0, -1.0, 2.0, xtol=1e-12)
    assert isinstance(info.value, ValueError)
    with pytest.raises(DesignError, match="not finite"):
        brent_root(lambda x: math.nan if x > 1.5 else -1.0, 1.0, 2.0, xtol=1e-12)
    with pytest.raises(DesignError, match="same sign"):
        brent_root(_vibration_excess(zv(0.3), 0.0, 0.05), 0.29, 0.31, xtol=1e-12)  # inside the band at both ends


def test_brent_root_iteration_cap():
    calls = []

    def f(x):
        calls.append(x)
        return (x - 1.0) ** 5  # flat root: scipy's brentq does not converge to 1e-12 in 100 iterations either
    with pytest.raises(RuntimeError):
        brentq(f, 0.0, 3.3, xtol=1e-12)
    calls.clear()
    with pytest.raises(DesignError, match="did not converge in 100 iterations"):
        brent_root(f, 0.0, 3.3, xtol=1e-12)
    assert len(calls) == 102  # the two ends + one evaluation per iteration
    with pytest.raises(DesignError, match="in 3 iterations"):
        brent_root(math.sin, 3.0, 3.5, xtol=1e-15, max_iter=3)


def _minus_vibration(shaper, zeta):
    return lambda f: -float(shaper.vibration_at_hz(f, zeta))


#: (f, a, b): smooth minima inside, minima at an end, a kink, and the worst V of real shapers (its hump).
MIN_CASES = [
    (lambda x: (x - 2.0) ** 2, 0.0, 5.0),
    (lambda x: x ** 4 - 3.0 * x, -2.0, 3.0),
    (lambda x: -math.sin(x), 0.0, 3.0),
    (lambda x: math.cos(x), 2.0, 5.0),
    (lambda x: x, 1.0, 2.0),
    (lambda x: -x, 1.0, 2.0),
    (lambda x: abs(x - 0.7), 0.0, 1.0),
    (lambda x: math.exp(x) - 4.0 * x, 0.0, 3.0),
    (_minus_vibration(ei(0.3, 0.0, 0.05), 0.0), 0.25, 0.35),
    (_minus_vibration(ei(0.3, 0.2, 0.05), 0.2), 0.25, 0.35),
    (_minus_vibration(ei3(0.3, 0.1, 0.05), 0.1), 0.2, 0.3),
    (_minus_vibration(zvd(0.3, 0.05), 0.05), 0.4, 0.7),
]


@pytest.mark.parametrize("case", range(len(MIN_CASES)))
@pytest.mark.parametrize("xatol", [1e-10, 1e-5])
def test_bounded_minimum_is_minimize_scalar_bounded(case, xatol):
    f, a, b = MIN_CASES[case]
    x, fx = bounded_minimum(f, a, b, xatol=xatol)
    ref = minimize_scalar(f, bounds=(a, b), method="bounded", options={"xatol": xatol})
    assert (x, fx) == (ref.x, ref.fun)  # same operations: same bits
    assert a <= x <= b and fx == f(x)


def test_bounded_minimum_known_values():
    # min of -sin on [0, 3] at pi/2, of cos on [2, 5] at pi, of e^x - 4x at ln 4 (calculus)
    for f, a, b, x_min in [(lambda x: -math.sin(x), 0.0, 3.0, math.pi / 2.0), (math.cos, 2.0, 5.0, math.pi),
                           (lambda x: math.exp(x) - 4.0 * x, 0.0, 3.0, math.log(4.0))]:
        x, _ = bounded_minimum(f, a, b, xatol=1e-10)
        assert abs(x - x_min) <= 1e-7  # a smooth minimum is located to ~sqrt(eps) relative


def test_bounded_minimum_cap_and_bad_interval():
    calls = []

    def f(x):
        calls.append(x)
        return x  # minimum at the left end: approached by golden steps
    x, fx = bounded_minimum(f, 1.0, 2.0, xatol=1e-14, max_iter=7)
    assert len(calls) == 7 and fx == min(calls) > 1.0 + 1e-3  # stopped by the cap, far from converged
    ref = minimize_scalar(f, bounds=(1.0, 2.0), method="bounded", options={"xatol": 1e-14, "maxiter": 7})
    assert (x, fx) == (ref.x, ref.fun)
    with pytest.raises(DesignError, match="lo <= hi"):
        bounded_minimum(f, 2.0, 1.0, xatol=1e-6)
    with pytest.raises(DesignError, match="finite"):
        bounded_minimum(f, 0.0, math.inf, xatol=1e-6)
    with pytest.raises(DesignError, match="NaN"):
        bounded_minimum(lambda x: math.nan, 0.0, 1.0, xatol=1e-6)


#: (F, x0): square systems with a root near x0.
SYSTEMS = [
    (lambda x: np.array([10.0 * (x[1] - x[0] ** 2), 1.0 - x[0]]), [-1.2, 1.0]),  # Rosenbrock's, root (1, 1)
    (lambda x: np.array([x[0] ** 2 + x[1] ** 2 - 4.0, math.exp(x[0]) + x[1] - 1.0]), [1.0, -1.7]),
    (lambda x: np.array([math.cos(x[0]) - x[1], math.sin(x[1]) - x[0] + 0.5, x[2] ** 3 - x[0]]), [1.0, 0.5, 1.0]),
    (lambda x: np.array([3.0 * x[0] - math.cos(x[1] * x[2]) - 0.5,
                         x[0] ** 2 - 81.0 * (x[1] + 0.1) ** 2 + math.sin(x[2]) + 1.06,
                         math.exp(-x[0] * x[1]) + 20.0 * x[2] + (10.0 * math.pi - 3.0) / 3.0]), [0.1, 0.1, -0.1]),
]


@pytest.mark.parametrize("case", range(len(SYSTEMS)))
def test_square_system_agrees_with_fsolve(case):
    F, x0 = SYSTEMS[case]
    x = solve_square_system(F, x0, xtol=1e-13)
    ref = fsolve(F, x0, xtol=1e-13)
    assert np.max(np.abs(F(x))) <= 1e-12
    np.testing.assert_allclose(x, ref, rtol=1e-10, atol=1e-12)


def test_square_system_known_root_cap_and_shape():
    # the worked nonlinear system of Burden & Faires, Numerical Analysis, ch. 10 (Newton's method for systems; from
    # memory), root (0.5, 0, -pi/6): each equation checked by substitution
    F, x0 = SYSTEMS[3]
    np.testing.assert_allclose(solve_square_system(F, x0, xtol=1e-13), [0.5, 0.0, -math.pi / 6.0], atol=1e-12)
    rosenbrock, start = SYSTEMS[0]
    one_step = solve_square_system(rosenbrock, start, xtol=1e-13, max_iter=1)
    assert np.max(np.abs(rosenbrock(one_step))) > 1e-6  # the cap ends the iteration; the caller checks |F|
    with pytest.raises(DesignError, match="2 equations for 3 unknowns"):
        solve_square_system(lambda x: x[:2], [1.0, 2.0, 3.0], xtol=1e-12)
    assert not np.any(solve_square_system(lambda x: x, [0.0, 0.0], xtol=1e-12))


# -- the damped-form systems, written again from the conditions (Singhose, Seering & Singer, J. Mech. Design
# 116(2):654-659, 1994, EI; Singhose, Porter, Tuttle & Singer, ASME JDSMC 119(2):320-326, 1997, multi-hump EI;
# Singhose, Singer & Seering, ASME JDSMC 119(2):198-205, 1997, UM-ZV; from memory) --------------------------
def _z(A, t, w, zeta):
    """z(w) = sum_i A_i exp(-zeta w (t_n - t_i) - j w_d t_i) and dz/dw, normalized time (w0 = 1)."""
    wd = math.sqrt(1.0 - zeta ** 2)
    ph = -zeta * np.outer(w, t[-1] - t) - 1j * wd * np.outer(w, t)
    return np.exp(ph) @ A, (np.exp(ph) * (-zeta * (t[-1] - t) - 1j * wd * t)) @ A


def _ei_reference(n_humps, tol, path):
    """[(zeta, t, A)] of the damped EI-family shaper at each zeta of ``path`` (increasing), by fsolve
    continuation along it from the undamped shaper; w0 = 1 rad/s."""
    A0 = undamped_hump_amplitudes(n_humps, tol)
    n = A0.size
    t0 = math.pi * np.arange(n)
    w = np.linspace(0.01, 1.99, 19801)
    v = np.abs(_z(A0, t0, w, 0.0)[0])
    i = np.arange(1, w.size - 1)
    wz = w[i[(v[i] <= v[i - 1]) & (v[i] <= v[i + 1]) & (v[i] < 1e-2)]]
    wh = np.array([w[np.argmax(np.where((w > lo) & (w < hi), v, -1.0))]
                   for lo, hi in zip(wz[:-1], wz[1:], strict=True)])
    assert wz.size == n - 1 and wh.size == n_humps
    odd = n_humps % 2 == 1  # w = 1 fixed: the middle hump (odd hump count) or the middle zero (even)
    mid = n_humps // 2 if odd else wz.size // 2

    def split(x):
        A, t = x[:n], np.concatenate([[0.0], x[n:2 * n - 1]])
        rest = x[2 * n - 1:]
        if odd:
            return A, t, rest[:n - 1], np.insert(rest[n - 1:], mid, 1.0)
        return A, t, np.insert(rest[:n - 2], mid, 1.0), rest[n - 2:]

    def F(x, zeta):
        A, t, zeros, humps = split(x)
        z0 = _z(A, t, zeros, zeta)[0]
        zh, dzh = _z(A, t, humps, zeta)
        return np.concatenate([[A.sum() - 1.0], z0.real, z0.imag, np.abs(zh) - tol, (np.conj(zh) * dzh).real])

    x = np.concatenate([A0, t0[1:], wz, np.delete(wh, mid)] if odd else [A0, t0[1:], np.delete(wz, mid), wh])
    out = []
    for zeta in path:
        x = fsolve(F, x, args=(zeta,), xtol=1e-13)
        assert np.max(np.abs(F(x, zeta))) <= 1e-9
        A, t, _, _ = split(x)
        out.append((zeta, t, A))
    return out


@pytest.mark.parametrize("n_humps, coarse, fine, too_much", [(1, 30, 40, 0.7), (2, 15, 50, 0.46), (3, 10, 35, 0.29)])
def test_damped_ei_family_agrees_with_fsolve(n_humps, coarse, fine, too_much):
    """Up to about the heaviest damping each form reaches (EI 0.687, two-hump 0.443, three-hump 0.275).

    The reference continues in steps of 0.02 up to 0.02 ``coarse``, then 0.002 (fsolve loses the branch with
    coarser steps near the heaviest damping); compared at three points: mid-coarse, end of coarse, last."""
    path = [0.02 * k for k in range(1, coarse + 1)] + [0.02 * coarse + 0.002 * j for j in range(1, fine + 1)]
    reference = _ei_reference(n_humps, 0.05, path)
    for zeta, t_ref, A_ref in (reference[coarse // 2 - 1], reference[coarse - 1], reference[-1]):
        t, A = damped_hump_shaper(n_humps, 1.0, zeta, 0.05)
        np.testing.assert_allclose(t, t_ref, atol=1e-9)
        np.testing.assert_allclose(A, A_ref, atol=1e-9)
    with pytest.raises(DesignError, match="solved up to"):
        damped_hump_shaper(n_humps, 1.0, too_much, 0.05)


def test_damped_umzv_agrees_with_fsolve():
    A = np.array([1.0, -1.0, 1.0])

    def F(x, zeta):
        z = _z(A, np.concatenate([[0.0], x]), np.array([1.0]), zeta)[0][0]
        return np.array([z.real, z.imag])
    x = np.array([math.pi / 3.0, 2.0 * math.pi / 3.0])  # [0, T/6, T/3] undamped
    for k in range(1, 36):  # up to 0.7, the largest damping ratio a project allows
        zeta = 0.02 * k
        x = fsolve(F, x, args=(zeta,), xtol=1e-13)
        if k in (5, 20, 35):
            np.testing.assert_allclose(damped_umzv_times(1.0, zeta)[1:], x, atol=1e-10)
    assert float(umzv(0.3, 0.7).vibration_at_hz(0.3, 0.7)) <= 1e-9


@pytest.mark.parametrize("shaper, zeta", [(ei, 0.68), (ei2, 0.44), (ei3, 0.27)])
def test_heaviest_damped_forms_are_valid_shapers(shaper, zeta):
    """Past the damping where 0.02 continuation steps used to stop (EI 0.66, two-hump 0.38, three-hump 0.28), the
    halved steps follow the branch on: the shapers keep positive impulses and V <= Vtol from below half the
    design frequency upward (V decays with frequency at such damping, so the band has no upper edge)."""
    s = shaper(1.0, zeta, 0.05)
    lo, hi = insensitive_band_hz(s, 1.0, 0.05, zeta)
    assert np.all(s.amplitudes > 0.0) and lo < 0.5 and hi == math.inf


def test_closed_form_shapers_load_no_scipy():
    """The point of the module: designing ZV ... EI3, UM-ZV (damped too), their band edges and worst V imports no
    scipy (``scipy.optimize`` alone took 0.3-0.6 s per process)."""
    code = ("import sys\n"
            "from stillhook.shaping.closed_forms import ei3, umzv\n"
            "from stillhook.shaping.shaper import insensitivity_width, worst_vibration\n"
            "s = ei3(0.3, 0.1)\n"
            "print(insensitivity_width(s, 0.3, 0.05, 0.1), worst_vibration(umzv(0.3, 0.2), 0.2, 0.4, 0.2)[0])\n"
            "print(sorted(m for m in sys.modules if m == 'scipy' or m.startswith('scipy.')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip().splitlines()[-1] == "[]"


@pytest.mark.parametrize("call, words", [
    (lambda: brent_root(math.sin, 3.0, 3.5, xtol=0.0), "xtol = 0.0"),
    (lambda: brent_root(math.sin, 3.0, 3.5, xtol=1e-9, rtol=1e-17), "rtol"),
    (lambda: brent_root(math.sin, 3.0, 3.5, xtol=1e-9, max_iter=0), "max_iter = 0"),
    (lambda: bounded_minimum(math.sin, 3.0, 5.0, xatol=math.nan), "xatol = nan"),
    (lambda: bounded_minimum(math.sin, 3.0, 5.0, xatol=1e-6, max_iter=2.5), "max_iter = 2.5"),
    (lambda: solve_square_system(lambda x: x, [1.0], xtol=-1.0), "xtol = -1.0"),
])
def test_settings_out_of_range(call, words):
    with pytest.raises(DesignError, match=words):
        call()
