"""Importing a recipe file into a session: its steps become step changes on top of the history.

Reads the file through rankscope.report.export and saves through the store; renders nothing.
"""

from __future__ import annotations

from dataclasses import dataclass

from rankscope.report.export import import_recipe
from rankscope.store import Conflict
from rankscope.store.history import MAX_IMPORT_STEPS
from rankscope.tables.errors import InputError
from rankscope.web.access.bodies import sound_text
from rankscope.web.analyst import Analyst
from rankscope.web.state import Change

#: Longest import id: it is the import's change id (at most 100 characters).
MAX_IMPORT_ID = 80


@dataclass(frozen=True)
class Imported:
    """What became of an import: of `total` steps, `saved` are in the history (all of them,
    as one change, or none); `refusal` says why none were (None when all were)."""

    total: int
    saved: int
    refusal: str | None = None
    conflict: bool = False


def import_steps(analyst: Analyst, session_id: str, data: bytes, source: str,
                 base_version: int | None, import_id: str | None) -> Imported:
    """Add the file's steps, in order, as ONE change made at base_version (one version, one
    undo): the steps are replayed once, together, within the analysis time budget, however
    many there are (at most MAX_IMPORT_STEPS). The import id is the change id, so a retried
    import gets its first answer and saves nothing twice. Raises InputError for a bad file
    or a recipe that does not fit the state it was imported on."""
    if import_id is not None and (not isinstance(import_id, str)
                                  or not 0 < len(import_id) <= MAX_IMPORT_ID):
        raise InputError(f"an import id is text of 1 to {MAX_IMPORT_ID} characters",
                         "import id", "Send a new random id with each import")
    session = analyst.session(session_id)
    # Counted before any step is replayed: a long recipe is refused at once.
    steps = list(import_recipe(data, session.table, source, max_steps=MAX_IMPORT_STEPS).steps)
    sound_text(steps, source)
    if not steps:
        raise InputError("the recipe has no steps", source, "Choose a recipe that changes "
                         "something")
    try:
        out = analyst.apply(session_id, Change("recipe", {"steps": steps}), base_version,
                            import_id)
    except InputError as e:
        if e.where.startswith(source):
            raise
        raise InputError(e.what, f"{source}, {e.where}" if e.where else source, e.todo) from e
    if isinstance(out, Conflict):
        return Imported(len(steps), 0, out.message, conflict=True)
    return Imported(len(steps), len(steps))
