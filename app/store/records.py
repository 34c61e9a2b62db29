"""What the session store hands back: plain records of sessions, changes, pins and outcomes.

Data only; no database access and no analysis here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from rankscope.design.recipe import Recipe
from rankscope.tables.table import Table


class SessionNotFound(KeyError):
    """No saved session has this id (it was never made, or it was deleted)."""


@dataclass(frozen=True)
class Created:
    """A new session's id and its two secret tokens. The tokens are shown once: the store
    keeps only their hashes, so a lost token cannot be recovered, only replaced."""

    session_id: str
    edit_token: str
    view_token: str


@dataclass(frozen=True)
class SessionInfo:
    """One line of the recent-sessions list."""

    session_id: str
    title: str
    filename: str
    n_rows: int
    n_columns: int
    version: int
    created: float
    updated: float


@dataclass(frozen=True)
class Entry:
    """One accepted change of the history, as stored.

    version: the session version this change made (1 for the first change).
    base_version: the version the client was looking at when it sent the change.
    payload: the step or setting; for undo and redo, {"undoes": v} / {"redoes": v}
        naming the version of the edit taken back or put back.
    """

    version: int
    change_id: str
    kind: str
    payload: dict[str, Any]
    author: str
    at: float
    base_version: int

    def to_dict(self) -> dict[str, Any]:
        return {
            "version": self.version, "change_id": self.change_id, "kind": self.kind,
            "payload": self.payload, "author": self.author, "at": self.at,
            "base_version": self.base_version,
        }


@dataclass(frozen=True)
class Pin:
    """A fit kept for comparison: a name, the version it was made at, the fit dict and
    whatever the caller wants beside it (columns, rank, ...)."""

    pin_id: int
    name: str
    version: int
    fit: dict[str, Any]
    meta: dict[str, Any]
    at: float


@dataclass(frozen=True)
class SessionState:
    """Everything saved about a session, with the history already folded.

    history: every accepted change, in version order (never rewritten).
    timeline: the edits in force, then the ones undone that redo would bring back (next
        first); position: how many of timeline are in force. recipe/keep/ridge: what the
        edits in force add up to. table: shared with other loads; treat it as read-only.
    """

    session_id: str
    title: str
    filename: str
    table: Table
    table_sha256: str
    version: int
    history: list[Entry]
    timeline: list[Entry]
    position: int
    recipe: Recipe
    keep: list[str]
    ridge: float | None
    pins: list[Pin]
    settings: dict[str, Any]
    created: float
    updated: float
    notes: list[str] = field(default_factory=list)

    @property
    def can_undo(self) -> bool:
        return self.position > 0

    @property
    def can_redo(self) -> bool:
        return self.position < len(self.timeline)


@dataclass(frozen=True)
class Applied:
    """A change was accepted and is durably saved as `version`.

    rebased: other changes had come in since base_version, and this one still applied on
        top of them. repeated: this change id was already accepted earlier (a retry);
        nothing new was saved and version is the one it got then.
    """

    version: int
    change_id: str
    rebased: bool = False
    repeated: bool = False


@dataclass(frozen=True)
class Conflict:
    """A change was refused because the session moved on since base_version and the
    change no longer applies; nothing was saved. version: the session's version when it was
    refused (a retry of the same change id gets this same answer back)."""

    version: int
    base_version: int
    change_id: str
    message: str
