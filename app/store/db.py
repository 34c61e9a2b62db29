"""The SQLite file of the session store: opening it, its schema, and its two kinds of transaction.

Knows tables and pragmas only; what a session means lives in the store module.
"""

from __future__ import annotations

import os
import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from rankscope.tables.errors import InputError

SCHEMA_VERSION = 1
#: How long a writer waits for another writer's transaction before giving up (seconds).
BUSY_SECONDS = 30.0

SCHEMA = """
CREATE TABLE IF NOT EXISTS tables (
    key TEXT PRIMARY KEY,            -- file name stem under tables/
    sha256 TEXT NOT NULL,            -- SHA-256 of the uploaded bytes
    kinds TEXT NOT NULL,             -- JSON: column -> kind
    notes TEXT NOT NULL,             -- JSON: what the reader said about the file
    n_rows INTEGER NOT NULL,
    n_columns INTEGER NOT NULL,
    created REAL NOT NULL
);
CREATE TABLE IF NOT EXISTS sessions (
    id TEXT PRIMARY KEY,
    table_key TEXT NOT NULL REFERENCES tables(key),
    filename TEXT NOT NULL,
    title TEXT NOT NULL,
    edit_hash TEXT NOT NULL,
    view_hash TEXT NOT NULL,
    version INTEGER NOT NULL DEFAULT 0,
    settings TEXT NOT NULL DEFAULT '{}',
    created REAL NOT NULL,
    updated REAL NOT NULL
);
CREATE INDEX IF NOT EXISTS sessions_by_table ON sessions(table_key);
CREATE INDEX IF NOT EXISTS sessions_by_updated ON sessions(updated);
CREATE TABLE IF NOT EXISTS changes (
    session_id TEXT NOT NULL REFERENCES sessions(id) ON DELETE CASCADE,
    version INTEGER NOT NULL,
    change_id TEXT NOT NULL,
    fingerprint TEXT NOT NULL,
    kind TEXT NOT NULL,
    payload TEXT NOT NULL,
    author TEXT NOT NULL,
    base_version INTEGER NOT NULL,
    at REAL NOT NULL,
    PRIMARY KEY (session_id, version),
    UNIQUE (session_id, change_id)
);
CREATE TABLE IF NOT EXISTS refusals (   -- so a retried id gets the same answer again
    session_id TEXT NOT NULL REFERENCES sessions(id) ON DELETE CASCADE,
    change_id TEXT NOT NULL,
    fingerprint TEXT NOT NULL,
    version INTEGER NOT NULL,        -- the session's version when it was refused
    base_version INTEGER NOT NULL,
    conflict INTEGER NOT NULL,       -- 1 when the session had moved on, 0 when wrong on its base
    what TEXT NOT NULL,
    place TEXT NOT NULL,
    todo TEXT NOT NULL,
    at REAL NOT NULL,
    PRIMARY KEY (session_id, change_id)
);
CREATE TABLE IF NOT EXISTS factors (   -- a session's reduced factor, for sessions without rows
    session_id TEXT PRIMARY KEY REFERENCES sessions(id) ON DELETE CASCADE,
    data BLOB NOT NULL               -- as the source that reduced it wrote it (opaque here)
);
CREATE TABLE IF NOT EXISTS pins (
    session_id TEXT NOT NULL REFERENCES sessions(id) ON DELETE CASCADE,
    pin_id INTEGER NOT NULL,
    name TEXT NOT NULL,
    version INTEGER NOT NULL,
    fit TEXT NOT NULL,
    meta TEXT NOT NULL,
    at REAL NOT NULL,
    PRIMARY KEY (session_id, pin_id)
);
"""


def _owner_only(path: Path) -> None:
    """Make the database file 0600 before SQLite opens it: SQLite gives its -wal and -shm
    files the database file's permissions, so all three stay readable by the owner only,
    whatever the umask or the folder's mode (titles, changes and pins are private)."""
    try:
        fd = os.open(path, os.O_CREAT | os.O_RDWR, 0o600)
        os.close(fd)
        os.chmod(path, 0o600)
        for extra in ("-wal", "-shm"):
            side = path.with_name(path.name + extra)
            if side.exists():
                os.chmod(side, 0o600)
    except OSError as e:
        raise InputError(f"the session database cannot be opened ({e.strerror})", str(path),
                         "Check the data folder's permissions, or choose another") from e


def connect(path: Path) -> sqlite3.Connection:
    """A connection in autocommit mode (transactions are begun explicitly below).

    WAL lets readers go on while one writer commits. synchronous=FULL makes every commit
    wait until the WAL is on disk: an acknowledged change then survives a power cut or an
    OS crash, not only a crash of rankscope (NORMAL would only promise the latter; the cost,
    one fsync per change, is nothing at the pace people edit).
    """
    _owner_only(path)
    con = sqlite3.connect(path, timeout=BUSY_SECONDS, isolation_level=None,
                          check_same_thread=False)
    try:
        mode = con.execute("PRAGMA journal_mode=WAL").fetchone()[0]
        if str(mode).lower() != "wal":
            raise InputError(f"the session database cannot use write-ahead logging ({mode})",
                             str(path), "Put the data folder on a local disk")
        con.execute("PRAGMA synchronous=FULL")
        con.execute("PRAGMA foreign_keys=ON")
    except sqlite3.DatabaseError as e:
        con.close()
        raise InputError(f"this is not a rankscope session database ({e})", str(path),
                         "Move the file away, or choose another data folder") from e
    except BaseException:
        con.close()
        raise
    return con


def ensure_schema(con: sqlite3.Connection, path: Path) -> None:
    """Create the tables on first use; refuse a database written by a newer rankscope."""
    with write(con):
        found = con.execute("PRAGMA user_version").fetchone()[0]
        if found > SCHEMA_VERSION:
            raise InputError(
                f"the session database is of format {found}; this rankscope reads up to "
                f"{SCHEMA_VERSION}", str(path), "Update rankscope, or choose another data folder")
        # One statement at a time (executescript would commit the transaction halfway);
        # so the schema text holds no ";" but between statements.
        for statement in SCHEMA.split(";"):
            if statement.strip():
                con.execute(statement)
        con.execute(f"PRAGMA user_version={SCHEMA_VERSION}")


@contextmanager
def write(con: sqlite3.Connection) -> Iterator[sqlite3.Connection]:
    """A write transaction. BEGIN IMMEDIATE takes the write lock up front, so two writers
    cannot both read version v and both write v + 1: the second waits, then sees v + 1."""
    con.execute("BEGIN IMMEDIATE")
    try:
        yield con
        con.execute("COMMIT")  # inside: a commit that fails (a full disk) is rolled back
    except BaseException:
        _roll_back(con)
        raise


def _roll_back(con: sqlite3.Connection) -> None:
    """End the failed transaction, so the connection serves the next request. SQLite may
    have rolled it back itself (after a full disk, say); then there is nothing to end, and
    a failing ROLLBACK must not hide the error that caused it."""
    if con.in_transaction:
        try:
            con.execute("ROLLBACK")
        except sqlite3.Error:
            pass


@contextmanager
def read(con: sqlite3.Connection) -> Iterator[sqlite3.Connection]:
    """A read transaction: every query inside sees the same committed snapshot."""
    con.execute("BEGIN")
    try:
        yield con
    finally:
        con.execute("COMMIT")
