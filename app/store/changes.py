"""Deciding on one change to a session: retry, refusal, or a new version on top of the history.

Reads and writes the changes and refusals tables only; the caller holds locks and transactions.
"""

from __future__ import annotations

import json
import sqlite3
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from rankscope.store.check import Check
from rankscope.store.history import MOVE_KINDS, Change, fingerprint, fold, move_payload
from rankscope.store.records import Applied, Conflict, Entry, SessionNotFound
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table


@dataclass(frozen=True)
class Accepted:
    """A change that passed: what to write as the next version."""

    kind: str
    payload: dict[str, Any]
    rebased: bool


@dataclass(frozen=True)
class Refused:
    """A change that is wrong on the very state its sender saw: an InputError to raise."""

    what: str
    where: str
    todo: str

    def error(self) -> InputError:
        return InputError(self.what, self.where, self.todo)


Verdict = Accepted | Applied | Conflict | Refused


@dataclass(frozen=True)
class Snapshot:
    """A session's history as read in one transaction, with what is needed to load its
    table, and the final answer already given to this change id, if any."""

    version: int
    entries: list[Entry]
    table_key: str
    filename: str
    kinds: dict[str, str]
    notes: list[str]
    prior: tuple[str, Applied | Conflict | Refused] | None  # (fingerprint, answer)


def entries_of(con: sqlite3.Connection, session_id: str) -> list[Entry]:
    rows = con.execute(
        "SELECT version, change_id, kind, payload, author, at, base_version FROM changes "
        "WHERE session_id = ? ORDER BY version", (session_id,)).fetchall()
    return [Entry(v, cid, kind, json.loads(p), author, at, base)
            for v, cid, kind, p, author, at, base in rows]


def prior_answer(con: sqlite3.Connection, session_id: str, change_id: str
                 ) -> tuple[str, Applied | Conflict | Refused] | None:
    """What this change id was answered before: saved as a version, or refused."""
    row = con.execute("SELECT version, fingerprint FROM changes WHERE session_id = ? AND "
                      "change_id = ?", (session_id, change_id)).fetchone()
    if row is not None:
        return row[1], Applied(row[0], change_id, repeated=True)
    row = con.execute("SELECT fingerprint, version, base_version, conflict, what, place, todo "
                      "FROM refusals WHERE session_id = ? AND change_id = ?",
                      (session_id, change_id)).fetchone()
    if row is None:
        return None
    print_, version, base, conflict, what, place, todo = row
    if conflict:
        return print_, Conflict(version, base, change_id, what)
    return print_, Refused(what, place, todo)


def snapshot(con: sqlite3.Connection, session_id: str, change_id: str) -> Snapshot:
    row = con.execute(
        "SELECT s.version, s.table_key, s.filename, t.kinds, t.notes FROM sessions s "
        "JOIN tables t ON t.key = s.table_key WHERE s.id = ?", (session_id,)).fetchone()
    if row is None:
        raise SessionNotFound(session_id)
    version, key, filename, kinds, notes = row
    return Snapshot(version, entries_of(con, session_id), key, filename, json.loads(kinds),
                    json.loads(notes), prior_answer(con, session_id, change_id))


def current_version(con: sqlite3.Connection, session_id: str) -> int:
    row = con.execute("SELECT version FROM sessions WHERE id = ?", (session_id,)).fetchone()
    if row is None:
        raise SessionNotFound(session_id)
    return int(row[0])


def repeat(prior: tuple[str, Applied | Conflict | Refused], change: Change
           ) -> Applied | Conflict | Refused:
    """The earlier answer to this id, if the change is the same one."""
    print_, answer = prior
    if print_ != fingerprint(change):
        raise InputError(f"change id {change.change_id!r} was already used for another change",
                         "change id", "Use a new id for every new change")
    return answer


def judge(snap: Snapshot, base: int, change: Change, table: Callable[[Snapshot], Table],
          check: Check, checked_on: int | None = None) -> Verdict:
    """What to do with the change on this snapshot. checked_on: the version on which the
    caller has already made sure the change makes sense; on that very version the check
    is not run again."""
    assert change.change_id is not None
    if snap.prior is not None:
        return repeat(snap.prior, change)
    if base > snap.version:
        return Refused(f"there is no version {base}: the session is at version {snap.version}",
                       "base version", "Reload the session")
    stale = base < snap.version
    moved_on = (f"The session changed since version {base} (it is now at version "
                f"{snap.version})")
    state = fold(snap.entries)
    if change.kind in MOVE_KINDS:
        if stale:
            # An undo means "take back what I see last"; after others' changes that is no
            # longer the same edit, so it is refused rather than guessed.
            return Conflict(snap.version, base, change.change_id,
                            f"{moved_on}, so {change.kind} might act on a change you have not "
                            f"seen. Look at the current state, then {change.kind} again.")
        payload = move_payload(change.kind, state)
        if payload is None:
            return Refused(f"there is nothing to {change.kind}", "history", "")
        return Accepted(change.kind, payload, False)
    try:
        if checked_on != snap.version:
            check(table(snap), state, change)
    except InputError as e:
        if not stale:
            return Refused(e.what, e.where, e.todo)
        return Conflict(snap.version, base, change.change_id,
                        f"{moved_on}, and this change does not apply to it any more: "
                        f"{e.message} Nothing was saved; look at the current state and decide "
                        "again.")
    return Accepted(change.kind, change.payload, stale)


def insert(con: sqlite3.Connection, session_id: str, version: int, base: int, change: Change,
           accepted: Accepted) -> None:
    """Write the change as `version` and move the session to it (inside the caller's write
    transaction, after checking that the session is still at version - 1)."""
    now = time.time()
    con.execute(
        "INSERT INTO changes (session_id, version, change_id, fingerprint, kind, payload, "
        "author, base_version, at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (session_id, version, change.change_id, fingerprint(change), accepted.kind,
         # Saved in the sender's key order (a step reads "step" first); fingerprints sort.
         json.dumps(accepted.payload, ensure_ascii=False, allow_nan=False),
         change.author, base, now))
    con.execute("UPDATE sessions SET version = ?, updated = ? WHERE id = ?",
                (version, now, session_id))


def remember(con: sqlite3.Connection, session_id: str, version: int, base: int,
             change: Change, answer: Conflict | Refused) -> None:
    """Keep a refusal, so a retry of the same id is refused in the same words even if the
    session has changed since (inside the caller's write transaction)."""
    if isinstance(answer, Conflict):
        what, place, todo, conflict = answer.message, "", "", 1
    else:
        what, place, todo, conflict = answer.what, answer.where, answer.todo, 0
    con.execute(
        "INSERT INTO refusals (session_id, change_id, fingerprint, version, base_version, "
        "conflict, what, place, todo, at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (session_id, change.change_id, fingerprint(change), version, base, conflict, what,
         place, todo, time.time()))
