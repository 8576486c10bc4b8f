"""The one design cache: bounded shelves, cleared by one public call, used by the band design."""

from __future__ import annotations

import pytest

from stillhook.shaping.band_design import band_shaper
from stillhook.shaping.design_cache import DESIGN_CACHE, DesignCache, clear_design_caches


def test_shelf_keeps_at_most_its_size_oldest_dropped_first():
    cache = DesignCache({"a": 2})
    calls = []
    for key in (1, 2, 1, 3):
        cache.get("a", key, lambda key=key: calls.append(key) or key * 10)
    assert calls == [1, 2, 3]  # 1 served from the shelf the second time
    assert cache.sizes() == {"a": 2}
    assert cache.lookup("a", 1) is None and cache.lookup("a", 3) == 30  # 1 was the oldest
    cache.clear("a")
    assert cache.sizes() == {"a": 0}


def test_emptied_designs_afresh_and_puts_the_cache_back():
    cache = DesignCache({"a": 4})
    cache.get("a", 1, lambda: "kept")
    with cache.emptied():
        assert cache.sizes() == {"a": 0}
        assert cache.get("a", 1, lambda: "fresh") == "fresh"
    assert cache.lookup("a", 1) == "kept"


def test_unknown_shelf_is_a_key_error():
    with pytest.raises(KeyError):
        DesignCache({"a": 1}).get("b", 0, lambda: 0)


def test_band_design_is_cached_and_cleared():
    with DESIGN_CACHE.emptied():  # the session's cached designs come back after the test
        first = band_shaper(0.2, 0.3, 0.05)
        assert DESIGN_CACHE.sizes()["band_design"] == 1
        assert band_shaper(0.2, 0.3, 0.05) is first  # same inputs, the stored shaper
        clear_design_caches()
        assert sum(DESIGN_CACHE.sizes().values()) == 0
        again = band_shaper(0.2, 0.3, 0.05)
        assert again is not first and again.duration_s == first.duration_s
