"""Inspection sessions: table, source of its factor, history with undo pointer, pinned fits.

Records and the SessionStore interface only (implemented in stored.py); no analysis here.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
from typing import Any, Protocol

from rankscope.scale.sources import RowsSource, Source
from rankscope.store.records import Applied, Conflict, Created
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

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
    """One inspection of one table, as loaded from the store.

    history: the edits in force, then those undone that redo would bring back; position:
    how many are in force (undo moves it back, redo forward, a new change cuts off what
    lay beyond it). version: the store's version, the base of the next change.
    updated: when anything about the session last changed (pins and title included).
    source: where its factor comes from (default: its table's rows, held in memory).
    """

    session_id: str
    table: Table
    history: list[Change] = field(default_factory=list)
    position: int = 0
    pinned: list[PinnedFit] = field(default_factory=list)
    created: float = field(default_factory=time.time)
    version: int = 0
    title: str = ""
    updated: float = 0.0
    source: Source | None = None

    def __post_init__(self) -> None:
        # Where the factor comes from; pages and routes never ask which source it is.
        if self.source is None:
            self.source = RowsSource(self.table)

    @property
    def in_force(self) -> list[Change]:
        return self.history[: self.position]

    @property
    def revision(self) -> str:
        """Changes whenever anything shown about the session does; pages compare it with
        what the live feed announces to know whether to refresh."""
        return f"{self.version}-{round(self.updated * 1e6)}"

    def with_change(self, change: Change) -> Session:
        """A copy with `change` appended at the pointer (the redo tail is cut off)."""
        return replace(self, history=[*self.in_force, change], position=self.position + 1)

    def can_undo(self) -> bool:
        return self.position > 0

    def can_redo(self) -> bool:
        return self.position < len(self.history)


class SessionStore(Protocol):
    """Where sessions live. Reads give a Session; every change to the history is one
    versioned call, judged by the store against what happened since its base version."""

    def create(self, data: bytes, filename: str, table: Table | None = None,
               factor: bytes | None = None) -> tuple[Session, Created]: ...

    def get(self, session_id: str) -> Session | None: ...

    def change(self, session_id: str, base_version: int, kind: str, payload: dict[str, Any],
               change_id: str | None, checked_on: int | None = None
               ) -> Applied | Conflict: ...

    def answered(self, session_id: str, kind: str, payload: dict[str, Any], change_id: str
                 ) -> Applied | Conflict | None: ...

    def refuse(self, session_id: str, base_version: int, kind: str, payload: dict[str, Any],
               change_id: str, error: InputError) -> Applied | Conflict: ...

    def add_pin(self, session_id: str, label: str, fit: dict[str, Any], *, version: int,
                position: int, columns: list[str], rank: int) -> PinnedFit: ...

    def remove_pin(self, session_id: str, pin_id: int) -> None: ...
