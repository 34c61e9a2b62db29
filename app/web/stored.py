"""The web app's sessions kept in the SQLite session store: loaded as Sessions, changed by version.

Translates between rankscope.store records and the web's records; judges and analyses nothing.
"""

from __future__ import annotations

import contextlib
import threading
from pathlib import PurePath
from typing import Any

from rankscope.scale.reduced import Reduced, engine_of
from rankscope.scale.reduced_steps import refuse_without_rows
from rankscope.scale.sources import ReducedSource, Source, UnkeptSource
from rankscope.store import (
    Applied,
    Conflict,
    Created,
    SessionInfo,
    SessionNotFound,
    SessionState,
    Store,
    replay_check,
)
from rankscope.store import Change as StoredChange
from rankscope.store.history import Folded
from rankscope.store.store import MAX_TITLE
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table
from rankscope.web.access import links
from rankscope.web.state import Change, PinnedFit, Session

#: The settings key that holds the session's sealed links (see access/links.py).
SEALED = "sealed_links"


def session_check(table: Table, before: Folded, change: StoredChange) -> None:
    """The store's check (see rankscope.store.check) for every source: the recipe's replay for a
    session on rows; for a reduced one, only steps its factor can take (the analyst checks
    the rest on the factor before anything is saved)."""
    if engine_of(table) is None:
        replay_check(table, before, change)
    elif change.kind == "step":
        refuse_without_rows(change.payload)
    elif change.kind == "recipe":
        for step in change.payload["steps"]:
            refuse_without_rows(step)


def as_session(state: SessionState, source: Source | None = None) -> Session:
    """The web's view of a saved session: the timeline with its pointer, the pins, the
    source of its factor (default: its table's rows)."""
    pins = [PinnedFit(p.pin_id, p.name, int(p.meta.get("position", 0)), p.fit,
                      list(p.meta.get("columns", [])), int(p.meta.get("rank", 0)), p.at)
            for p in state.pins]
    return Session(
        session_id=state.session_id, table=state.table,
        history=[Change(e.kind, e.payload) for e in state.timeline], position=state.position,
        pinned=pins, created=state.created, version=state.version, title=state.title,
        updated=state.updated, source=source)


class StoredSessions:
    """The SessionStore of the web app on top of rankscope.store.Store (shared by threads)."""

    def __init__(self, db: Store) -> None:
        self.db = db
        self._key = links.link_key(db.root)
        # Reduced factors by session, read from the store once (they never change).
        self._sources: dict[str, Source] = {}
        self._guard = threading.Lock()

    def _source(self, state: SessionState) -> Source | None:
        """The source of a reduced session's factor (None: its table's rows)."""
        engine = engine_of(state.table)
        if engine is None:
            return None
        with self._guard:
            held = self._sources.get(state.session_id)
        if held is None:
            data = self.db.load_factor(state.session_id)
            held = UnkeptSource(engine) if data is None else ReducedSource(
                Reduced.from_bytes(data))
            with self._guard:
                self._sources[state.session_id] = held
        return held

    # -- the SessionStore interface -------------------------------------------------------

    def create(self, data: bytes, filename: str, table: Table | None = None,
               factor: bytes | None = None) -> tuple[Session, Created]:
        """A new session titled by the file's name; its links are sealed for the Share
        button (the tokens themselves are returned only here). factor: a reduced factor's
        bytes, kept with the session (its table then has no rows)."""
        title = PurePath(str(filename).replace("\\", "/")).name[:MAX_TITLE] or None
        made = self.db.create_session(data, filename, title=title, table=table, factor=factor)
        try:
            self.db.update_settings(made.session_id, {SEALED: links.seal(
                self._key, made.session_id, made.edit_token, made.view_token)})
        except Exception:
            # The uploader is told nothing was saved (a full disk, say): so it is not.
            with contextlib.suppress(Exception):
                self.db.delete(made.session_id)
            raise
        state = self.db.load(made.session_id)
        return as_session(state, self._source(state)), made

    def get(self, session_id: str) -> Session | None:
        try:
            state = self.db.load(session_id)
        except SessionNotFound:
            return None
        return as_session(state, self._source(state))

    def change(self, session_id: str, base_version: int, kind: str, payload: dict[str, Any],
               change_id: str | None, checked_on: int | None = None) -> Applied | Conflict:
        return self.db.apply_change(session_id, base_version,
                                    StoredChange(kind, payload, change_id),
                                    checked_on=checked_on)

    def answered(self, session_id: str, kind: str, payload: dict[str, Any], change_id: str
                 ) -> Applied | Conflict | None:
        """The first answer to this change id (a refusal is raised), or None."""
        return self.db.answered(session_id, StoredChange(kind, payload, change_id))

    def refuse(self, session_id: str, base_version: int, kind: str, payload: dict[str, Any],
               change_id: str, error: InputError) -> Applied | Conflict:
        """Keep the refusal under the change id and raise it (or give the first answer)."""
        return self.db.refuse(session_id, base_version, StoredChange(kind, payload, change_id),
                              error)

    def add_pin(self, session_id: str, label: str, fit: dict[str, Any], *, version: int,
                position: int, columns: list[str], rank: int) -> PinnedFit:
        pin = self.db.add_pin(session_id, fit, name=label, version=version,
                              meta={"position": position, "columns": columns, "rank": rank})
        return PinnedFit(pin.pin_id, pin.name, position, pin.fit, columns, rank, pin.at)

    def remove_pin(self, session_id: str, pin_id: int) -> None:
        self.db.remove_pin(session_id, pin_id)

    # -- what the start page, sharing and the live feed need -------------------------------

    def recent(self, limit: int = 50) -> list[SessionInfo]:
        return self.db.list_recent(limit)

    def rename(self, session_id: str, title: str) -> str:
        return self.db.rename(session_id, title)

    def delete(self, session_id: str) -> None:
        self.db.delete(session_id)
        with self._guard:
            self._sources.pop(session_id, None)

    def access(self, session_id: str, token: str | None) -> str | None:
        return self.db.access(session_id, token)

    def stamp(self, session_id: str) -> tuple[int, float] | None:
        return self.db.stamp(session_id)

    def entries(self, session_id: str) -> list[dict[str, Any]]:
        """Every accepted change with its version and change id, oldest first."""
        return [e.to_dict() for e in self.db.load(session_id).history]

    def tokens(self, session_id: str) -> dict[str, str]:
        """The session's tokens that can still be shown: unsealed and checked against the
        store's hashes (a missing or damaged seal gives {})."""
        opened = links.unseal(self._key, session_id,
                              self.db.load(session_id).settings.get(SEALED))
        if opened is None:
            return {}
        return {role: token for role, token in opened.items()
                if self.db.access(session_id, token) == role}
