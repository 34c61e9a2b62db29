"""Changes to a session and how the history folds into what is in force (undo/redo included).

Shape checks and bookkeeping only: whether a step builds on the table is checked elsewhere.
"""

from __future__ import annotations

import hashlib
import json
import math
import secrets
from dataclasses import dataclass, field
from typing import Any

from rankscope.design.recipe import Recipe
from rankscope.design.steps import validate_step
from rankscope.store.records import Entry
from rankscope.tables.errors import InputError

#: Changes that edit the state; keep and ridge ride in the history so undo walks them too.
#: "recipe" is an imported recipe: its steps as one change (one version, one undo).
EDIT_KINDS = ("step", "recipe", "keep", "ridge")
#: Changes that move through the edits already made.
MOVE_KINDS = ("undo", "redo")
KINDS = EDIT_KINDS + MOVE_KINDS

#: Longest change id, author and payload accepted: enough for any real step, and a bound
#: on what one request can make the database hold.
MAX_ID = 100
MAX_AUTHOR = 100
MAX_PAYLOAD = 64_000
#: Most steps one imported recipe may hold, and the bound on its payload: far more than a
#: design needs (a step per column and a few more), few enough that the whole import is
#: replayed well inside the default time budget (30 s) even on a busy machine.
MAX_IMPORT_STEPS = 1_000
MAX_IMPORT_PAYLOAD = 400_000


@dataclass(frozen=True)
class Change:
    """A change a client asks for. change_id makes retries safe: a change whose id was
    already accepted is not applied again. Without one the store makes up an id, and a
    retry is then a new change."""

    kind: str
    payload: dict[str, Any] = field(default_factory=dict)
    change_id: str | None = None
    author: str = ""


def canonical(value: Any) -> str:
    """JSON with sorted keys and no NaN: equal values give equal text."""
    return json.dumps(value, sort_keys=True, ensure_ascii=False, allow_nan=False,
                      separators=(",", ":"))


def fingerprint(change: Change) -> str:
    """What a retry must repeat exactly for its id to count as the same change."""
    return hashlib.sha256(canonical([change.kind, change.payload]).encode()).hexdigest()


def _payload(kind: str, payload: Any) -> dict[str, Any]:
    where = f"{kind} change"
    if not isinstance(payload, dict):
        raise InputError(f"the payload must be an object, not {type(payload).__name__}", where)
    if kind == "step":
        return validate_step(payload)
    if kind == "recipe":
        steps = payload.get("steps")
        if set(payload) != {"steps"} or not isinstance(steps, list) or not steps:
            raise InputError('an imported recipe is {"steps": [step, ...]}', where,
                             "Send at least one step")
        if len(steps) > MAX_IMPORT_STEPS:
            raise InputError(too_many_steps(len(steps)), where, "Import it in parts")
        return {"steps": [validate_step(s, i) for i, s in enumerate(steps, start=1)]}
    if kind == "keep":
        col = payload.get("column")
        if set(payload) != {"column"} or not isinstance(col, str) or not col.strip():
            raise InputError("a basis choice is {\"column\": name}", where, "Name one column")
        return {"column": col}
    if kind == "ridge":
        value = payload.get("penalty")
        if set(payload) != {"penalty"}:
            raise InputError('a ridge change is {"penalty": number or null}', where)
        if value is None:
            return {"penalty": None}
        if isinstance(value, bool) or not isinstance(value, int | float) \
                or not math.isfinite(value) or value < 0:
            raise InputError(f"a ridge penalty must be a number of 0 or more, not {value!r}",
                             where, "Give a number of 0 or more, or null to turn it off")
        return {"penalty": float(value)}
    if payload:
        raise InputError(f"{kind} takes no payload", where, "Send an empty object")
    return {}


def too_many_steps(n: int) -> str:
    return (f"the recipe has {n:,} steps; one import takes at most {MAX_IMPORT_STEPS:,}")


def checked(change: Change) -> Change:
    """The change with its payload checked and normalized, and an id. Raises InputError."""
    if change.kind not in KINDS:
        raise InputError(f"unknown kind of change {change.kind!r}", "change",
                         "Use one of: " + ", ".join(KINDS))
    cid = change.change_id if change.change_id is not None else secrets.token_urlsafe(12)
    if not isinstance(cid, str) or not cid or len(cid) > MAX_ID:
        raise InputError(f"a change id is text of 1 to {MAX_ID} characters", "change id")
    author = change.author or ""
    if not isinstance(author, str) or len(author) > MAX_AUTHOR:
        raise InputError(f"an author is text of at most {MAX_AUTHOR} characters", "author")
    payload = _payload(change.kind, change.payload)
    try:
        size = len(canonical(payload).encode())
    except (TypeError, ValueError) as e:
        raise InputError(f"the payload is not plain JSON ({e})", f"{change.kind} change") from e
    bound = MAX_IMPORT_PAYLOAD if change.kind == "recipe" else MAX_PAYLOAD
    if size > bound:
        raise InputError(f"the payload is {size:,} bytes, over {bound:,}",
                         f"{change.kind} change", "Send a smaller change")
    return Change(change.kind, payload, cid, author)


@dataclass(frozen=True)
class Folded:
    """What a history adds up to: the edits in force (oldest first) and the undone ones
    that redo would bring back (next first)."""

    in_force: tuple[Entry, ...] = ()
    undone: tuple[Entry, ...] = ()

    @property
    def steps(self) -> list[dict[str, Any]]:
        out: list[dict[str, Any]] = []
        for e in self.in_force:
            if e.kind == "step":
                out.append(e.payload)
            elif e.kind == "recipe":
                out.extend(e.payload["steps"])
        return out

    @property
    def recipe(self) -> Recipe:
        return Recipe(self.steps)

    @property
    def keep(self) -> list[str]:
        """Basis priority: the latest "keep this one" first, as a person would expect."""
        keep: list[str] = []
        for e in self.in_force:
            if e.kind == "keep":
                col = e.payload["column"]
                keep = [col] + [c for c in keep if c != col]
        return keep

    @property
    def ridge(self) -> float | None:
        values = [e.payload["penalty"] for e in self.in_force if e.kind == "ridge"]
        return values[-1] if values else None


def fold(entries: list[Entry]) -> Folded:
    """Replay the history: an edit goes in force and clears what could be redone; undo
    takes back the latest edit in force; redo brings back the latest one undone."""
    in_force: list[Entry] = []
    undone: list[Entry] = []
    for e in entries:
        if e.kind in EDIT_KINDS:
            in_force.append(e)
            undone.clear()
        elif e.kind == "undo":
            undone.append(in_force.pop())
        else:
            in_force.append(undone.pop())
    return Folded(tuple(in_force), tuple(reversed(undone)))


def move_payload(kind: str, state: Folded) -> dict[str, Any] | None:
    """What an undo or redo records (the version it takes back or brings back), or None
    when there is nothing to undo or redo."""
    if kind == "undo":
        return {"undoes": state.in_force[-1].version} if state.in_force else None
    return {"redoes": state.undone[0].version} if state.undone else None
