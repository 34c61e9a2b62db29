"""User overrides of column kinds: with_kinds(table, {"column": "categorical", ...}).

Converts existing Table columns only; no reading and no inference.

Conversions: categorical text -> numeric / boolean / date with the reader's rules (missing
markers stay missing; a decimal comma is accepted when every number uses one); numeric ->
categorical (categories in numeric order, whole numbers without ".0"); numeric 0/1 -> boolean;
boolean -> numeric 0/1 or categories "false"/"true"; date -> categorical ISO text. Numbers or
booleans cannot become dates, and dates cannot become numbers or booleans.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from rankscope.tables.errors import InputError
from rankscope.tables.raw import at, row_label, short
from rankscope.tables.table import KINDS, Table
from rankscope.tables.text import Offending, TextColumn

if TYPE_CHECKING:
    import pandas as pd


def with_kinds(table: Table, overrides: dict[str, str]) -> Table:
    """A new Table with the given columns converted to the given kinds (others unchanged)."""
    check_overrides(overrides, table.columns, table.source)
    frame = table.frame.copy(deep=False)
    kinds = dict(table.kinds)
    notes = list(table.notes)
    for name, kind in overrides.items():
        old = kinds[name]
        if old == kind:
            continue
        values, more = convert(
            frame[name].array, old, kind, name=name, where=table.source, index=frame.index
        )
        frame[name] = values
        kinds[name] = kind
        notes.append(f"Column '{name}' is {kind} as you chose (it was read as {old}).")
        notes.extend(more)
    return Table(frame=frame, kinds=kinds, source=table.source, notes=notes)


def check_overrides(overrides: dict[str, str], columns: list[str], where: str) -> None:
    """InputError for an unknown column or kind in overrides."""
    for name, kind in overrides.items():
        if name not in columns:
            listed = ", ".join(repr(c) for c in columns[:20])
            raise InputError(
                f"There is no column {name!r} to set the kind of",
                where,
                f"Use one of the columns: {listed}",
            )
        if kind not in KINDS:
            raise InputError(
                f"Unknown kind {kind!r} for column {name!r}",
                where,
                f"Use one of: {', '.join(KINDS)}",
            )


def convert(values, old: str, new: str, *, name: str, where: str, index: pd.Index):
    """values (of kind old) as kind new, plus notes; InputError naming the first misfit cell."""
    if old == new:
        return values, []
    import pandas as pd

    try:
        if old == "categorical":
            return _from_text(TextColumn.from_categorical(pd.Categorical(values)), new)
        if new == "categorical":
            return _to_categories(values, old), []
        if old == "numeric" and new == "boolean":
            return _numbers_to_bool(np.asarray(values, dtype=np.float64)), []
        if old == "boolean" and new == "numeric":
            return pd.array(values, dtype="boolean").to_numpy(dtype=np.float64, na_value=np.nan), []
    except Offending as off:
        raise cells_error(
            name, off, f"Column '{name}' cannot be read as {plural(new)}:", where=where, index=index
        ) from None
    raise InputError(
        f"Column '{name}' holds {plural(old)}, which cannot be read as {plural(new)}",
        at(where, column=name),
        _advice(old, new),
    )


def cells_error(name, off: Offending, intro: str, raw=None, where="", index=None) -> InputError:
    """The error for cells that do not fit a kind: how many, a few values, where the first is."""
    if raw is not None:
        where, index = raw.where, raw.index
    return InputError(
        f"{intro} {describe(off, index, off.reason)}",
        at(where, index, off.pos, name),
        f"Correct those cells or leave them empty, or choose another kind for '{name}'",
    )


def describe(off: Offending, index, what: str) -> str:
    """'1 cell holds not a number: 'x'' / '3 cells hold ...: 'a', 'b' (the first at line 7)'."""
    examples = ", ".join(short(e) for e in off.examples)
    if off.count == 1:
        return f"1 cell holds {what}: {examples}"
    return f"{off.count} cells hold {what}: {examples} (the first at {row_label(index, off.pos)})"


def _from_text(tc: TextColumn, new: str):
    if new == "numeric":
        values, notes = tc.to_numeric(tc.guess_decimal())
        rows = np.flatnonzero(np.isinf(values))
        if len(rows):
            raise Offending(
                int(rows[0]),
                len(rows),
                [tc.value(rows[0])],
                "a value that is infinite or too large",
            )
        return values, notes
    if new == "boolean":
        return tc.to_boolean(loose=True), []
    return tc.to_date()


def _to_categories(values, old: str) -> pd.Categorical:
    import pandas as pd

    if old == "numeric":
        arr = np.asarray(values, dtype=np.float64)
        uniq = np.unique(arr[~np.isnan(arr)])
        labels = [number_text(v) for v in uniq]
        codes = np.searchsorted(uniq, arr)
        codes[np.isnan(arr)] = -1
        return pd.Categorical.from_codes(codes, categories=pd.Index(labels, dtype="str"))
    if old == "boolean":
        arr = pd.array(values, dtype="boolean")
        codes = np.where(arr.isna(), -1, arr.to_numpy(dtype=bool, na_value=False).astype(int))
        return pd.Categorical.from_codes(codes, categories=pd.Index(["false", "true"], dtype="str"))
    stamps = pd.DatetimeIndex(values)
    fmt = "%Y-%m-%d" if (stamps.dropna() == stamps.dropna().normalize()).all() else None
    texts = stamps.strftime(fmt) if fmt else pd.Index([s.isoformat() for s in stamps])
    texts = [None if pd.isna(s) else t for s, t in zip(stamps, texts, strict=True)]
    return pd.Categorical(texts, categories=sorted({t for t in texts if t is not None}))


def _numbers_to_bool(arr: np.ndarray) -> pd.arrays.BooleanArray:
    missing = np.isnan(arr)
    bad = ~missing & (arr != 0) & (arr != 1)
    if bad.any():
        rows = np.flatnonzero(bad)
        examples = [number_text(v) for v in dict.fromkeys(arr[rows[:1000]].tolist())][:3]
        raise Offending(int(rows[0]), len(rows), examples, "a number other than 0 or 1")
    import pandas as pd

    return pd.arrays.BooleanArray(arr == 1, missing)


def number_text(v: float) -> str:
    if float(v).is_integer() and abs(v) < 1e15:
        return str(int(v))
    return repr(float(v))


def plural(kind: str) -> str:
    return {"numeric": "numbers", "boolean": "yes/no values", "date": "dates"}.get(kind, kind)


def _advice(old: str, new: str) -> str:
    if new == "date":
        return "Write the dates in the file as YYYY-MM-DD text, then read it again"
    if old == "date":
        return "Add a column that holds the number you need (e.g. the year), then read it again"
    return f"Choose another kind for the column ({', '.join(KINDS)})"
