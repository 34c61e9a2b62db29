"""The Analyst's cache of recent analyses: kept by weight with a floor on their number, least
recently used dropped first, its running total equal to the sum of what it holds.

Reference: the weights summed by hand over the entries left.
"""

from __future__ import annotations

from rankscope.web.recent import Recent, cells


def test_small_entries_stay_many_and_large_ones_keep_the_floor() -> None:
    cache: Recent[str, int] = Recent(lambda w: w, floor=2, budget=100)
    for k in range(30):
        cache[f"s{k}"] = 3  # 30 small entries: 90 <= 100, all kept
    assert len(cache) == 30 and cache.total == 90
    cache.move_to_end("s0")  # a hit: s0 is now the most recent
    cache["big"] = 50  # over budget: the oldest go first, s0 stays
    assert "s0" in cache and "s1" not in cache
    assert cache.total == sum(cache.values()) <= 100
    cache["huge"] = 500  # heavier than the budget alone: the floor keeps two entries
    assert list(cache) == ["big", "huge"] and cache.total == 550


def test_replacing_popping_and_clearing_keep_the_total() -> None:
    cache: Recent[str, int] = Recent(lambda w: w, floor=1, budget=1000)
    cache["a"], cache["b"] = 10, 20
    cache["a"] = 5  # replaced, not added
    assert cache.total == 25
    del cache["b"]
    assert cache.pop("a") == 5 and cache.pop("zzz", None) is None and cache.total == 0
    cache["c"] = 7
    cache.clear()
    assert cache.total == 0 and not cache


def test_weight_of_a_design_is_its_factor() -> None:
    # The factor of [1, X, y] for p columns is (p + 2) × (p + 2).
    assert cells(15) == 17 * 17
