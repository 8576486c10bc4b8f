"""The curated top-level API and every subpackage's ``__all__`` resolve to real objects."""

from __future__ import annotations

import importlib

import pytest

import stillhook

SUBPACKAGES = ("model", "sim", "shaping", "notch", "feedback", "firmware", "study", "commission", "report", "cli")


@pytest.mark.parametrize("name", sorted(stillhook.__all__))
def test_every_top_level_name_resolves(name):
    value = getattr(stillhook, name)
    assert value is not None
    if name != "__version__":
        # the top level offers the stage module's own object, not a copy
        home = getattr(value, "__module__", None)
        if home is not None and home.startswith("stillhook"):
            assert getattr(importlib.import_module(home), name) is value


@pytest.mark.parametrize("package", SUBPACKAGES)
def test_every_subpackage_name_resolves(package):
    mod = importlib.import_module(f"stillhook.{package}")
    assert mod.__all__, f"stillhook.{package} offers nothing"
    for name in mod.__all__:
        assert getattr(mod, name) is not None, f"stillhook.{package}.{name}"


def test_unknown_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="no attribute 'no_such_name'"):
        stillhook.no_such_name  # noqa: B018


def test_api_covers_each_stage():
    wanted = {"load_project", "Rig", "Envelope", "simulate", "Shaper", "zv", "design_for_project",
              "design_notches", "write_emit", "compare_project", "sweep_project", "build_study", "run_demo",
              "StillhookError", "CAUTIONS"}
    assert wanted <= set(stillhook.__all__)
