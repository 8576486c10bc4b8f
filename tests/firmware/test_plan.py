"""The generator: plan, quantization contracts, manifest, determinism, refusals, CLI."""

from __future__ import annotations

import json
import types

import numpy as np
import pytest

from stillhook.cautions import CAUTIONS
from stillhook.cli import main
from stillhook.errors import ConfigError, EmitError
from stillhook.firmware.plan import plan_for_project, render_files, write_emit
from stillhook.firmware.runtime import RUNTIME_FILES, RUNTIME_VERSION, runtime_dir
from stillhook.model.lookup import lookup_thresholds
from stillhook.project import load_project, project_from_dict
from stillhook.shaping.closed_forms import umzv, zv, zvd
from stillhook.shaping.shaper import Shaper
from stillhook.version import __version__


def two_mode_schedule(project, n_rows: int, *, negative_rows=()):
    """A synthetic length schedule: ZVD on the low mode convolved with ZV on the high mode at the
    nominal payload, impulse times rounded to the drive cycle; rows in ``negative_rows`` use UM-ZV on
    the low mode (negative amplitudes). Closed forms: Singer & Seering 1990; Singhose et al. 1997."""
    env, T = project.envelope, project.drive["cycle_s"]
    Ls = np.linspace(*env.rope_length_range_m, n_rows)
    shapers = []
    for i, L in enumerate(Ls):
        f = env.frequency_map_hz([L], [env.nominal_payload_mass_kg])[0, 0]
        low = umzv(f[0]) if i in negative_rows else zvd(f[0])
        s = low.convolve(zv(f[-1]))
        shapers.append(Shaper.from_impulses(np.round(s.times_s / T) * T, s.amplitudes, s.name))
    return types.SimpleNamespace(rope_lengths_m=Ls, shapers=shapers, cycle_s=T, tolerance=0.05)


@pytest.fixture(scope="module")
def sched(demo_project):
    return two_mode_schedule(demo_project, 12)


def test_runtime_sources_are_found_through_the_package():
    root = runtime_dir()
    text = (root / "shk_fixed.h").read_text()
    assert f"#define SHK_RUNTIME_VERSION {RUNTIME_VERSION}\n" in text  # generator and runtime agree
    for name in RUNTIME_FILES:
        assert (root / name).is_file()


def test_amplitudes_sum_to_full_scale_and_delays_are_whole_cycles(demo_project, sched):
    for fmt, F in (("q15", 15), ("q31", 31)):
        plan = plan_for_project(demo_project, schedule=sched, fmt=fmt)
        T = demo_project.drive["cycle_s"]
        for row, shaper in zip(plan.rows, sched.shapers, strict=True):
            assert sum(row.amplitudes) == 2**F  # unity gain, exactly
            # each integer within one unit of the float amplitude at its delay (coincident ones merged)
            t = np.array(row.delays_cycles) * T
            for d, a in zip(row.delays_cycles, row.amplitudes, strict=True):
                exact = shaper.amplitudes[np.isclose(shaper.times_s, d * T)].sum()
                assert abs(a - exact * 2**F) < 1.0
            assert np.allclose(np.sort(np.unique(np.round(shaper.times_s / T))), t / T)


def test_manifest_holds_the_required_keys_in_rope_order(demo_project, sched):
    files = render_files(plan_for_project(demo_project, schedule=sched))
    m = json.loads(files["manifest.json"])
    assert m["format"] == "q15" and m["cycle_s"] == demo_project.drive["cycle_s"]
    rows = m["shaper_rows"]
    lengths = [r["rope_length_m"] for r in rows]
    assert lengths == sorted(lengths)
    assert lengths[0] == pytest.approx(1.2) and lengths[-1] == pytest.approx(9.5)  # spans the rope range
    for r in rows:
        assert all(isinstance(v, int) for v in r["amplitudes"] + r["delays_cycles"])
        assert sum(r["amplitudes"]) == 2**15
    assert m["input_digest_sha256"] == demo_project.digest and m["tool_version"] == __version__
    assert "notch" not in m  # the demo has no [notch] section
    # the accumulator ring: one int32_t slot per cycle of the longest delay (Q15)
    assert m["ring_len"] == 1 + max(max(r["delays_cycles"]) for r in rows)
    assert m["sizes"]["ram_bytes"] == m["ring_len"] * 4 == m["sizes"]["ring_bytes"]
    assert m["amplitude_abs_sum"] <= m["amplitude_abs_sum_limit"]
    assert m["files"] == sorted(files)
    assert m["cautions"] == list(CAUTIONS)


def test_tables_header_carries_provenance_and_cautions_without_timestamps(demo_project, sched):
    files = render_files(plan_for_project(demo_project, schedule=sched, prefix="trolley"))
    h = files["trolley_tables.h"]
    for needle in (demo_project.digest, f"stillhook {__version__}", "0.005 s", "Q15", "1.2 .. 9.5 m", *CAUTIONS):
        assert needle in h
    assert "#error" in h and "SHK_RUNTIME_VERSION" in h
    assert f'#define TROLLEY_INPUT_DIGEST "{demo_project.digest}"\n' in h
    assert f'#define TROLLEY_TOOL_VERSION "{__version__}"\n' in h
    assert not any(w in "".join(files.values()).lower() for w in ("2024-", "2025-", "2026-", "utc", "generated on"))
    assert {"trolley_tables.c", "trolley_selftest.c", "manifest.json", *RUNTIME_FILES} <= set(files)


def test_emitting_twice_gives_byte_identical_folders(demo_project, sched, tmp_path):
    write_emit(demo_project, tmp_path / "a", schedule=sched, include_notch=True)
    write_emit(demo_project, tmp_path / "b", schedule=sched, include_notch=True)
    a = {p.name: p.read_bytes() for p in (tmp_path / "a").iterdir()}
    b = {p.name: p.read_bytes() for p in (tmp_path / "b").iterdir()}
    assert a == b and len(a) == len(RUNTIME_FILES) + 6  # 5 emitted files and stillhook's marker (outputs.MARKER)


def test_ram_budget_refusal_names_the_figure(demo_project, sched):
    plan = plan_for_project(demo_project, schedule=sched)
    need = plan.sizes()["ram_bytes"]
    data = _demo_dict(firmware={"ram_budget_bytes": need - 1})
    with pytest.raises(EmitError, match=f"needs {need} bytes.*ram_budget_bytes = {need - 1}"):
        plan_for_project(project_from_dict(data), schedule=sched)
    fits = plan_for_project(project_from_dict(_demo_dict(firmware={"ram_budget_bytes": need})), schedule=sched)
    assert fits.sizes()["ram_bytes"] == need


def _demo_dict(**sections):
    import tomllib

    from stillhook.project import demo_project_text

    data = tomllib.loads(demo_project_text())
    for k, v in sections.items():
        data.setdefault(k, {}).update(v)
    return data


def test_notch_is_emitted_only_when_asked(sched):
    plain = project_from_dict(_demo_dict())
    assert plan_for_project(plain, schedule=sched).notch is None
    with_key = project_from_dict(_demo_dict(notch={"depth_db": 60.0}))
    assert plan_for_project(with_key, schedule=sched).notch is not None
    forced_off = project_from_dict(_demo_dict(notch={"depth_db": 60.0}, firmware={"notch": False}))
    assert plan_for_project(forced_off, schedule=sched).notch is None


def test_q15_notch_escalates_to_q31_or_is_refused_with_numbers(sched):
    # The demo's low mode (~0.2 Hz at a 5 ms cycle) cannot be held in Q15 coefficients: the zero angle
    # 2 pi f T ~ 0.006 rad is below the Q15 grid's resolution (Oppenheim & Schafer 2010, 6.8).
    p = project_from_dict(_demo_dict(firmware={"notch": True}))
    plan = plan_for_project(p, schedule=sched)
    assert plan.fmt == "q31" and plan.fmt_requested == "q15"
    assert "Using Q31" in plan.format_reason and "Hz" in plan.format_reason
    m = json.loads(render_files(plan)["manifest.json"])
    assert m["format"] == "q31" and m["notch"]["format"] == "q31"
    assert all(abs(s["relative_shift"]) <= 0.01 for s in m["notch"]["sections"])
    # the default notch is as wide as the mode's band: the low one is lost in Q15, the high one moves
    lost_and_moved = r"notch 1 at 0\.19\d* Hz is lost.*notch 2 moves from 0\.6\d* Hz to .* Hz \(-\d"
    with pytest.raises(EmitError, match=lost_and_moved):
        plan_for_project(p, schedule=sched, fmt="q15")  # an explicit format is never changed
    no_escalation = project_from_dict(_demo_dict(firmware={"notch": True, "escalate_to_q31": False}))
    with pytest.raises(EmitError, match="escalate_to_q31"):
        plan_for_project(no_escalation, schedule=sched)


def test_schedule_too_heavy_for_the_accumulator_ring_is_refused(demo_project):
    # 300 rows of positive amplitudes: under arbitrary switching one slot can gather a part of each,
    # 300 x full scale, beyond the Q15 ring's 256 (stillhook.firmware.shaper_model.abs_sum_limit)
    with pytest.raises(EmitError, match=r"sum \|A\| = 300 x full scale over 300 rows .* at most 255\.99"):
        plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 300))


def test_thresholds_follow_the_row_rules():
    rows = np.array([1.0, 2.0, 4.0])
    assert lookup_thresholds(rows, "nearest", 0.001).tolist() == [1500, 3000]
    assert lookup_thresholds(rows, "at_or_below", 0.001).tolist() == [2000, 4000]
    assert lookup_thresholds(np.array([1.0, 1.0007]), "nearest", 0.001).tolist() == [1001]  # ceil of 1000.35
    with pytest.raises(ConfigError, match="allowed"):
        lookup_thresholds(rows, "linear", 0.001)


def test_rows_closer_than_one_count_are_refused(demo_project, sched):
    p = project_from_dict(_demo_dict(firmware={"rope_length_lsb_m": 1.0}))
    with pytest.raises(EmitError, match="closer than one input count"):
        plan_for_project(p, schedule=sched)


def test_bad_prefix_is_refused(demo_project, sched):
    # C reserves _X and __x names (ISO/IEC 9899:1999, 7.1.3); keywords; the runtime's own shk_* file names
    for bad in ("9lives", "shk_x", "has-dash", "", "shk", "SHKa", "_x", "__x", "_Bool", "int", "static", "bool"):
        with pytest.raises(ConfigError, match="prefix"):
            plan_for_project(demo_project, schedule=sched, prefix=bad)


def test_cli_error_is_one_line_and_writes_nothing(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text("[rig]\nhook_mass_kg = 1.0\n")
    out = tmp_path / "out"
    assert main(["emit", str(bad), "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("stillhook: error:")
    assert not out.exists()


def test_cli_emits_the_minimal_project(minimal_project_file, tmp_path, capsys):
    # a project with only [rig] and [drive]: the default design is a length-scheduled two-mode shaper
    out = tmp_path / "fw"
    assert main(["emit", str(minimal_project_file), "--out", str(out), "--prefix", "hoist1", "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    m = json.loads((out / "manifest.json").read_text())
    assert report["format"] == m["format"] == "q15" and report["rows"] == len(m["shaper_rows"]) >= 2
    lengths = [r["rope_length_m"] for r in m["shaper_rows"]]
    assert lengths[0] == pytest.approx(2.0) and lengths[-1] == pytest.approx(8.0)
    assert (out / "hoist1_tables.h").is_file() and (out / "hoist1_selftest.c").is_file()
    project = load_project(minimal_project_file)
    assert m["input_digest_sha256"] == project.digest


def test_quantized_default_design_keeps_the_tolerance_over_the_envelope(minimal_project_file):
    # The default design promises residual payload sway within [design] tolerance_pct (5 %) of unshaped over
    # rope range x payload range. Rebuild each row from the emitted INTEGERS (amplitude / 2^15 at delay x
    # cycle), pick rows exactly as the C lookup does, and evaluate the residual vibration V of Singer &
    # Seering (ASME JDSMC 112(1), 1990) weighted by each mode's payload participation (the project's
    # residual-ratio definition, stillhook.shaping.residual_map) on a grid denser than the rows.
    from stillhook.shaping.residual_map import residual_ratio

    project = load_project(minimal_project_file)
    plan = plan_for_project(project)
    T = plan.cycle_s
    shapers = [Shaper(np.array(r.delays_cycles) * T, np.array(r.amplitudes) / 2.0**15) for r in plan.rows]
    env = project.envelope
    Ls = np.linspace(*env.rope_length_range_m, 97)
    ms = np.linspace(*env.payload_mass_range_kg, 25)
    rows, status = plan.schedule.lookup(plan.schedule.counts(Ls))
    assert np.all(status == 0)
    worst = max(float(residual_ratio(env, shapers[k], [L], ms)[0].max()) for L, k in zip(Ls, rows, strict=True))
    assert worst <= project.design["tolerance_pct"] / 100.0
    assert len(plan.rows) >= 2  # length-scheduled


def test_cffi_declarations_are_read_from_the_runtime_headers():
    from stillhook.firmware.build import runtime_cdef

    text = runtime_cdef()
    assert "#" not in text and "static inline" not in text and "SHK_STATIC_ASSERT" not in text
    for name in ("shk_schedule_lookup(", "shk_shaper_q15_step(", "shk_shaper_q31_init(", "shk_biquad_q31_block("):
        assert name in text
