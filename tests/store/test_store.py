"""The session store: create, load, rename, delete; tables kept once by hash; tokens; history.

Each check names its outside reference: pandas and hashlib on the same bytes, SQLite read
directly, the snapshot model of undo, or the recipe replay.
"""

from __future__ import annotations

import hashlib
import io
import os
import sqlite3
import time
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from rankscope.design.recipe import Recipe
from rankscope.store import Applied, Change, Conflict, SessionNotFound, Store
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes
from tests.store.data import TOGGLED, SnapshotUndo, csv_bytes


def step(kind: str, column: str, cid: str | None = None) -> Change:
    return Change("step", {"step": kind, "column": column}, cid)


def test_create_load_rename_list(store: Store) -> None:
    data = csv_bytes(1)
    made = store.create_session(data, "C:\\Users\\me\\field data.csv")
    state = store.load(made.session_id)
    # Reference: pandas reading the same bytes gives the same values.
    raw = pd.read_csv(io.BytesIO(data))
    assert state.table.n_rows == len(raw)
    assert state.table.columns == list(raw.columns)
    pd.testing.assert_series_equal(state.table.frame["a"].reset_index(drop=True),
                                   raw["a"].astype("float64"), check_names=False)
    # Reference: the reader on the same bytes is what the session held before the store.
    fresh = read_bytes(data, "field data.csv")
    pd.testing.assert_frame_equal(state.table.frame, fresh.frame)
    assert state.table.kinds == fresh.kinds
    assert (state.filename, state.title, state.version) == ("field data.csv", "field data", 0)
    assert state.recipe == Recipe() and state.history == [] and state.pins == []
    assert store.rename(made.session_id, "  Trial   2 ") == "Trial 2"
    assert store.load(made.session_id).title == "Trial 2"
    other = store.create_session(csv_bytes(2), "other.csv")
    store.apply_change(made.session_id, 0, step("drop", "a"))
    # Reference: the session changed last comes first.
    assert [i.session_id for i in store.list_recent()] == [made.session_id, other.session_id]
    with pytest.raises(InputError):
        store.rename(made.session_id, "   ")
    with pytest.raises(SessionNotFound):
        store.rename("no-such-id", "x")


def test_reopened_store_sees_everything(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        made = s.create_session(csv_bytes(3), "t.csv")
        s.apply_change(made.session_id, 0, step("drop", "b", "x1"))
        s.add_pin(made.session_id, {"coefficients": {"a": 1.5}}, name="first",
                  meta={"rank": 4})
        s.update_settings(made.session_id, {"heatmap": "spearman"})
    with Store(tmp_path) as again:
        state = again.load(made.session_id)
    # Reference: what was written before the store was closed.
    assert state.recipe == Recipe([{"step": "drop", "column": "b"}])
    assert [(p.name, p.fit, p.meta, p.version) for p in state.pins] == \
        [("first", {"coefficients": {"a": 1.5}}, {"rank": 4}, 1)]
    assert state.settings == {"heatmap": "spearman"}


def test_tables_kept_once_by_hash_and_removed_with_last_session(store: Store) -> None:
    data = csv_bytes(4)
    one = store.create_session(data, "a.csv")
    two = store.create_session(data, "b.csv")
    files = sorted(p.name for p in store.tables_dir.iterdir())
    # Reference: hashlib's SHA-256 of the uploaded bytes names the single file.
    assert files == [hashlib.sha256(data).hexdigest() + ".parquet"]
    assert store.load(two.session_id).table.source == "b.csv"
    store.delete(one.session_id)
    assert len(list(store.tables_dir.iterdir())) == 1  # still used by the other session
    with pytest.raises(SessionNotFound):
        store.load(one.session_id)
    store.delete(two.session_id)
    assert list(store.tables_dir.iterdir()) == []
    # Reference: SQLite itself, read directly: no rows are left behind.
    con = sqlite3.connect(store.db_path)
    counts = [con.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0]
              for t in ("sessions", "tables", "changes", "pins")]
    con.close()
    assert counts == [0, 0, 0, 0]
    again = store.create_session(data, "a.csv")  # the same content after its file was removed
    assert store.load(again.session_id).table.n_rows == 30


def test_tokens_hashed_and_checked(store: Store) -> None:
    made = store.create_session(csv_bytes(5), "t.csv")
    other = store.create_session(csv_bytes(6), "u.csv")
    assert store.access(made.session_id, made.edit_token) == "edit"
    assert store.access(made.session_id, made.view_token) == "view"
    for wrong in ("", None, made.edit_token[:-1], other.edit_token, made.session_id):
        assert store.access(made.session_id, wrong) is None
    assert store.access("no-such-id", made.edit_token) is None
    # Reference: the database file read directly holds hashlib's SHA-256 of each token,
    # never a token itself.
    con = sqlite3.connect(store.db_path)
    row = con.execute("SELECT edit_hash, view_hash FROM sessions WHERE id = ?",
                      (made.session_id,)).fetchone()
    con.close()
    assert row == (hashlib.sha256(made.edit_token.encode()).hexdigest(),
                   hashlib.sha256(made.view_token.encode()).hexdigest())
    con = sqlite3.connect(store.db_path)
    con.execute("PRAGMA wal_checkpoint(FULL)")
    con.close()
    raw = store.db_path.read_bytes()
    assert made.edit_token.encode() not in raw and made.view_token.encode() not in raw
    # Reference: secrets.token_urlsafe(n) gives about 4n/3 characters.
    assert len(made.session_id) >= 21 and len(made.edit_token) >= 42


def test_idempotent_retries(store: Store) -> None:
    sid = store.create_session(csv_bytes(7), "t.csv").session_id
    first = store.apply_change(sid, 0, step("drop", "a", "same-id"))
    again = store.apply_change(sid, 0, step("drop", "a", "same-id"))
    later = store.apply_change(sid, 5 - 4, step("restore", "a", "next-id"))
    retried = store.apply_change(sid, 0, step("drop", "a", "same-id"))
    # Reference: "at most once" — a retried id returns its first outcome, stored once.
    assert first == Applied(1, "same-id")
    assert again == retried == Applied(1, "same-id", repeated=True)
    assert later == Applied(2, "next-id")
    assert [e.change_id for e in store.load(sid).history] == ["same-id", "next-id"]
    with pytest.raises(InputError, match="already used"):
        store.apply_change(sid, 2, step("drop", "b", "same-id"))


def test_refusals_are_final_for_their_id(store: Store) -> None:
    sid = store.create_session(csv_bytes(7), "t.csv").session_id
    store.apply_change(sid, 0, step("drop", "a", "alice"))
    refused = store.apply_change(sid, 0, step("drop", "a", "bob"))
    store.apply_change(sid, 1, step("restore", "a", "carol"))
    # Now Bob's drop would make sense again, but he was told "refused": a retry of his id
    # (say, after a lost reply) gets the same answer instead of a surprise.
    # Reference: "at most once, same answer" for retried requests.
    assert isinstance(refused, Conflict)
    assert store.apply_change(sid, 0, step("drop", "a", "bob")) == refused
    with pytest.raises(InputError, match="nothing to redo"):
        store.apply_change(sid, 2, Change("redo", {}, "dave"))
    store.apply_change(sid, 2, Change("undo", {}, "erin"))
    with pytest.raises(InputError, match="nothing to redo"):
        store.apply_change(sid, 2, Change("redo", {}, "dave"))
    assert [e.change_id for e in store.load(sid).history] == ["alice", "carol", "erin"]


def test_a_refusal_made_outside_the_store_is_kept_for_its_id(store: Store) -> None:
    sid = store.create_session(csv_bytes(7), "t.csv").session_id
    assert store.answered(sid, step("drop", "a", "frank")) is None
    # The caller (the web analysis) found the change wrong on version 0 and says so.
    with pytest.raises(InputError, match="cannot be analysed") as first:
        store.refuse(sid, 0, step("drop", "a", "frank"), InputError("cannot be analysed"))
    store.apply_change(sid, 0, step("drop", "b", "gina"))
    # Reference: "at most once, same answer": the retry is refused in the same words even
    # though the drop would be saved on top of version 1 now, and nothing is saved.
    for ask in (lambda: store.answered(sid, step("drop", "a", "frank")),
                lambda: store.apply_change(sid, 0, step("drop", "a", "frank"))):
        with pytest.raises(InputError) as again:
            ask()
        assert again.value.message == first.value.message
    assert [e.change_id for e in store.load(sid).history] == ["gina"]
    # A saved id keeps its first answer too: a later refusal cannot replace it.
    assert store.refuse(sid, 1, step("drop", "b", "gina"), InputError("no")) == \
        Applied(1, "gina", repeated=True)


def test_stale_change_applied_on_top_when_it_still_applies(store: Store) -> None:
    sid = store.create_session(csv_bytes(8), "t.csv").session_id
    assert store.apply_change(sid, 0, step("drop", "a", "alice")) == Applied(1, "alice")
    # Bob still sees version 0; dropping another column still makes sense after Alice's.
    bob = store.apply_change(sid, 0, step("drop", "b", "bob"))
    assert bob == Applied(2, "bob", rebased=True)
    # Reference: the recipe replay of both steps in the order saved.
    assert store.load(sid).recipe == Recipe([{"step": "drop", "column": "a"},
                                             {"step": "drop", "column": "b"}])


def test_stale_change_refused_when_it_no_longer_applies(store: Store) -> None:
    sid = store.create_session(csv_bytes(9), "t.csv").session_id
    store.apply_change(sid, 0, step("drop", "a", "alice"))
    bob = store.apply_change(sid, 0, step("drop", "a", "bob"))
    # Reference: the recipe's own rule (a column cannot be dropped twice), told to Bob.
    assert isinstance(bob, Conflict)
    assert bob.version == 1 and bob.base_version == 0
    assert "changed since version 0" in bob.message and "already dropped" in bob.message
    # A stale undo is refused too: it would take back Alice's change, which Bob never saw.
    undo = store.apply_change(sid, 0, Change("undo", {}, "bob-undo"))
    assert isinstance(undo, Conflict) and "undo" in undo.message
    assert [e.change_id for e in store.load(sid).history] == ["alice"]
    # A change that is wrong on the state its sender saw is an input error, not a conflict.
    with pytest.raises(InputError, match="already dropped"):
        store.apply_change(sid, 1, step("drop", "a", "carol"))
    with pytest.raises(InputError, match="no column"):
        store.apply_change(sid, 1, step("drop", "nope", "dave"))
    with pytest.raises(InputError, match="no version 7"):
        store.apply_change(sid, 7, step("drop", "b"))


def test_bad_changes_refused_and_nothing_saved(store: Store) -> None:
    sid = store.create_session(csv_bytes(10), "t.csv").session_id
    bad = [Change("paint", {}), Change("step", {"step": "drpo", "column": "a"}),
           Change("keep", {"column": ""}), Change("ridge", {"penalty": -1}),
           Change("undo", {"x": 1}), Change("undo", {}), Change("keep", {"column": "zz"}),
           Change("step", {"step": "drop", "column": "a"}, "x" * 101)]
    for change in bad:
        with pytest.raises(InputError):
            store.apply_change(sid, 0, change)
    with pytest.raises(InputError):
        store.apply_change(sid, -1, step("drop", "a"))
    assert store.load(sid).version == 0


def test_keep_and_ridge_ride_in_the_history(store: Store) -> None:
    sid = store.create_session(csv_bytes(11), "t.csv").session_id
    store.apply_change(sid, 0, Change("keep", {"column": "b"}))
    store.apply_change(sid, 1, Change("keep", {"column": "a"}))
    store.apply_change(sid, 2, Change("ridge", {"penalty": 0.5}))
    state = store.load(sid)
    # Reference: "keep this one first" puts the latest choice in front.
    assert (state.keep, state.ridge) == (["a", "b"], 0.5)
    store.apply_change(sid, 3, Change("undo"))
    assert store.load(sid).ridge is None


def test_pins_and_settings(store: Store) -> None:
    sid = store.create_session(csv_bytes(12), "t.csv").session_id
    p1 = store.add_pin(sid, {"r_squared": 0.5})
    p2 = store.add_pin(sid, {"r_squared": float("nan")}, name="odd")
    assert (p1.pin_id, p1.name, p2.pin_id) == (1, "Fit 1", 2)
    store.remove_pin(sid, 1)
    pins = store.load(sid).pins
    assert [p.name for p in pins] == ["odd"]
    with pytest.raises(InputError):
        store.remove_pin(sid, 1)
    assert store.update_settings(sid, {"heatmap": "pearson", "open": ["vif"]}) == \
        {"heatmap": "pearson", "open": ["vif"]}
    assert store.update_settings(sid, {"open": None}) == {"heatmap": "pearson"}
    with pytest.raises(InputError):
        store.update_settings(sid, {"bad": float("inf")})


def test_bad_upload_saves_nothing(store: Store) -> None:
    with pytest.raises(InputError):
        store.create_session(b"\x89PNG\r\n\x1a\n" + bytes(40), "photo.csv")
    assert store.list_recent() == [] and list(store.tables_dir.iterdir()) == []


def test_journal_and_sync_modes(store: Store) -> None:
    # Reference: SQLite's numbering of synchronous (0 OFF, 1 NORMAL, 2 FULL) and its own
    # report of the journal mode, read through a connection rankscope did not set up.
    assert store._con().execute("PRAGMA synchronous").fetchone()[0] == 2
    con = sqlite3.connect(store.db_path)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    con.close()


def test_sweep_removes_only_old_leftovers(store: Store) -> None:
    made = store.create_session(csv_bytes(15), "t.csv")
    used = next(store.tables_dir.iterdir())
    orphan = store.tables_dir / ("0" * 64 + ".parquet")
    temp = store.tables_dir / ".incoming-abc.parquet"
    fresh = store.tables_dir / ("1" * 64 + ".parquet")
    for p in (orphan, temp, fresh):
        p.write_bytes(b"x")
    old = time.time() - 2 * 3600
    for p in (used, orphan, temp):
        os.utime(p, (old, old))
    removed = store.sweep()
    # Reference: the folder listing; the session's file and a just-written one stay.
    assert sorted(removed) == sorted([orphan, temp])
    assert sorted(store.tables_dir.iterdir()) == sorted([used, fresh])
    assert store.load(made.session_id).table.n_rows == 30


def test_missing_table_file_is_a_clear_error(store: Store) -> None:
    made = store.create_session(csv_bytes(13), "t.csv")
    for p in store.tables_dir.iterdir():
        p.unlink()
    fresh = Store(store.root)  # no cached table
    with pytest.raises(InputError, match="missing"):
        fresh.load(made.session_id)
    fresh.close()


ACTIONS = st.lists(
    st.one_of(st.just(("undo",)), st.just(("redo",)),
              st.tuples(st.just("edit"), st.sampled_from(TOGGLED))),
    max_size=25)


@given(actions=ACTIONS)
def test_history_replay_equals_snapshot_model(tmp_path_factory: pytest.TempPathFactory,
                                              actions: list[tuple]) -> None:
    with Store(tmp_path_factory.mktemp("h")) as store:
        sid = store.create_session(csv_bytes(14), "t.csv").session_id
        model = SnapshotUndo()
        version = 0
        for action in actions:
            if action[0] == "edit":
                # Valid on any state: a scaled copy of a table column, under a fresh name.
                item = {"step": "multiply", "column": action[1], "by": 2, "keep": True,
                        "name": f"{action[1]}{version}"}
                model.edit(item)
                out = store.apply_change(sid, version, Change("step", item))
            else:
                moved = model.undo() if action[0] == "undo" else model.redo()
                if not moved:
                    with pytest.raises(InputError, match="nothing to"):
                        store.apply_change(sid, version, Change(action[0]))
                    continue
                out = store.apply_change(sid, version, Change(action[0]))
            assert isinstance(out, Applied)
            version = out.version
        state = store.load(sid)
        # Reference: the snapshot model of undo (tests/store/data.py).
        assert state.recipe == Recipe(model.current)
        assert state.position == model.at and len(state.timeline) == len(model.states) - 1
        # The history is append-only: one entry per accepted action, versions 1..n.
        assert [e.version for e in state.history] == list(range(1, version + 1))
