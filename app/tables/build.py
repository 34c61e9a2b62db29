"""Raw -> Table: check the header and shape, infer each column, note what a person should know.

No file formats here (the readers) and no design decisions (app/design).
"""

from __future__ import annotations

from collections import Counter

import numpy as np

from rankscope.tables.errors import InputError
from rankscope.tables.infer import infer_column
from rankscope.tables.kinds import check_overrides, number_text
from rankscope.tables.raw import Raw, RowNumbers, pandas_index, short
from rankscope.tables.table import Table


def one_column(where: str, name: str) -> InputError:
    return InputError(
        f"The table has only one column ({short(name)}), and a design needs at least 2",
        where,
        "Add the other columns (a response and predictors). If the file has them, separate "
        "them with commas, semicolons, tabs or | - other separators (such as spaces) are not "
        "recognised",
    )


def build(raw: Raw, declared: dict[str, str] | None = None) -> Table:
    declared = dict(declared or {})
    names, keep = _check_header(raw)
    if raw.n_rows == 0:
        raise InputError(
            "The table has a header row but no data rows",
            raw.where,
            "Add the data below the header row",
        )
    if len(keep) < 2:
        raise one_column(raw.where, names[keep[0]] if keep else "")
    check_overrides(declared, [names[j] for j in keep], raw.where)
    data, kinds, notes = {}, {}, []
    for j in keep:
        name = names[j]
        got = infer_column(raw, j, name, declared.get(name))
        if got is None:
            continue
        values, kind, more = got
        data[name], kinds[name] = values, kind
        notes.extend(more)
        notes.extend(_facts(name, values, kind))
    if len(data) < 2:
        raise one_column(raw.where, next(iter(data), ""))
    notes = raw.notes + notes
    if isinstance(raw.index, RowNumbers) and all(
            kinds[c] == "numeric" and _plain(v) for c, v in data.items()):
        return Table.of_numbers(data, raw.index, raw.where, notes)
    import pandas as pd

    frame = pd.DataFrame(data, index=pandas_index(raw.index), copy=False)
    return Table(frame=frame, kinds=kinds, source=raw.where, notes=notes)


def _plain(values) -> bool:
    """A numeric column held as a float64 array (all a Table needs no frame for)."""
    return isinstance(values, np.ndarray) and values.dtype == np.float64 and values.ndim == 1


def _check_header(raw: Raw) -> tuple[list[str], list[int]]:
    """Stripped names and the positions of the columns to keep; InputError for bad names."""
    names = [str(n).strip() for n in raw.names]
    if any(a != b for a, b in zip(names, raw.names, strict=True)):
        raw.notes.append("Spaces around column names were removed.")
    keep, phantom = [], 0
    for j, name in enumerate(names):
        col = raw.columns[j]
        if name:
            keep.append(j)
        elif col.null_count == len(col):
            phantom += 1
        else:
            raise InputError(
                f"Column {j + 1} has data but no name in the header row",
                f"{raw.where}, header, column {j + 1}",
                "Give every column a name in the header row",
            )
    if phantom:
        raw.notes.append(f"{phantom} empty column(s) without a name were left out.")
    counts = Counter(names[j] for j in keep)
    for name, n in counts.items():
        if n > 1:
            where = [str(j + 1) for j in keep if names[j] == name]
            raise InputError(
                f"The column name {short(name)} is used {n} times (columns {', '.join(where)})",
                f"{raw.where}, header",
                "Give every column a different name",
            )
    return names, keep


def _facts(name: str, values, kind: str) -> list[str]:
    """Notes on empty, constant and code-like columns."""
    if kind == "numeric":
        v = np.asarray(values)
        lo, hi = np.fmin.reduce(v), np.fmax.reduce(v)  # NaN (missing) only if all are
        if np.isnan(lo):
            return [_empty(name)]
        if lo == hi:
            return [f"Column '{name}' is constant (every value is {number_text(lo)})."]
        # Cheap refusals first (a fraction or an 11th value among the first rows), so most
        # columns never pay for the full whole-number test and the distinct values.
        levels = _whole_levels(v) if hi < lo + 1e6 else None  # hi - lo may overflow
        if levels is not None:
            present = int(np.count_nonzero(~np.isnan(v)))
            if 3 <= len(levels) <= 10 and present >= 5 * len(levels):
                shown = ", ".join(number_text(x) for x in np.sort(levels))
                return [
                    f"Column '{name}' holds only the whole numbers {shown}; it is read as "
                    "numeric. If these are codes for groups, make it categorical."
                ]
        return []
    if kind == "categorical":
        used = list(values.categories)  # the reader keeps only categories that occur
    elif kind == "boolean":  # at most two values: two passes instead of a hash of every row
        present = ~np.asarray(values.isna())
        truth = values.to_numpy(dtype=bool, na_value=False)
        used = [v for v in (False, True) if (present & (truth == v)).any()]
    else:
        import pandas as pd

        used = pd.Series(values).dropna().unique()
    if len(used) == 0:
        return [_empty(name)]
    if len(used) == 1:
        return [f"Column '{name}' is constant (every value is {short(used[0])})."]
    return []


def _whole_levels(v: np.ndarray, most: int = 10, prefix: int = 4096) -> np.ndarray | None:
    """The distinct present values when all are whole numbers and at most `most` differ, else
    None. The first `prefix` rows are tried alone first: one fraction or one value too many
    there settles it without a pass over every row."""
    for part in (v[:prefix], v) if len(v) > prefix else (v,):
        present = part[~np.isnan(part)]
        if not (present == np.floor(present)).all():
            return None
        levels = _unique(present)
        if len(levels) > most:
            return None
    return levels


def _unique(values: np.ndarray) -> np.ndarray:
    """The distinct values in the order they first occur (what pandas.unique gives): np.unique
    with the index of each first occurrence (its sort is stable then), put back in that order."""
    _, first = np.unique(values, return_index=True)
    return values[np.sort(first)]


def _empty(name: str) -> str:
    return (
        f"Column '{name}' is empty (every value is missing); a design that uses it would "
        "have no rows left."
    )
