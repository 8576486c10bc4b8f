"""Figures: data builders, rendering of every kind, deterministic PNG and SVG bytes."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from stillhook.errors import ConfigError
from stillhook.notch.design import notch_for_project
from stillhook.report import figure_data as plot_data
from stillhook.report import figures as plots
from stillhook.shaping.closed_forms import zvd
from stillhook.shaping.cycle_grid import to_cycle_grid
from stillhook.study.sweep import sweep_project


@pytest.fixture(scope="module")
def notch(demo_project):
    return notch_for_project(demo_project)


@pytest.fixture(scope="module")
def figures(demo_project, notch):
    T = demo_project.drive["cycle_s"]
    f1 = demo_project.envelope.nominal_rig.modes()[0].frequency_hz
    shaper = to_cycle_grid(zvd(f1), T, freqs_hz=[f1])
    sweep = sweep_project(demo_project, grid=(5, 4), keys=("unshaped", "notch"), notch=notch, check=False)
    return {
        "sensitivity": plot_data.sensitivity_data(demo_project, None, notch, n=200),
        "frequency_maps": plot_data.frequency_map_data(demo_project, 9, 7),
        "residual_maps": plot_data.residual_map_data(sweep),
        "time_response": plot_data.time_response_data(demo_project, {"shaper": ("ZVD", shaper)}, after_s=5.0),
    }


def test_figure_data_is_json_and_consistent(demo_project, figures):
    json.dumps(figures, allow_nan=False)
    fm = figures["frequency_maps"]
    assert len(fm["modes"]) == 2 and np.shape(fm["modes"][0]["frequency_hz"]) == (9, 7)
    # frequency maps against the frequency equation at one corner (Kibble & Berkshire 2004, via
    # stillhook.model.rig.mode_frequencies_rad_s): w^4 - (1+R)(g/L1 + g/L2) w^2 + (1+R) g^2/(L1 L2) = 0
    env = demo_project.envelope
    L1, L2, g, R = 1.2, env.rigging_length_m, env.gravity_m_s2, 70.0 / env.hook_mass_kg
    p, q = (1 + R) * (g / L1 + g / L2), (1 + R) * g * g / (L1 * L2)
    w_lo = math.sqrt((p - math.sqrt(p * p - 4 * q)) / 2)
    assert fm["modes"][0]["frequency_hz"][0][0] == pytest.approx(w_lo / (2 * math.pi), rel=1e-5)
    sens = figures["sensitivity"]
    assert sens["bands_hz"] == [list(b) for b in env.mode_bands_hz()]
    assert sens["curves"][0]["key"] == "notch" and max(sens["curves"][0]["residual_pct"]) <= 100.0 + 1e-9
    tr = figures["time_response"]
    assert [s["key"] for s in tr["series"]] == ["unshaped", "shaper"]
    assert all(len(s["payload_offset_m"]) == len(tr["t_s"]) for s in tr["series"])
    assert len(tr["t_s"]) <= plot_data.MAX_SERIES_POINTS
    rm = figures["residual_maps"]
    assert [m["key"] for m in rm["maps"]] == ["unshaped", "notch"]
    assert np.shape(rm["maps"][0]["residual_mm"]) == (5, 4)


def test_every_figure_renders_to_deterministic_png_and_svg(figures):
    first = plots.figure_files(figures, n_workers=2)  # drawn in two worker processes
    assert sorted(first) == sorted(f"{n}.{ext}" for n in figures for ext in ("png", "svg"))
    again = plots.figure_files({"frequency_maps": figures["frequency_maps"]})  # one figure again, here: same bytes
    assert again == {k: v for k, v in first.items() if k.startswith("frequency_maps.")}
    assert plots.figure_files(figures, n_workers=1) == first  # the bytes do not depend on the worker count
    for name, data in first.items():
        if name.endswith(".png"):
            assert data.startswith(b"\x89PNG") and b"Software" not in data
        else:
            text = data.decode("utf-8")
            assert text.lstrip().startswith("<?xml") and "<dc:date>" not in text and "Matplotlib" not in text


def test_unknown_kinds_and_formats_are_refused(figures):
    with pytest.raises(ConfigError, match="figure kind"):
        plots.render({"kind": "pie"})
    fig = plots.render(figures["frequency_maps"])
    with pytest.raises(ConfigError, match="figure format"):
        plots.figure_bytes(fig, "gif")


def test_residual_maps_need_a_grid(demo_project):
    r = sweep_project(demo_project, samples=4, keys=("unshaped",), check=False)
    with pytest.raises(ConfigError, match="grid"):
        plot_data.residual_map_data(r)
