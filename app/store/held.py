"""The tables the store holds in memory: one copy per content, within a budget in bytes.

Bookkeeping only: reads no file (the store passes a loader) and knows no session or database.
"""

from __future__ import annotations

import os
import threading
import weakref
from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass, field

from rankscope.tables.table import Table

#: Bytes per MB in --table-memory-mb and in messages (decimal, as --max-upload-mb).
MB = 1_000_000
#: The budget when the computer's memory cannot be read: room for one table of a million
#: rows of 125 numeric columns (8 bytes a cell), or thousands of tables like the demo's.
FALLBACK_BUDGET = 1000 * MB
#: The share of physical memory held by default. The tables are only part of what a
#: serving process holds: reading an upload takes a few times the table's size for a
#: moment, and each open session keeps its analyses and edit engines (app/web/recent.py).
#: An eighth leaves room for those and for the user's other programs.
MEMORY_SHARE = 8


def default_budget() -> int:
    """An eighth of this computer's physical memory in bytes (FALLBACK_BUDGET where the
    system does not say, e.g. on Windows)."""
    try:
        total = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (AttributeError, ValueError, OSError):
        return FALLBACK_BUDGET
    return total // MEMORY_SHARE if total > 0 else FALLBACK_BUDGET


def size_of(table: Table) -> int:
    """The bytes a table's frame takes in memory, its strings and categories included."""
    return int(table.frame.memory_usage(index=True, deep=True).sum())


@dataclass
class _Held:
    """One content in memory: the table as first read, its size, and a Table per file
    name it was uploaded under (they share the frame; only the name in messages differs)."""

    table: Table
    size: int
    names: dict[str, Table] = field(default_factory=dict)


class HeldTables:
    """Tables in memory by content key, least recently used dropped first while they weigh
    more than `budget` bytes together; the one used last is always kept, however large
    (it is in memory while it is used anyway), so a table larger than the budget works.

    The same Table object comes back for the same content and file name while it is held,
    or while anyone still uses it after it was dropped (a weak map finds it), so callers
    may cache results by it, and a content is held once whatever its names. Thread-safe.
    """

    def __init__(self, budget: int | None = None) -> None:
        self.budget = default_budget() if budget is None else int(budget)
        self.total = 0
        self._held: OrderedDict[str, _Held] = OrderedDict()
        # Tables handed out and still in use somewhere, by (content key, file name).
        self._alive: weakref.WeakValueDictionary[tuple[str, str], Table] = \
            weakref.WeakValueDictionary()
        self._guard = threading.Lock()

    def __len__(self) -> int:
        return len(self._held)

    def get(self, key: str, name: str, load: Callable[[], Table]) -> Table:
        """The table of content `key` as uploaded under file name `name`; load() reads it
        (outside the lock) when no copy is in memory."""
        with self._guard:
            found = self._find(key, name)
        if found is not None:
            return found
        table = load()
        read = _Held(table, size_of(table))  # counted outside the lock
        with self._guard:
            found = self._find(key, name)  # another thread may have read it meanwhile
            if found is not None:
                return found
            self._admit(key, read)
            return self._named(key, name)

    def forget(self, key: str) -> None:
        """Drop a content (its file was deleted); a Table still in use elsewhere stays valid."""
        with self._guard:
            held = self._held.pop(key, None)
            if held is not None:
                self.total -= held.size
            for k in [k for k in self._alive if k[0] == key]:
                self._alive.pop(k, None)

    def _find(self, key: str, name: str) -> Table | None:
        """A table already in memory for the key (held, or still in use), or None."""
        if key not in self._held:
            alive = self._alive.get((key, name))
            if alive is None:
                # The same content under another name may still be in use: share its frame.
                alive = next((t for (k, _), t in list(self._alive.items()) if k == key), None)
            if alive is None:
                return None
            self._admit(key, _Held(alive, size_of(alive)))
        self._held.move_to_end(key)
        return self._named(key, name)

    def _named(self, key: str, name: str) -> Table:
        held = self._held[key]
        table = held.names.get(name) or self._alive.get((key, name))
        if table is None:
            base = held.table
            table = Table(base.frame, dict(base.kinds), name, list(base.notes))
        held.names[name] = table
        self._alive[(key, name)] = table
        return table

    def _admit(self, key: str, held: _Held) -> None:
        held.names[held.table.source] = held.table
        self._alive[(key, held.table.source)] = held.table
        self._held[key] = held
        self.total += held.size
        while len(self._held) > 1 and self.total > self.budget:
            _, dropped = self._held.popitem(last=False)
            self.total -= dropped.size
