"""The ledger: the recipe's working columns as names, roles and placement, without any rows.

Mirrors the rules of rankscope.design (working, assemble) on metadata only; holds no values.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace

from rankscope.core.workspace import CONSTANT
from rankscope.design.design import INTERCEPT
from rankscope.design.steps import ALL_LEVELS
from rankscope.design.working import DROPPED, PREDICTOR, RESPONSE


class Rebuild(Exception):
    """The edit cannot be done on the factor alone; the reason says why (for the caller)."""

    def __init__(self, reason: str) -> None:
        super().__init__(reason)
        self.reason = reason


@dataclass(frozen=True)
class Entry:
    """One working column.

    key: unique within an engine's history (identity, as WorkingColumns compares columns).
    held: the Workspace column holding its values on the rows used (numeric or boolean), or
        None when it has none there (missing values, a date).
    levels / level_ids: for a categorical column held without missing values, its levels in
        sorted order and the Workspace column of each level's 0/1 indicator.
    """

    key: int
    name: str
    kind: str
    sources: frozenset[str]
    role: str = PREDICTOR
    reference: str | None = None
    on_missing: str = "delete_rows"
    anchor: int | None = None
    problem: str | None = None
    held: str | None = None
    levels: tuple[str, ...] | None = None
    level_ids: tuple[str, ...] | None = None


@dataclass(frozen=True)
class Layout:
    """What the design looks like: the metadata build_design would give, without X or y.

    visible: Workspace columns in design order (CONSTANT for the intercept).
    used: table columns the design uses (their missing values delete rows).
    """

    columns: list[str]
    groups: dict[str, list[str]]
    response: str | None
    visible: list[str]
    response_id: str | None
    used: frozenset[str]


def _role_check(ok: bool, why: str) -> None:
    if not ok:
        raise Rebuild(why)


@dataclass(frozen=True)
class Ledger:
    """Working columns in order plus the intercept flag. Every method returns a new Ledger."""

    entries: tuple[Entry, ...]
    intercept: bool = True

    # ---- look-ups, as WorkingColumns.get / .number_col (a failure is the rebuild's to word) ----
    def get(self, name: str) -> Entry:
        for e in self.entries:
            if e.name == name:
                return e
        raise Rebuild(f"no working column named {name!r}")

    def number(self, name: str) -> Entry:
        e = self.get(name)
        _role_check(e.kind in ("numeric", "boolean"), f"{name!r} is {e.kind}, not numbers")
        return e

    def by_key(self, key: int) -> Entry:
        return next(e for e in self.entries if e.key == key)

    def check_free(self, name: str, replacing: Iterable[Entry] = ()) -> None:
        """As WorkingColumns.check_free: a new name may reuse only the names of what it replaces."""
        gone = {e.key for e in replacing}
        _role_check(name != INTERCEPT, "the intercept's name")
        for e in self.entries:
            _role_check(e.name != name or e.key in gone, f"{name!r} already exists")

    # ---- placement, as WorkingColumns.replace / .insert_after -----------------------------
    def set(self, entry: Entry) -> Ledger:
        """The ledger with the entry of the same key replaced by `entry`."""
        return replace(self, entries=tuple(entry if e.key == entry.key else e
                                           for e in self.entries))

    def put_in_place(self, old: Entry, new: Entry) -> tuple[Ledger, Entry]:
        """`new` where `old` was, taking its role, missing policy and anchor; columns
        anchored to `old` follow `new`."""
        new = replace(new, role=old.role, on_missing=old.on_missing, anchor=old.anchor)
        out = []
        for e in self.entries:
            e = new if e.key == old.key else e
            if e.anchor == old.key:
                e = replace(e, anchor=new.key)
            out.append(e)
        return replace(self, entries=tuple(out)), new

    def insert_after(self, anchor: Entry, new: Entry) -> Ledger:
        """`new` after `anchor` and after the columns already placed after it."""
        entries = list(self.entries)
        i = next(k for k, e in enumerate(entries) if e.key == anchor.key) + 1
        while i < len(entries) and entries[i].anchor == anchor.key:
            i += 1
        entries.insert(i, replace(new, anchor=anchor.key))
        return replace(self, entries=tuple(entries))

    def without(self, keys: set[int]) -> Ledger:
        return replace(self, entries=tuple(e for e in self.entries if e.key not in keys))

    def response(self) -> Entry | None:
        return next((e for e in self.entries if e.role == RESPONSE), None)

    # ---- roles ---------------------------------------------------------------------------
    def drop(self, name: str) -> Ledger:
        e = self.get(name)
        _role_check(e.role not in (RESPONSE, DROPPED), f"{name!r} cannot be dropped now")
        return self.set(replace(e, role=DROPPED))

    def restore(self, name: str) -> Ledger:
        e = self.get(name)
        _role_check(e.role == DROPPED, f"{name!r} is not dropped")
        return self.set(replace(e, role=PREDICTOR))

    def with_response(self, name: str | None) -> Ledger:
        """As apply_response: the old response becomes a predictor again."""
        new = None if name is None else self.number(name)
        _role_check(new is None or new.on_missing != "drop_column", "response left out")
        led = self
        current = self.response()
        if current is not None:
            led = led.set(replace(current, role=PREDICTOR))
        if new is not None:
            led = led.set(replace(led.by_key(new.key), role=RESPONSE))
        return led

    def with_reference(self, name: str, reference: str | None) -> Ledger:
        e = self.get(name)
        _role_check(e.kind == "categorical", f"{name!r} is {e.kind}, not categorical")
        if reference not in (None, ALL_LEVELS):
            # The level must exist on the rows used; otherwise the build has words for it.
            _role_check(e.levels is not None and reference in e.levels, "unknown level")
        return self.set(replace(e, reference=reference))

    # ---- the design -----------------------------------------------------------------------
    def layout(self, with_missing: frozenset[str]) -> Layout:
        """The design's columns, as make_plan and assemble decide them.

        with_missing: table columns that have a missing value in some row (a column with the
        drop_column policy is left out when one of its sources is among them).
        """
        columns: list[str] = [INTERCEPT] if self.intercept else []
        visible: list[str] = [CONSTANT] if self.intercept else []
        groups: dict[str, list[str]] = {}
        used: set[str] = set()
        for e in self.entries:
            if e.role != PREDICTOR or e.kind == "date":
                continue
            if e.on_missing == "drop_column" and e.sources & with_missing:
                continue
            used |= e.sources
            _role_check(e.problem is None, f"{e.name!r} could not be computed")
            if e.kind == "categorical":
                names, ids = _indicators(e)
                if names:
                    groups[e.name] = names
            else:
                _role_check(e.held is not None, f"{e.name!r} has no values held")
                names, ids = [e.name], [e.held]
            for name, hid in zip(names, ids, strict=True):
                _role_check(name not in columns, f"two columns named {name!r}")
                columns.append(name)
                visible.append(hid)
        _role_check(bool(columns), "the design has no columns")
        resp = self.response()
        if resp is not None:
            used |= resp.sources
            _role_check(resp.problem is None and resp.held is not None, "response not held")
        return Layout(
            columns=columns, groups=groups, response=None if resp is None else resp.name,
            visible=visible, response_id=None if resp is None else resp.held,
            used=frozenset(used),
        )


def _indicators(e: Entry) -> tuple[list[str], list[str]]:
    """Indicator names and Workspace columns, as assemble's coding (levels on rows used)."""
    _role_check(e.levels is not None and e.level_ids is not None, f"{e.name!r} not held")
    assert e.levels is not None and e.level_ids is not None
    if not e.levels:
        return [], []
    reference = e.levels[0] if e.reference is None else e.reference
    _role_check(reference == ALL_LEVELS or reference in e.levels, "unknown level")
    pairs = [(f"{e.name}[{lv}]", hid) for lv, hid in zip(e.levels, e.level_ids, strict=True)
             if lv != reference]
    return [n for n, _ in pairs], [h for _, h in pairs]
