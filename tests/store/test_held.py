"""Tables held in memory: a budget in bytes, one copy per content whatever the file name, and
a table larger than the budget still served.

References: pandas' own count of a frame's bytes (DataFrame.memory_usage(deep=True)), the
reads counted at the loader, object identity (`is`), and the system's page count for the
default (os.sysconf).
"""

from __future__ import annotations

import gc
import os
import threading
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from rankscope.store import Store
from rankscope.store.held import FALLBACK_BUDGET, MEMORY_SHARE, HeldTables, default_budget
from rankscope.tables.table import Table
from tests.store.data import csv_bytes


def random_table(seed: int, rows: int = 1000) -> Table:
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({"a": rng.normal(size=rows), "b": rng.normal(size=rows)})
    return Table(frame, {"a": "numeric", "b": "numeric"}, f"t{seed}.csv", ["a note"])


class Loads:
    """A loader per key that counts how often each key was read."""

    def __init__(self) -> None:
        self.count: dict[str, int] = {}

    def __call__(self, key: str, seed: int):
        def load() -> Table:
            self.count[key] = self.count.get(key, 0) + 1
            return random_table(seed)
        return load


def test_budget_in_bytes_drops_least_recently_used() -> None:
    size = int(random_table(0).frame.memory_usage(index=True, deep=True).sum())
    held = HeldTables(budget=2 * size + size // 2)  # room for two, not three
    loads = Loads()
    a = held.get("A", "a.csv", loads("A", 1))
    held.get("B", "b.csv", loads("B", 2))
    assert held.get("A", "a.csv", loads("A", 1)) is a  # A is now the most recent
    held.get("C", "c.csv", loads("C", 3))  # over the budget: B, the least recent, goes
    assert len(held) == 2 and held.total == 2 * size <= held.budget
    del a
    gc.collect()  # nothing else holds B or A's old object now
    held.get("A", "a.csv", loads("A", 1))
    held.get("B", "b.csv", loads("B", 2))
    assert loads.count == {"A": 1, "B": 2, "C": 1}


def test_same_content_under_other_names_is_held_once(store: Store) -> None:
    data = csv_bytes(4)
    one = store.create_session(data, "north.csv")
    two = store.create_session(data, "copy of north.csv")
    first, second = store.load(one.session_id).table, store.load(two.session_id).table
    assert first.frame is second.frame and len(store.tables) == 1
    # Each session keeps its own file name for messages, and its own Table object.
    assert (first.source, second.source) == ("north.csv", "copy of north.csv")
    assert store.load(one.session_id).table is first
    assert store.load(two.session_id).table is second
    assert store.tables.total == int(first.frame.memory_usage(index=True, deep=True).sum())


def test_table_larger_than_the_budget_still_works(tmp_path: Path) -> None:
    with Store(tmp_path / "data", table_memory=1) as store:
        big = store.create_session(csv_bytes(1), "big.csv")
        table = store.load(big.session_id).table
        assert table.n_rows == 30 and store.tables.total > store.tables.budget
        assert store.load(big.session_id).table is table  # the one in use stays held
        other = store.create_session(csv_bytes(2), "other.csv")
        assert store.load(other.session_id).table.n_rows == 30
        assert len(store.tables) == 1  # the larger one gave way to the one now in use
        # Still in use here, so it comes back as the same object, not as a second copy.
        assert store.load(big.session_id).table is table


def test_a_dropped_table_still_in_use_is_not_read_again() -> None:
    held = HeldTables(budget=1)
    loads = Loads()
    kept = held.get("A", "a.csv", loads("A", 1))
    held.get("B", "b.csv", loads("B", 2))  # drops A from the budget; `kept` still uses it
    same_name = held.get("A", "a.csv", loads("A", 1))
    other_name = held.get("A", "renamed.csv", loads("A", 1))
    assert same_name is kept and other_name.frame is kept.frame and loads.count["A"] == 1


def test_deleted_content_leaves_memory(store: Store) -> None:
    made = store.create_session(csv_bytes(5), "gone.csv")
    store.load(made.session_id)
    assert len(store.tables) == 1
    store.delete(made.session_id)
    assert len(store.tables) == 0 and store.tables.total == 0


def test_default_budget_is_a_share_of_physical_memory() -> None:
    try:
        total = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (AttributeError, ValueError, OSError):
        assert default_budget() == FALLBACK_BUDGET
        return
    assert default_budget() == total // MEMORY_SHARE
    assert HeldTables().budget == default_budget()


@pytest.mark.parametrize("budget", [0, 10**12])
def test_every_budget_serves_the_table_asked_for(budget: int) -> None:
    held = HeldTables(budget=budget)
    loads = Loads()
    for key, seed in [("A", 1), ("B", 2), ("A", 1)]:
        table = held.get(key, f"{key}.csv", loads(key, seed))
        pd.testing.assert_frame_equal(table.frame, random_table(seed).frame)


def test_threads_asking_at_once_get_one_copy() -> None:
    held = HeldTables()
    loads = Loads()
    start = threading.Barrier(8)

    def ask(i: int) -> Table:
        start.wait()
        return held.get("A", f"name{i % 2}.csv", loads("A", 1))

    with ThreadPoolExecutor(8) as pool:
        tables = list(pool.map(ask, range(8)))
    assert len({id(t.frame) for t in tables}) == 1 and len(held) == 1
    assert len({id(t) for t in tables}) == 2  # one Table per file name
