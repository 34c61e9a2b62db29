"""The session store: sessions that outlast the server, kept in SQLite plus Parquet table files.

Saves and loads only; no linear algebra and no web. Changes are checked by an injected Check.
"""

from __future__ import annotations

import json
import os
import sqlite3
import threading
import time
from pathlib import Path, PurePath
from typing import Any

from rankscope.store import changes, db, files, pins, tokens
from rankscope.store.check import Check, replay_check
from rankscope.store.held import HeldTables
from rankscope.store.history import Change, checked, fingerprint, fold
from rankscope.store.pins import clean_text
from rankscope.store.records import (
    Applied,
    Conflict,
    Created,
    Pin,
    SessionInfo,
    SessionNotFound,
    SessionState,
)
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes
from rankscope.tables.table import Table

#: The environment variable that moves the data folder (tests, several installs).
ROOT_ENV = "RANKSCOPE_HOME"
DB_NAME = "sessions.sqlite3"
MAX_TITLE = 200
#: A leftover table file is removed by sweep only after this long (seconds), so a file
#: another process is about to register is never taken away from it.
SWEEP_AGE = 3600.0


def default_root() -> Path:
    """~/.rankscope, or the folder named by RANKSCOPE_HOME."""
    env = os.environ.get(ROOT_ENV)
    return Path(env).expanduser() if env else Path.home() / ".rankscope"


class Store:
    """Sessions in a data folder: sessions.sqlite3 and tables/<sha256>.parquet.

    One Store may be shared by threads (each gets its own connection); several processes
    may open the same folder (SQLite's locks keep them apart).
    check: decides whether an edit makes sense on the state it would land on (default:
    the recipe replays on the table).
    table_memory: bytes of tables kept in memory between requests, one copy per content
    whatever its file name (default: an eighth of the computer's memory; see held.py).
    """

    def __init__(self, root: str | os.PathLike | None = None, *, check: Check = replay_check,
                 table_memory: int | None = None) -> None:
        self.root = Path(root) if root is not None else default_root()
        self.tables_dir = self.root / "tables"
        self.db_path = self.root / DB_NAME
        try:
            # Owner-only: the folder holds people's uploaded tables.
            self.root.mkdir(parents=True, exist_ok=True, mode=0o700)
            self.tables_dir.mkdir(exist_ok=True, mode=0o700)
        except OSError as e:
            raise InputError(f"the data folder cannot be made ({e.strerror})", str(self.root),
                             "Choose another data folder") from e
        self._check = check
        self._local = threading.local()
        self._connections: list[sqlite3.Connection] = []
        self._guard = threading.Lock()
        self._session_locks: dict[str, threading.Lock] = {}
        self.tables = HeldTables(table_memory)
        db.ensure_schema(self._con(), self.db_path)

    # -- plumbing ------------------------------------------------------------------------

    def _con(self) -> sqlite3.Connection:
        con = getattr(self._local, "con", None)
        if con is None:
            con = db.connect(self.db_path)
            self._local.con = con
            with self._guard:
                self._connections.append(con)
        return con

    def close(self) -> None:
        """Close every connection this Store opened (in any thread)."""
        with self._guard:
            for con in self._connections:
                con.close()
            self._connections.clear()
        self._local = threading.local()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _lock(self, session_id: str) -> threading.Lock:
        with self._guard:
            return self._session_locks.setdefault(session_id, threading.Lock())

    def _table(self, key: str, filename: str, kinds: dict[str, str], notes: list[str]) -> Table:
        """The saved table, held in memory by content (the file never changes once
        written); the same Table object for the same session lets callers cache results
        by it."""
        return self.tables.get(key, filename, lambda: files.read_table_file(
            files.path_of(self.tables_dir, key), kinds, filename, notes))

    # -- sessions ------------------------------------------------------------------------

    def create_session(self, data: bytes, filename: str, *, title: str | None = None,
                       sheet: str | int | None = None, kinds: dict[str, str] | None = None,
                       table: Table | None = None, factor: bytes | None = None) -> Created:
        """Read the uploaded bytes (unless `table`, already read from exactly these bytes
        with these options, is given) and save a new session with an empty history.
        The table file is written once per content; the tokens are returned only here.
        factor: a reduced factor's bytes, saved with the session in the same transaction
        (load_factor gives them back)."""
        name = clean_text(PurePath(str(filename).replace("\\", "/")).name or "", "file name", 255)
        if table is None:
            table = read_bytes(data, name, sheet=sheet, kinds=kinds)
        sha, key = files.table_key(bytes(data), sheet, kinds)
        path = files.path_of(self.tables_dir, key)
        if not path.exists():
            files.write_table(path, table)  # outside the lock: it may take a while
        made = Created(tokens.new_id(), tokens.new_token(), tokens.new_token())
        title = clean_text(title if title is not None else (PurePath(name).stem or name), "title",
                      MAX_TITLE)
        now = time.time()
        con = self._con()
        with db.write(con):
            if not path.exists():
                # A delete of the last session using this content ran in between.
                files.write_table(path, table)
            con.execute(
                "INSERT OR IGNORE INTO tables (key, sha256, kinds, notes, n_rows, n_columns, "
                "created) VALUES (?, ?, ?, ?, ?, ?, ?)",
                (key, sha, json.dumps(table.kinds), json.dumps(table.notes), table.n_rows,
                 len(table.columns), now))
            con.execute(
                "INSERT INTO sessions (id, table_key, filename, title, edit_hash, view_hash, "
                "created, updated) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                (made.session_id, key, name, title, tokens.token_hash(made.edit_token),
                 tokens.token_hash(made.view_token), now, now))
            if factor is not None:
                con.execute("INSERT INTO factors (session_id, data) VALUES (?, ?)",
                            (made.session_id, bytes(factor)))
        return made

    def load_factor(self, session_id: str) -> bytes | None:
        """The factor bytes saved with the session (None: it has none)."""
        row = self._con().execute("SELECT data FROM factors WHERE session_id = ?",
                                  (session_id,)).fetchone()
        return None if row is None else bytes(row[0])

    def list_recent(self, limit: int = 20) -> list[SessionInfo]:
        """The most recently changed sessions first."""
        rows = self._con().execute(
            "SELECT s.id, s.title, s.filename, t.n_rows, t.n_columns, s.version, s.created, "
            "s.updated FROM sessions s JOIN tables t ON t.key = s.table_key "
            "ORDER BY s.updated DESC, s.created DESC LIMIT ?", (int(limit),)).fetchall()
        return [SessionInfo(*r) for r in rows]

    def rename(self, session_id: str, title: str) -> str:
        """Give the session a new title; returns it as saved (spaces tidied)."""
        title = clean_text(title, "title", MAX_TITLE)
        con = self._con()
        with db.write(con):
            cur = con.execute("UPDATE sessions SET title = ?, updated = ? WHERE id = ?",
                              (title, time.time(), session_id))
            if cur.rowcount == 0:
                raise SessionNotFound(session_id)
        return title

    def delete(self, session_id: str) -> None:
        """Delete the session with its history and pins; its table file goes too when no
        other session uses the same content."""
        con = self._con()
        key = None
        moved: Path | None = None
        with self._lock(session_id):
            try:
                with db.write(con):
                    row = con.execute("SELECT table_key FROM sessions WHERE id = ?",
                                      (session_id,)).fetchone()
                    if row is None:
                        raise SessionNotFound(session_id)
                    key = row[0]
                    con.execute("DELETE FROM sessions WHERE id = ?", (session_id,))
                    others = con.execute("SELECT COUNT(*) FROM sessions WHERE table_key = ?",
                                         (key,)).fetchone()[0]
                    if others == 0:
                        con.execute("DELETE FROM tables WHERE key = ?", (key,))
                        # Renamed under the write lock, so a new upload of the same content
                        # (which checks for the file under the same lock) writes it again.
                        moved = files.move_out(files.path_of(self.tables_dir, key))
            except BaseException:
                if moved is not None:
                    os.replace(moved, files.path_of(self.tables_dir, key or ""))
                raise
        with self._guard:
            self._session_locks.pop(session_id, None)
        if moved is not None:
            moved.unlink(missing_ok=True)
            self.tables.forget(key or "")

    def stamp(self, session_id: str) -> tuple[int, float] | None:
        """(version, time of the last change of any kind) or None when there is no such
        session: one indexed read, cheap enough for watchers to poll."""
        row = self._con().execute("SELECT version, updated FROM sessions WHERE id = ?",
                                  (session_id,)).fetchone()
        return None if row is None else (int(row[0]), float(row[1]))

    def load(self, session_id: str) -> SessionState:
        """Everything saved about the session, with its history folded into the recipe."""
        con = self._con()
        with db.read(con):
            row = con.execute(
                "SELECT s.title, s.filename, s.table_key, t.sha256, t.kinds, t.notes, "
                "s.version, s.settings, s.created, s.updated FROM sessions s "
                "JOIN tables t ON t.key = s.table_key WHERE s.id = ?", (session_id,)).fetchone()
            if row is None:
                raise SessionNotFound(session_id)
            entries = changes.entries_of(con, session_id)
            pins = con.execute(
                "SELECT pin_id, name, version, fit, meta, at FROM pins WHERE session_id = ? "
                "ORDER BY pin_id", (session_id,)).fetchall()
        title, filename, key, sha, kinds, notes, version, settings, created, updated = row
        notes = json.loads(notes)
        table = self._table(key, filename, json.loads(kinds), notes)
        state = fold(entries)
        return SessionState(
            session_id=session_id, title=title, filename=filename, table=table,
            table_sha256=sha, version=version, history=entries,
            timeline=[*state.in_force, *state.undone], position=len(state.in_force),
            recipe=state.recipe, keep=state.keep, ridge=state.ridge,
            pins=[Pin(i, n, v, json.loads(f), json.loads(m), at) for i, n, v, f, m, at in pins],
            settings=json.loads(settings), created=created, updated=updated, notes=notes)

    # -- changes -------------------------------------------------------------------------

    def apply_change(self, session_id: str, base_version: int, change: Change, *,
                     checked_on: int | None = None) -> Applied | Conflict:
        """Add a change made by someone looking at base_version.

        On the current version it is checked and saved. On an older one it is saved on top
        of the newer changes when it still makes sense there, else refused with a Conflict;
        undo and redo on an older version are always refused (they would act on a change
        their sender has not seen). Raises InputError for a change that is wrong on the very
        state its sender saw. With a change id, the answer is final: a retry of the same id
        gets the same answer (Applied with repeated=True, or the same refusal).
        checked_on: the version on which the caller has already checked the change (as the
        Check would); when it lands on that version, the Check is not run a second time.
        """
        if isinstance(base_version, bool) or not isinstance(base_version, int) \
                or not 0 <= base_version < 2**63:  # SQLite's INTEGER holds 64 bits
            raise InputError(f"a base version is a whole number of 0 or more, not "
                             f"{str(base_version)[:40]!r}", "base version",
                             "Send the version you loaded")
        keep_answer = change.change_id is not None
        change = checked(change)
        with self._lock(session_id):
            con = self._con()
            # Optimistic first: check without holding the write lock, which every session
            # shares; only if another process wrote meanwhile, check again under it.
            outcome = self._attempt(con, session_id, base_version, change, keep_answer, False,
                                    checked_on)
            if outcome is None:
                outcome = self._attempt(con, session_id, base_version, change, keep_answer,
                                        True, checked_on)
        assert outcome is not None
        if isinstance(outcome, changes.Refused):
            raise outcome.error()
        return outcome

    def answered(self, session_id: str, change: Change) -> Applied | Conflict | None:
        """The final answer already given to this change's id: Applied (repeated) or a
        Conflict, raised as InputError when it was refused; None when the id is new.
        An id already used for another change is refused (InputError)."""
        change = checked(change)
        assert change.change_id is not None
        prior = changes.prior_answer(self._con(), session_id, change.change_id)
        return None if prior is None else self._final(changes.repeat(prior, change))

    def refuse(self, session_id: str, base_version: int, change: Change, error: InputError
               ) -> Applied | Conflict:
        """Keep the refusal of a change its caller found wrong on base_version (its analysis
        failed there, say) under the change id, so every retry is refused in the same words
        whatever happened since; raises it. When the id was answered in between, that first
        answer stands and is given instead."""
        change = checked(change)
        assert change.change_id is not None
        with self._lock(session_id):
            con = self._con()
            with db.write(con):
                prior = changes.prior_answer(con, session_id, change.change_id)
                if prior is None:
                    refused = changes.Refused(error.what, error.where, error.todo)
                    changes.remember(con, session_id, changes.current_version(con, session_id),
                                     base_version, change, refused)
                    prior = (fingerprint(change), refused)
        return self._final(changes.repeat(prior, change))

    @staticmethod
    def _final(answer: Applied | Conflict | changes.Refused) -> Applied | Conflict:
        if isinstance(answer, changes.Refused):
            raise answer.error()
        if isinstance(answer, Applied):
            return Applied(answer.version, answer.change_id, repeated=True)
        return answer

    def _table_of(self, snap: changes.Snapshot) -> Table:
        return self._table(snap.table_key, snap.filename, snap.kinds, snap.notes)

    def _attempt(self, con: sqlite3.Connection, session_id: str, base: int, change: Change,
                 keep_answer: bool, locked: bool, checked_on: int | None = None
                 ) -> Applied | Conflict | changes.Refused | None:
        """One try: None when another writer got in between the check and the write."""
        assert change.change_id is not None
        if locked:
            with db.write(con):
                snap = changes.snapshot(con, session_id, change.change_id)
                verdict = changes.judge(snap, base, change, self._table_of, self._check,
                                        checked_on)
                return self._record(con, session_id, snap, base, change, verdict, keep_answer)
        with db.read(con):
            snap = changes.snapshot(con, session_id, change.change_id)
        verdict = changes.judge(snap, base, change, self._table_of, self._check, checked_on)
        if snap.prior is not None:
            return verdict  # an earlier answer: nothing to write
        with db.write(con):
            if changes.current_version(con, session_id) != snap.version or \
                    changes.prior_answer(con, session_id, change.change_id) is not None:
                return None
            return self._record(con, session_id, snap, base, change, verdict, keep_answer)

    @staticmethod
    def _record(con: sqlite3.Connection, session_id: str, snap: changes.Snapshot, base: int,
                change: Change, verdict: changes.Verdict, keep_answer: bool
                ) -> Applied | Conflict | changes.Refused:
        """Write what the verdict needs (inside the write transaction) and return the answer."""
        assert change.change_id is not None
        if isinstance(verdict, Applied):
            return verdict  # a retry: answered before
        if isinstance(verdict, changes.Accepted):
            changes.insert(con, session_id, snap.version + 1, base, change, verdict)
            return Applied(snap.version + 1, change.change_id, rebased=verdict.rebased)
        if keep_answer and snap.prior is None:
            changes.remember(con, session_id, snap.version, base, change, verdict)
        return verdict

    # -- pins and settings ---------------------------------------------------------------

    def add_pin(self, session_id: str, fit: dict[str, Any], *, name: str = "",
                version: int | None = None, meta: dict[str, Any] | None = None) -> Pin:
        """Keep a fit for comparison. version: the session version it was made at (default:
        the current one); meta: anything JSON to keep beside it (columns, rank, ...)."""
        con = self._con()
        with db.write(con):
            return pins.add(con, session_id, fit, name, version, meta or {})

    def remove_pin(self, session_id: str, pin_id: int) -> None:
        con = self._con()
        with db.write(con):
            pins.remove(con, session_id, pin_id)

    def update_settings(self, session_id: str, values: dict[str, Any]) -> dict[str, Any]:
        """Merge values into the session's settings (None removes a key); returns them all.
        Settings are view preferences outside the undo history (e.g. the heatmap kind)."""
        con = self._con()
        with db.write(con):
            return pins.merge_settings(con, session_id, values)

    # -- access --------------------------------------------------------------------------

    def access(self, session_id: str, token: str | None) -> str | None:
        """"edit", "view" or None: what the token allows on the session. An unknown session
        also gives None, so a caller cannot tell it from a wrong token."""
        row = self._con().execute("SELECT edit_hash, view_hash FROM sessions WHERE id = ?",
                                  (session_id,)).fetchone()
        if row is None:
            return None
        if tokens.matches(token, row[0]):
            return "edit"
        if tokens.matches(token, row[1]):
            return "view"
        return None

    def sweep(self) -> list[Path]:
        """Remove table files that no session uses (left by a crash mid-create or
        mid-delete, older than SWEEP_AGE); returns what was removed."""
        con = self._con()
        with db.write(con):
            used = {k for (k,) in con.execute("SELECT key FROM tables")}
            return files.sweep(self.tables_dir, used, time.time() - SWEEP_AGE)
