"""A change the caller has already checked on a version is not checked again on that version,
and is checked as usual on any other (the web's analysis replays steps as the check would).

Reference: a counting Check injected into the store, and the store's own replay_check.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from rankscope.store import Applied, Change, Conflict, Store
from rankscope.store.check import replay_check
from rankscope.tables.errors import InputError
from tests.store.data import csv_bytes


def test_check_skipped_only_on_the_version_it_was_made_on(tmp_path: Path) -> None:
    calls: list[str] = []

    def counting(table, before, change) -> None:
        calls.append(change.change_id)
        replay_check(table, before, change)

    with Store(tmp_path / "s", check=counting) as store:
        sid = store.create_session(csv_bytes(1), "t.csv").session_id
        drop = Change("step", {"step": "drop", "column": "a"}, "one")
        assert store.apply_change(sid, 0, drop, checked_on=0) == Applied(1, "one")
        assert calls == []
        # Checked on version 1, landing on 1 after a rebase from 0: not checked again.
        late = Change("step", {"step": "drop", "column": "b"}, "two")
        assert store.apply_change(sid, 0, late, checked_on=1) == Applied(2, "two",
                                                                         rebased=True)
        assert calls == []
        # Checked on an older version than the one it lands on: the store checks.
        again = Change("step", {"step": "drop", "column": "a"}, "three")
        assert isinstance(store.apply_change(sid, 1, again, checked_on=1), Conflict)
        assert calls == ["three"]
        # Without checked_on, as before: a step that does not build is refused.
        with pytest.raises(InputError):
            store.apply_change(sid, 2, Change("step", {"step": "drop", "column": "nope"}, "4"))
        assert calls == ["three", "4"]
