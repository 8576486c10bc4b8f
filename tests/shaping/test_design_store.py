"""Designs kept on disk (shaping.design_store): made once, then loaded; unreadable files replaced; off when asked."""

from stillhook.shaping import design_store
from stillhook.shaping.closed_forms import zvd


def _maker(calls):
    def make():
        calls.append(1)
        return {"shaper": zvd(0.4), "note": "made"}
    return make


def test_a_design_is_made_once_then_loaded(monkeypatch, tmp_path):
    monkeypatch.setenv("STILLHOOK_DESIGN_CACHE", "on")
    monkeypatch.setenv("STILLHOOK_CACHE_DIR", str(tmp_path))
    calls = []
    first = design_store.load_or_make("design{project}", _maker(calls))
    second = design_store.load_or_make("design{project}", _maker(calls))
    assert calls == [1]
    assert second["shaper"] == first["shaper"] and second["note"] == "made"
    path = design_store.design_store_path("design{project}")
    assert path.is_file() and [p.name for p in path.parent.iterdir()] == [path.name]  # no temporary left
    # another key (other inputs) is another file
    assert design_store.design_store_path("design{other}") != path


def test_an_unreadable_file_is_replaced(monkeypatch, tmp_path):
    monkeypatch.setenv("STILLHOOK_DESIGN_CACHE", "on")
    monkeypatch.setenv("STILLHOOK_CACHE_DIR", str(tmp_path))
    path = design_store.design_store_path("k")
    path.parent.mkdir(parents=True)
    path.write_bytes(b"not a pickle")
    calls = []
    assert design_store.load_or_make("k", _maker(calls))["note"] == "made"
    assert calls == [1]
    assert design_store.load_or_make("k", _maker(calls))["note"] == "made"
    assert calls == [1]


def test_the_cache_can_be_turned_off(monkeypatch, tmp_path):
    monkeypatch.setenv("STILLHOOK_DESIGN_CACHE", "off")
    monkeypatch.setenv("STILLHOOK_CACHE_DIR", str(tmp_path))
    calls = []
    design_store.load_or_make("k", _maker(calls))
    design_store.load_or_make("k", _maker(calls))
    assert calls == [1, 1] and list(tmp_path.iterdir()) == []
