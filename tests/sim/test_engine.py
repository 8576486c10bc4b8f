"""Simulator engine: compiled kernel vs the numpy reference, batches vs single runs, the fallback, the cache."""

from __future__ import annotations

from importlib import resources

import numpy as np
import pytest

from stillhook.errors import ConfigError
from stillhook.model.rig import Rig
from stillhook.sim import kernel
from stillhook.sim.dynamics import simulate, simulate_batch
from stillhook.sim.equations import numpy_rhs
from stillhook.sim.profiles import hoist_speeds, s_curve, trapezoid

RIG = Rig(340.0, 150.0, 5.0, 3.1, damping_ratio=0.004)  # invented test rig
Ts = 0.01

CASES = {
    "large-angle free swing": dict(rig=Rig(340.0, 150.0, 5.0, 3.1), speed=np.zeros(1), settle_s=6.0,
                                   initial_angles_rad=(0.7, -0.5)),
    "travel and hoist": dict(rig=RIG, speed=trapezoid(2.0, 0.5, 0.25, Ts), settle_s=2.0,
                             hoist_speed_m_s=hoist_speeds(5.0, 3.5, 0.25, 0.3, Ts, start_s=0.5)),
    "s-curve, lowering": dict(rig=RIG, speed=s_curve(1.5, 0.5, 0.3, 0.6, Ts), settle_s=1.0,
                              hoist_speed_m_s=hoist_speeds(5.0, 6.0, 0.2, 0.3, Ts)),
    "single pendulum": dict(rig=Rig(200.0, 0.0, 4.0, 1.0, damping_ratio=0.01), speed=trapezoid(1.0, 0.5, 0.3, Ts),
                            settle_s=2.0),
    "rope samples": dict(rig=RIG, speed=trapezoid(1.0, 0.5, 0.3, Ts), settle_s=1.0,
                         rope_length_m=np.linspace(5.0, 4.0, 300)),
}


@pytest.fixture
def fresh_kernel():
    kernel.reset_kernel()
    yield
    kernel.reset_kernel()


def _run(case, engine):
    c = dict(CASES[case])
    return simulate(c.pop("rig"), c.pop("speed"), Ts, engine=engine, **c)


@pytest.mark.parametrize("case", sorted(CASES))
def test_compiled_kernel_matches_the_numpy_reference(case):
    # The numpy engine is the reference: same equations (one text), same RK4 arithmetic; the issue asks
    # for agreement to 1e-9 m. With -ffp-contract=off and no fast-math they agree far closer than that.
    ref, fast = _run(case, "numpy"), _run(case, "compiled")
    assert len(ref.t_s) == len(fast.t_s)
    assert np.max(np.abs(ref.payload_offset_m - fast.payload_offset_m)) <= 1e-9
    assert np.max(np.abs(ref.hook_offset_m - fast.hook_offset_m)) <= 1e-9
    assert np.max(np.abs(ref.theta2_rate_rad_s - fast.theta2_rate_rad_s)) <= 1e-9


@pytest.mark.parametrize("engine", ["compiled", "numpy"])
def test_a_batch_gives_each_run_what_it_gives_alone(engine):
    # runs of different equations, step counts and lengths share one batch (the numpy engine groups them)
    rigs = [RIG, Rig(200.0, 0.0, 4.0, 1.0), Rig(60.0, 300.0, 2.0, 1.5), RIG]
    T = 0.02
    moves = [trapezoid(0.2, 0.4, 0.4, T), trapezoid(0.1, 0.3, 0.3, T), s_curve(0.2, 0.4, 0.4, 0.8, T), np.zeros(1)]
    settles = [0.3, 0.5, 0.4, 0.3]
    batch = simulate_batch(rigs, moves, T, settle_s=settles, engine=engine)
    assert len({len(r.t_s) for r in batch}) > 1
    for rig, move, settle, res in zip(rigs, moves, settles, batch, strict=True):
        alone = simulate(rig, move, T, settle_s=settle, engine=engine)
        assert np.array_equal(alone.payload_offset_m, res.payload_offset_m)
        assert res.settle_s == settle
    # one rig x several commands broadcasts the rig
    two = simulate_batch(RIG, moves[:2], T, settle_s=0.5, engine=engine)
    assert np.array_equal(two[1].payload_offset_m, simulate(RIG, moves[1], T, settle_s=0.5).payload_offset_m)


def test_batch_inputs_are_checked():
    with pytest.raises(ConfigError, match="2 rigs and 3 commands"):
        simulate_batch([RIG, RIG], [np.zeros(2)] * 3, Ts)
    with pytest.raises(ConfigError, match="settle_s has 2 values for 3 runs"):
        simulate_batch(RIG, [np.zeros(2)] * 3, Ts, settle_s=[1.0, 2.0])
    with pytest.raises(ConfigError, match="engine"):
        simulate(RIG, np.zeros(2), Ts, engine="fortran")


def test_closed_form_damping_equals_the_modal_damping_matrix():
    # C = 2 zeta (K + w1 w2 M) / (w1 + w2) inside the equations must equal M Phi diag(2 zeta w) Phi^T M from
    # the eigenvectors (Rig.damping_matrix, numpy.linalg.eigh). At rest with rates w the equations give
    # theta'' = -M^-1 C w.
    f = numpy_rhs(False)
    for L1 in (1.2, 5.0, 9.5):
        rig = Rig(340.0, 700.0, L1, 3.1, damping_ratio=0.05)
        w = np.array([0.03, -0.02])
        out = f(0.0, 0.0, w[0], w[1], 0.0, L1, 0.0, 0.0, rig.hook_mass_kg, rig.payload_mass_kg,
                rig.rigging_length_m, rig.gravity_m_s2, rig.damping_ratio)
        expected = -np.linalg.solve(rig.mass_matrix(), rig.damping_matrix() @ w)
        np.testing.assert_allclose(out[2:], expected, rtol=1e-12)


def test_without_a_compiler_the_numpy_engine_runs(fresh_kernel, monkeypatch, tmp_path):
    monkeypatch.setenv("STILLHOOK_CACHE_DIR", str(tmp_path))
    monkeypatch.setenv("CC", "/nonexistent/stillhook-cc")
    assert kernel.load_kernel() is None
    assert "no C compiler" in kernel.kernel_status()
    res = _run("single pendulum", "auto")
    assert np.array_equal(res.payload_offset_m, _run("single pendulum", "numpy").payload_offset_m)
    with pytest.raises(ConfigError, match="not available"):
        _run("single pendulum", "compiled")


def test_a_failing_compiler_falls_back_and_leaves_no_file(fresh_kernel, monkeypatch, tmp_path):
    monkeypatch.setenv("STILLHOOK_CACHE_DIR", str(tmp_path))
    monkeypatch.setenv("CC", "false")  # exists, exits 1
    assert kernel.load_kernel() is None
    assert "failed" in kernel.kernel_status()
    assert list(tmp_path.iterdir()) == []
    assert _run("single pendulum", "auto").t_s[-1] == pytest.approx(_run("single pendulum", "numpy").t_s[-1])


def test_the_kernel_is_built_once_and_then_loaded_from_the_cache(fresh_kernel, monkeypatch, tmp_path):
    monkeypatch.setenv("STILLHOOK_CACHE_DIR", str(tmp_path))
    assert kernel.load_kernel() is not None
    assert kernel.kernel_status().startswith("compiled")
    built = list(tmp_path.iterdir())
    assert len(built) == 1 and built[0].suffix == ".so"  # no temporary left behind
    kernel.reset_kernel()
    assert kernel.load_kernel() is not None
    assert kernel.kernel_status().startswith("cached")
    assert list(tmp_path.iterdir()) == built


def test_the_c_source_ships_in_the_package():
    # CI installs the wheel (non-editable): the kernel source must be package data.
    text = resources.files("stillhook.sim").joinpath("_kernel.c").read_text(encoding="utf-8")
    assert "shk_sim_batch" in text
    assert "shk_rhs_double" in kernel.kernel_source()
