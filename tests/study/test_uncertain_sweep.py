"""Sweeps over an uncertain rig: per-rig hook mass, rigging length and damping in the batch, sampling,
worst case with every parameter, spot checks of the worst sampled rigs, worker-count independence, CLI."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from stillhook.cli import main
from stillhook.model.envelope import Envelope
from stillhook.project import demo_project_text, project_from_bytes
from stillhook.shaping.closed_forms import zv
from stillhook.sim.profiles import trapezoid
from stillhook.study.modal_sweep import ModalBatch
from stillhook.study.rig_samples import RigSamples, random_points, random_rigs
from stillhook.study.sweep import SweepDesign, residuals, sweep_project

G = 9.80665
UNCERTAIN = """
[uncertainty]
hook_mass_kg = [300.0, 380.0]
rigging_length_m = [2.8, 3.4]
damping_ratio = [0.0, 0.01]
"""
KNOWN = """
[uncertainty]
hook_mass_kg = [340.0, 340.0]
rigging_length_m = [3.1, 3.1]
damping_ratio = [0.002, 0.002]
"""


def _demo(extra: str = ""):
    return project_from_bytes((demo_project_text() + extra).encode(), "demo_uncertain.toml")


@pytest.fixture(scope="module")
def uncertain_sweep():
    """300 random rigs of the demo with hook mass, rigging length and damping drawn too; spot checks on."""
    return sweep_project(_demo(UNCERTAIN), samples=300, seed=4, keys=("unshaped", "shaper", "schedule"))


# -- the batch with per-rig parameters agrees with one rig at a time ---------------------------------------
def test_batch_with_per_rig_parameters_equals_rigs_one_by_one(demo_project):
    env = demo_project.envelope
    rng = np.random.default_rng(11)
    n = 40
    L, m = random_points(env, n, seed=2)
    m[:3] = 0.0  # an empty hook: one mode with the rigging in line
    hook, rig_len, zeta = rng.uniform(50.0, 900.0, n), rng.uniform(0.0, 6.0, n), rng.uniform(0.0, 0.05, n)
    rig_len[3] = 0.0  # payload at the hook
    batch = ModalBatch.from_envelope(env, L, m, hook_mass_kg=hook, rigging_length_m=rig_len, damping_ratio=zeta)
    for i in range(n):
        rig = env.rig(L[i], m[i], hook_mass_kg=hook[i], rigging_length_m=rig_len[i], damping_ratio=zeta[i])
        modes = rig.modes()  # scipy eigh on M, K of this one rig
        k = len(modes)
        np.testing.assert_allclose(batch.omega_rad_s[i, :k], [md.omega_rad_s for md in modes], rtol=1e-10)
        # unit-oscillator gains p_i = -P_i w_i^2 from the rig's own participations
        np.testing.assert_allclose(batch.payload_gain[i, :k],
                                   [-md.payload_participation_m_per_m_s2 * md.omega_rad_s**2 for md in modes],
                                   rtol=1e-9, atol=1e-12)
        s = batch.poles_rad_s[i, :k]
        np.testing.assert_allclose(-s.real / np.abs(s), [md.damping_ratio for md in modes], rtol=1e-12)
        # and the same as a batch of one built from an envelope with these values as its own
        one = Envelope(hook[i], rig_len[i], env.rope_length_range_m, env.payload_mass_range_kg, damping_ratio=zeta[i])
        single = ModalBatch.from_envelope(one, [L[i]], [m[i]])
        np.testing.assert_allclose(batch.omega_rad_s[i], single.omega_rad_s[0], rtol=1e-14)
        np.testing.assert_allclose(batch.poles_rad_s[i], single.poles_rad_s[0], rtol=1e-14)


def test_residuals_with_per_rig_parameters_equal_single_rig_sweeps(demo_project):
    env, T = demo_project.envelope, demo_project.drive["cycle_s"]
    v = trapezoid(4.0, 0.5, 0.25, T)
    designs = [SweepDesign("unshaped", "u", 0.0, (v,)), SweepDesign("zv", "zv", 0.0, (zv(0.25).apply(v, T),))]
    unc = _demo(UNCERTAIN).uncertainty
    rigs = random_rigs(env, 12, seed=9, uncertainty=unc)
    many = residuals(rigs, designs, T, envelope=env)
    for i in range(rigs.size):
        p = rigs.parameters(env, i)
        one = Envelope(p["hook_mass_kg"], p["rigging_length_m"], env.rope_length_range_m, env.payload_mass_range_kg,
                       damping_ratio=p["damping_ratio"])
        single = residuals(ModalBatch.from_envelope(one, [p["rope_length_m"]], [p["payload_mass_kg"]]), designs, T)
        for key in ("unshaped", "zv"):
            assert many[key][i] == pytest.approx(single[key][0], rel=1e-12)


# -- physical laws ---------------------------------------------------------------------------------------------
def test_single_pendulum_limits_with_per_rig_rigging():
    # Small-angle pendulum period T = 2 pi sqrt(L / g) (Huygens, Horologium Oscillatorium, 1673; any mechanics
    # text, e.g. Kibble & Berkshire, Classical Mechanics, 5th ed., 2004). Double-pendulum limits of the
    # frequency equation (Kibble & Berkshire 2004, from memory): a payload of vanishing mass leaves the hook on its
    # rope, w1 = sqrt(g / L1), and the payload on its rigging, w2 = sqrt(g / L2); a payload much heavier than the
    # hook swings as one pendulum of length L1 + L2.
    env = Envelope(100.0, 1.0, (1.0, 10.0), (0.0, 1e7))
    L1 = np.array([1.5, 4.0, 9.0])
    L2 = np.array([0.5, 2.0, 5.0])
    light = ModalBatch.from_envelope(env, L1, np.full(3, 1e-6), rigging_length_m=L2, hook_mass_kg=np.full(3, 1e3))
    f = light.omega_rad_s / (2 * math.pi)
    np.testing.assert_allclose(f[:, 0], np.sqrt(G / L1) / (2 * math.pi), rtol=1e-8)
    np.testing.assert_allclose(f[:, 1], np.sqrt(G / L2) / (2 * math.pi), rtol=1e-8)
    heavy = ModalBatch.from_envelope(env, L1, np.full(3, 1e7), rigging_length_m=L2, hook_mass_kg=np.full(3, 1.0))
    np.testing.assert_allclose(heavy.omega_rad_s[:, 0] / (2 * math.pi), np.sqrt(G / (L1 + L2)) / (2 * math.pi),
                               rtol=1e-6)


def test_per_rig_parameters_against_scipy_zero_order_hold():
    # Reference: scipy.signal.cont2discrete(method='zoh') of each rig's own state space (its sampled hook mass,
    # rigging length and damping) with the trolley acceleration held over each cycle, stepped with dlsim (exact
    # for a piecewise-constant input: Franklin, Powell & Workman, Digital Control of Dynamic Systems, 3rd ed.,
    # 1998, ch. 4, from memory). The sweep finds the continuous peak; the 10 ms samples are lower by at most
    # (w h)^2 / 8 of it (w the highest mode).
    from scipy.signal import cont2discrete, dlsim

    from stillhook.model.statespace import rig_state_space
    from stillhook.study.modal_sweep import residual_sway_m

    env = Envelope(340.0, 3.1, (1.2, 9.5), (70.0, 1600.0), damping_ratio=0.002)
    T = 0.01
    speed = trapezoid(4.0, 0.5, 0.25, T)
    a = np.diff(np.concatenate([speed, np.zeros(2001)])) / T  # accel per cycle, 20 s of rest after
    hook, rig_len, zeta = np.array([300.0, 380.0, 340.0]), np.array([2.8, 3.4, 3.0]), np.array([0.0, 0.01, 0.03])
    L, m = np.array([3.0, 6.0, 2.0]), np.array([300.0, 900.0, 120.0])
    got = residual_sway_m(ModalBatch.from_envelope(env, L, m, hook_mass_kg=hook, rigging_length_m=rig_len,
                                                   damping_ratio=zeta), speed, T)
    for i in range(3):
        rig = env.rig(L[i], m[i], hook_mass_kg=hook[i], rigging_length_m=rig_len[i], damping_ratio=zeta[i])
        ss = rig_state_space(rig)
        Ad, Bd, Cd, Dd, _ = cont2discrete((ss.A, ss.B, ss.C[1:2], ss.D[1:2]), T, method="zoh")
        _, y, _ = dlsim((Ad, Bd, Cd, Dd, T), a)
        grid_peak = np.abs(y[len(speed):, 0]).max()
        w_hi = rig.modes()[-1].omega_rad_s
        assert grid_peak <= got[i] * (1 + 1e-9)
        assert got[i] == pytest.approx(grid_peak, rel=(w_hi * T) ** 2 / 8 + 1e-9)


# -- sampling, zero-width ranges, worker counts ------------------------------------------------------------------
def test_samples_stay_in_their_ranges_and_repeat_with_the_seed(demo_project):
    unc = _demo(UNCERTAIN).uncertainty
    a = random_rigs(demo_project.envelope, 2000, seed=3, uncertainty=unc)
    b = random_rigs(demo_project.envelope, 2000, seed=3, uncertainty=unc)
    for key, (lo, hi) in unc.ranges.items():
        assert lo <= a.varied[key].min() and a.varied[key].max() <= hi
        np.testing.assert_array_equal(a.varied[key], b.varied[key])
    # rope and payload are drawn first, so they are the plain sweep's rigs
    L, m = random_points(demo_project.envelope, 2000, seed=3)
    np.testing.assert_array_equal(a.rope_length_m, L)
    np.testing.assert_array_equal(a.payload_mass_kg, m)


def test_zero_width_ranges_give_the_plain_sweep(demo_project):
    keys = ("unshaped", "shaper")
    plain = sweep_project(demo_project, samples=400, seed=8, keys=keys, check=False)
    known = sweep_project(_demo(KNOWN), samples=400, seed=8, keys=keys, check=False)
    assert known.varied == {} and known.uncertainty == {}
    for key in keys:
        np.testing.assert_array_equal(plain.residual_m[key], known.residual_m[key])
    assert plain.summary() == known.summary()


def test_results_do_not_depend_on_the_worker_count(monkeypatch):
    from stillhook.study import sweep

    project = _demo(UNCERTAIN)
    monkeypatch.setattr(sweep, "CHUNK_RIGS", 128)
    one = sweep_project(project, samples=500, seed=2, keys=("unshaped", "shaper"), check=False, workers=1)
    two = sweep_project(project, samples=500, seed=2, keys=("unshaped", "shaper"), check=False, workers=2)
    for key in ("unshaped", "shaper"):
        np.testing.assert_array_equal(one.residual_m[key], two.residual_m[key])
    assert one.summary() == two.summary()


# -- results ------------------------------------------------------------------------------------------------------
def test_worst_case_names_every_parameter_of_its_rig(uncertain_sweep):
    r = uncertain_sweep
    assert set(r.varied) == {"hook_mass_kg", "rigging_length_m", "damping_ratio"}
    for key, s in r.summary().items():
        n = int(np.argmax(r.ratio(key)))
        at = s["worst_ratio_at"]
        assert at == {"rope_length_m": r.rope_length_m[n], "payload_mass_kg": r.payload_mass_kg[n],
                      **{k: r.varied[k][n] for k in r.varied}}
        assert 0.0 <= s["share_within_tolerance"] <= 1.0
    d = r.as_dict()
    assert d["rig"]["sampled"]["hook_mass_kg"]["range"] == [300.0, 380.0]
    assert d["rig"]["nominal"] == {"hook_mass_kg": 340.0, "rigging_length_m": 3.1, "damping_ratio": 0.002}
    assert set(d["points"][0]) >= {"hook_mass_kg", "rigging_length_m", "damping_ratio"}


def test_spot_checks_include_the_worst_sampled_rigs(uncertain_sweep):
    r = uncertain_sweep
    worst = {int(np.argmax(r.ratio(k))) for k in ("shaper", "schedule")}
    assert r.spot_check_worst == len(worst) and len(r.spot_checks) == 4 + len(worst)
    for c in r.spot_checks[4:]:
        n = int(np.nonzero(r.rope_length_m == c.rope_length_m)[0][0])
        assert c.rig == {k: r.varied[k][n] for k in r.varied}
        assert c.linear_m["shaper"] == pytest.approx(r.residual_m["shaper"][n], rel=1e-12)
    # the nonlinear simulator builds each rig on its own (Rig with the sampled values): it agrees with the
    # linear batch to the order of the nonlinear terms
    assert r.max_disagreement_of_peak() < 0.005


def test_grid_keeps_the_nominal_rig_and_says_so():
    r = sweep_project(_demo(UNCERTAIN), grid=(3, 2), keys=("unshaped",), check=False)
    assert r.varied == {} and any("grid holds hook mass" in n for n in r.notes)
    assert r.summary()["unshaped"]["worst_residual_at"]["hook_mass_kg"] == 340.0
    held = sweep_project(_demo(UNCERTAIN), samples=20, keys=("unshaped",), check=False, vary_rig=False)
    assert held.varied == {} and any("held at their [rig] values" in n for n in held.notes)


def test_rig_samples_join_and_take():
    a = RigSamples(np.array([1.0, 2.0]), np.array([10.0, 20.0]), {"hook_mass_kg": np.array([5.0, 6.0])})
    b = a.join(a.take(np.array([1])))
    np.testing.assert_array_equal(b.varied["hook_mass_kg"], [5.0, 6.0, 6.0])
    with pytest.raises(Exception, match="same uncertain parameters"):
        a.join(RigSamples(np.array([1.0]), np.array([1.0])))


# -- CLI ------------------------------------------------------------------------------------------------------------
def test_cli_text_and_json(tmp_path, capsys):
    path = tmp_path / "u.toml"
    path.write_text(demo_project_text() + UNCERTAIN)
    assert main(["sweep", str(path), "--samples", "60", "--seed", "5", "--designs", "unshaped,shaper"]) == 0
    out = capsys.readouterr().out
    assert "Uncertain rig" in out and "hook mass 300 to 380 kg" in out
    assert "shaper" in out and "rigging" in out and "damping" in out and "worst sampled rig" in out
    assert main(["sweep", str(path), "--samples", "60", "--seed", "5", "--designs", "unshaped,shaper", "--json",
                 "--no-check"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert set(data["summary"]["shaper"]["worst_ratio_at"]) == {"rope_length_m", "payload_mass_kg", "hook_mass_kg",
                                                                "rigging_length_m", "damping_ratio"}
    assert main(["sweep", str(path), "--nominal-rig", "--no-check"]) == 2
    assert "--nominal-rig applies to --samples only" in capsys.readouterr().err


def test_cli_json_streams_the_same_text_as_the_whole_document(tmp_path, capsys):
    # the CLI streams the rigs (bounded memory at 10^6); the text must be to_json of the whole result
    from stillhook.cautions import CAUTIONS
    from stillhook.outputs import to_json
    from stillhook.study.ranking import rank_designs, ranking_sentence

    path = tmp_path / "u.toml"
    path.write_text(demo_project_text() + UNCERTAIN)
    assert main(["sweep", str(path), "--samples", "30", "--designs", "unshaped,shaper", "--no-check", "--json"]) == 0
    out = capsys.readouterr().out
    project = project_from_bytes(path.read_bytes(), "u.toml")
    r = sweep_project(project, samples=30, keys=("unshaped", "shaper"), check=False)
    ranked = rank_designs([(k, s["label"], s["worst_ratio"], s["added_s"]) for k, s in r.summary().items()
                           if k != "unshaped"], r.tolerance)
    whole = {"project": "u", "input_digest_sha256": project.digest, **r.as_dict(),
             "ranking": [x.as_dict() for x in ranked], "verdict": ranking_sentence(ranked, r.tolerance),
             "cautions": list(CAUTIONS)}
    assert out == to_json(whole)


def test_help_shows_an_integer_seed(capsys):
    with pytest.raises(SystemExit):
        main(["sweep", "--help"])
    out = capsys.readouterr().out
    assert "--seed SEED" in out and "RATIO" not in out
