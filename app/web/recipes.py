"""Importing a recipe file into a session: its steps become step changes on top of the history.

Reads the file through rankscope.report.export and saves through the store; renders nothing.
"""

from __future__ import annotations

import secrets
from dataclasses import dataclass

from rankscope.report.export import import_recipe
from rankscope.store import Conflict
from rankscope.tables.errors import InputError
from rankscope.web.access.bodies import sound_text
from rankscope.web.analyst import Analyst
from rankscope.web.state import Change

#: Room left in a change id (at most 100 characters) for ":<step number>".
MAX_IMPORT_ID = 80


@dataclass(frozen=True)
class Imported:
    """What became of an import: of `total` steps the first `saved` are in the history;
    `refusal` says why the rest were not saved (None when all were)."""

    total: int
    saved: int
    refusal: str | None = None
    conflict: bool = False


def import_steps(analyst: Analyst, session_id: str, data: bytes, source: str,
                 base_version: int | None, import_id: str | None) -> Imported:
    """Add the file's steps, in order, as changes made at base_version. Each step gets the
    change id "<import_id>:<n>", so a retried import saves nothing twice. When the session
    is still at base_version, the whole result is analysed first and a recipe that does not
    fit is refused before any step is saved. Raises InputError for a bad file."""
    if import_id is not None and (not isinstance(import_id, str)
                                  or not 0 < len(import_id) <= MAX_IMPORT_ID):
        raise InputError(f"an import id is text of 1 to {MAX_IMPORT_ID} characters",
                         "import id", "Send a new random id with each import")
    session = analyst.session(session_id)
    steps = list(import_recipe(data, session.table, source).steps)
    sound_text(steps, source)
    if not steps:
        raise InputError("the recipe has no steps", source, "Choose a recipe that changes "
                         "something")
    base = session.version if base_version is None else base_version
    if base == session.version:
        candidate = session
        for step in steps:
            candidate = candidate.with_change(Change("step", step))
        analyst.current(candidate)
    import_id = import_id or secrets.token_urlsafe(12)
    saved = 0
    for n, step in enumerate(steps):
        try:
            out = analyst.store.change(session_id, base, "step", step, f"{import_id}:{n}")
        except InputError as e:
            if saved == 0:
                raise
            return Imported(len(steps), saved, e.message)
        if isinstance(out, Conflict):
            return Imported(len(steps), saved, out.message, conflict=True)
        # Every step keeps the import's base: all were made looking at that version, so
        # the store checks each on top of what is saved by then (earlier steps included)
        # and a step spoilt by someone else's change is a Conflict, not a mistake.
        saved += 1
    return Imported(len(steps), saved)
