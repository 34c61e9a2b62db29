"""The Analyst's cache of recent analyses: kept by weight with a floor on their number, least
recently used dropped first, its running total equal to the sum of what it holds.

Reference: the weights summed by hand over the entries left.
"""

from __future__ import annotations

from rankscope.web.recent import CELL_CEILING, Recent, cells


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


def test_very_large_entries_give_way_below_the_floor() -> None:
    """Analyses of wide designs: the floor of twelve gives way above the ceiling, down to
    the current entry and the one before it."""
    cache: Recent[str, int] = Recent(lambda w: w, floor=12, budget=100, ceiling=1000)
    for k in range(5):
        cache[f"w{k}"] = 400  # 2,000 > ceiling after the third
    assert list(cache) == ["w3", "w4"] and cache.total == 800
    cache["w5"] = 5000  # heavier than the ceiling alone: still two kept
    assert list(cache) == ["w4", "w5"] and cache.total == 5400
    # the default ceiling holds two analyses of 2,000 columns, eight of 1,000
    assert 2 * cells(2000) <= CELL_CEILING < 3 * cells(2000)
    assert 8 * cells(1000) <= CELL_CEILING < 9 * cells(1000)
