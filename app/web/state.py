"""Inspection sessions: the table, the history of changes with its undo pointer, pinned fits.

Storage only, behind the small SessionStore interface (in memory for now); no analysis here.
"""

from __future__ import annotations

import secrets
import threading
import time
from dataclasses import dataclass, field, replace
from typing import Any, Protocol

from app.tables.table import Table

#: What a history entry can change. "step" carries a recipe step; "keep" and "ridge"
#: carry diagnosis settings (basis priority, ridge penalty) so undo walks them too.
CHANGE_KINDS = ("step", "keep", "ridge")


@dataclass(frozen=True)
class Change:
    """One entry of the history: kind in CHANGE_KINDS, payload as plain JSON."""

    kind: str
    payload: dict[str, Any]

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "payload": self.payload}


@dataclass(frozen=True)
class PinnedFit:
    """A fit kept for comparison: its label, the history position it came from, the fit
    dict of the diagnosis, and the columns and rank at that point."""

    pin_id: int
    label: str
    position: int
    fit: dict[str, Any]
    columns: list[str]
    rank: int
    pinned_at: float


@dataclass
class Session:
    """One user's inspection of one table.

    history: every change made, including those undone; position: how many are in force
    (undo moves it back, redo forward, a new change cuts off what lay beyond it).
    version: bumped on every stored change, so derived results can be cached by it.
    """

    session_id: str
    table: Table
    history: list[Change] = field(default_factory=list)
    position: int = 0
    pinned: list[PinnedFit] = field(default_factory=list)
    created: float = field(default_factory=time.time)
    version: int = 0

    @property
    def in_force(self) -> list[Change]:
        return self.history[: self.position]

    def with_change(self, change: Change) -> Session:
        """A copy with `change` appended at the pointer (the redo tail is cut off)."""
        return replace(self, history=[*self.in_force, change], position=self.position + 1)

    def can_undo(self) -> bool:
        return self.position > 0

    def can_redo(self) -> bool:
        return self.position < len(self.history)


class SessionStore(Protocol):
    """Where sessions live. Callers get a session, change a copy, and put it back."""

    def create(self, table: Table) -> Session: ...

    def get(self, session_id: str) -> Session | None: ...

    def put(self, session: Session) -> None: ...

    def lock(self, session_id: str) -> threading.Lock: ...

    def ids(self) -> list[str]: ...


class MemoryStore:
    """Sessions in this process's memory; they end when the server stops."""

    def __init__(self) -> None:
        self._sessions: dict[str, Session] = {}
        self._locks: dict[str, threading.Lock] = {}
        self._guard = threading.Lock()

    def create(self, table: Table) -> Session:
        session = Session(session_id=secrets.token_urlsafe(9), table=table)
        with self._guard:
            self._sessions[session.session_id] = session
            self._locks[session.session_id] = threading.Lock()
        return session

    def get(self, session_id: str) -> Session | None:
        return self._sessions.get(session_id)

    def put(self, session: Session) -> None:
        with self._guard:
            session.version += 1
            self._sessions[session.session_id] = session

    def lock(self, session_id: str) -> threading.Lock:
        with self._guard:
            return self._locks.setdefault(session_id, threading.Lock())

    def ids(self) -> list[str]:
        return sorted(self._sessions, key=lambda s: -self._sessions[s].created)
