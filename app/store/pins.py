"""Pinned fits and view settings of a session, and the tidying of short texts such as titles.

SQL on the pins and sessions tables only, inside the caller's write transaction.
"""

from __future__ import annotations

import json
import sqlite3
import time
from typing import Any

from rankscope.store.changes import current_version
from rankscope.store.history import canonical
from rankscope.store.records import Pin, SessionNotFound
from rankscope.tables.errors import InputError

MAX_PIN_NAME = 80
MAX_SETTINGS = 64_000


def clean_text(value: Any, what: str, limit: int) -> str:
    """Non-empty text with runs of white space made one space, at most limit long."""
    if not isinstance(value, str) or not value.strip():
        raise InputError(f"the {what} must be non-empty text", what, f"Give a {what}")
    value = " ".join(value.split())
    if len(value) > limit:
        raise InputError(f"the {what} is {len(value)} characters long, over {limit}", what,
                         "Shorten it")
    return value


def add(con: sqlite3.Connection, session_id: str, fit: dict[str, Any], name: str,
        version: int | None, meta: dict[str, Any]) -> Pin:
    if not isinstance(fit, dict) or not isinstance(meta, dict):
        raise InputError("a pinned fit is the fit object of a diagnosis", "pin")
    # Plain json, not canonical: a fit may hold NaN (say, a p-value with 0 residual df),
    # which Python's json writes and reads back.
    fit_text = json.dumps(fit, ensure_ascii=False)
    meta_text = json.dumps(meta, ensure_ascii=False)
    current = current_version(con, session_id)
    at_version = current if version is None else int(version)
    if not 0 <= at_version <= current:
        raise InputError(f"there is no version {at_version} to pin", "pin", "Pin the current fit")
    pin_id = con.execute("SELECT COALESCE(MAX(pin_id), 0) + 1 FROM pins WHERE session_id = ?",
                         (session_id,)).fetchone()[0]
    label = clean_text(name, "pin name", MAX_PIN_NAME) if name.strip() else f"Fit {pin_id}"
    now = time.time()
    con.execute("INSERT INTO pins (session_id, pin_id, name, version, fit, meta, at) "
                "VALUES (?, ?, ?, ?, ?, ?, ?)",
                (session_id, pin_id, label, at_version, fit_text, meta_text, now))
    con.execute("UPDATE sessions SET updated = ? WHERE id = ?", (now, session_id))
    return Pin(pin_id, label, at_version, json.loads(fit_text), json.loads(meta_text), now)


def remove(con: sqlite3.Connection, session_id: str, pin_id: int) -> None:
    current_version(con, session_id)  # raises SessionNotFound
    cur = con.execute("DELETE FROM pins WHERE session_id = ? AND pin_id = ?",
                      (session_id, pin_id))
    if cur.rowcount == 0:
        raise InputError(f"there is no pinned fit number {pin_id}", "pinned fits")
    con.execute("UPDATE sessions SET updated = ? WHERE id = ?", (time.time(), session_id))


def merge_settings(con: sqlite3.Connection, session_id: str, values: dict[str, Any]
                   ) -> dict[str, Any]:
    if not isinstance(values, dict) or not all(isinstance(k, str) for k in values):
        raise InputError("settings are an object with text keys", "settings")
    row = con.execute("SELECT settings FROM sessions WHERE id = ?", (session_id,)).fetchone()
    if row is None:
        raise SessionNotFound(session_id)
    merged = {k: v for k, v in {**json.loads(row[0]), **values}.items() if v is not None}
    try:
        text = canonical(merged)
    except (TypeError, ValueError) as e:
        raise InputError(f"settings must be plain JSON ({e})", "settings") from e
    if len(text.encode()) > MAX_SETTINGS:
        raise InputError(f"settings are over {MAX_SETTINGS:,} bytes", "settings")
    con.execute("UPDATE sessions SET settings = ?, updated = ? WHERE id = ?",
                (text, time.time(), session_id))
    return merged
