"""A session's factor bytes are saved with it in one transaction, come back unchanged after the
store is opened again, and go with the session when it is deleted."""

from __future__ import annotations

from pathlib import Path

from rankscope.store import Store
from tests.store.data import csv_bytes


def test_factor_bytes_last_and_leave_with_their_session(store: Store, tmp_path: Path) -> None:
    blob = bytes(range(256)) * 40  # opaque to the store: any bytes, NULs included
    made = store.create_session(csv_bytes(), "a.csv", factor=blob)
    plain = store.create_session(csv_bytes(seed=1), "b.csv")
    root = store.root
    store.close()
    again = Store(root)
    try:
        # Reference: the bytes given at creation.
        assert again.load_factor(made.session_id) == blob
        assert again.load_factor(plain.session_id) is None
        again.delete(made.session_id)
        assert again.load_factor(made.session_id) is None
    finally:
        again.close()
