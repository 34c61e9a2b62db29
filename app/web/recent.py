"""How many recent analyses and edit engines the Analyst keeps: by their size in design
columns, not by their number, so many sessions of a small table all stay warm.

Pure bookkeeping on an OrderedDict; computes and analyses nothing.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import TypeVar

K = TypeVar("K", bound=Hashable)
V = TypeVar("V")

#: Total (columns + 2)² over the entries kept; what an Analysis holds (correlations,
#: proportions, the factor) grows with it. 250,000 is 24 analyses of a 100-column design,
#: or over 800 of the demo table's 15 columns (about 10 kB each).
CELL_BUDGET = 250_000
#: Total weight above which the floor gives way too (down to KEPT_AT_LEAST entries): an
#: analysis of a 2,000-column design holds about 4,000,000 cells of proportions and
#: correlations as Python numbers (some hundreds of MB), so a floor of a dozen of them would
#: take gigabytes. 9,000,000 cells keeps two of those, eight of 1,000 columns.
CELL_CEILING = 9_000_000
#: Entries kept whatever they weigh: the current state and the one before it (undo).
KEPT_AT_LEAST = 2


def cells(columns: int) -> int:
    """The weight of an entry for a design of `columns` columns (the factor of [1, X, y])."""
    return (columns + 2) ** 2


class Recent(OrderedDict[K, V]):
    """A least-recently-used cache (move_to_end on a hit) that drops its oldest entries
    while it holds more than `floor` and they weigh more than `budget` together, and while
    it holds more than KEPT_AT_LEAST and they weigh more than `ceiling`: never fewer than
    `floor` unless the entries are very large. Not thread-safe: callers hold their lock."""

    def __init__(self, weigh: Callable[[V], int], floor: int, budget: int = CELL_BUDGET,
                 ceiling: int = CELL_CEILING) -> None:
        super().__init__()
        self.weigh, self.floor, self.budget, self.ceiling = weigh, floor, budget, ceiling
        self.total = 0  # kept as entries come and go, so a store costs O(1) and not O(n)

    def __setitem__(self, key: K, value: V) -> None:
        if key in self:
            self.total -= self.weigh(super().__getitem__(key))
        super().__setitem__(key, value)
        self.total += self.weigh(value)
        while (len(self) > self.floor and self.total > self.budget) or (
                len(self) > KEPT_AT_LEAST and self.total > self.ceiling):
            self.popitem(last=False)

    def __delitem__(self, key: K) -> None:
        self.total -= self.weigh(super().__getitem__(key))
        super().__delitem__(key)

    def popitem(self, last: bool = True) -> tuple[K, V]:
        key, value = super().popitem(last)
        self.total -= self.weigh(value)
        return key, value

    def pop(self, key: K, *default: V) -> V:  # type: ignore[override]
        if key in self:
            value = super().pop(key)
            self.total -= self.weigh(value)
            return value
        return super().pop(key, *default)

    def clear(self) -> None:
        super().clear()
        self.total = 0
