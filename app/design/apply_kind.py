"""The kind step: treat a column as numeric, categorical or boolean, converting its values.

Refuses values that do not convert and names the first such row; never guesses.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from rankscope.design.names import number_text, quoted
from rankscope.design.working import RESPONSE, Col, WorkingColumns, derived
from rankscope.tables.errors import InputError

EPOCH = np.datetime64("1970-01-01T00:00:00", "ns")


def number_labels(x: np.ndarray) -> np.ndarray:
    """Labels for numbers used as categories: 3 not 3.0, missing stays None."""
    return np.array([None if np.isnan(v) else number_text(v) for v in x], dtype=object)


def flag_labels(x: np.ndarray) -> np.ndarray:
    return np.array([None if np.isnan(v) else ("true" if v else "false") for v in x], dtype=object)


def days_since_epoch(x: np.ndarray) -> np.ndarray:
    """Dates as days since 1970-01-01, fractions for times of day; missing -> NaN."""
    return (x.astype("datetime64[ns]") - EPOCH) / np.timedelta64(1, "D")


def _parse_numbers(working: WorkingColumns, col: Col) -> np.ndarray:
    out = np.full(len(col.values), np.nan)
    for i, label in enumerate(col.values):
        if label is None:
            continue
        try:
            out[i] = float(label)
        except ValueError:
            out[i] = np.nan
        if not np.isfinite(out[i]):
            raise InputError(
                f"{quoted(col.name)} has the label {quoted(label)}, which is not a number",
                working.where(i, col),
                "Keep the column categorical and code it with indicators",
            )
    return out


def _refuse(col: Col, to: str, todo: str) -> InputError:
    return InputError(f"the {col.kind} column {quoted(col.name)} cannot become {to}", "", todo)


def _convert(working: WorkingColumns, col: Col, to: str) -> np.ndarray:
    if to == "categorical":
        if col.kind == "numeric":
            return number_labels(col.values)
        if col.kind == "boolean":
            return flag_labels(col.values)
        raise _refuse(col, to, "Make it numeric (days since 1970-01-01) instead")
    if to == "numeric":
        if col.kind == "boolean":
            return col.values.copy()
        if col.kind == "categorical":
            return _parse_numbers(working, col)
        working.notes.append(f"{quoted(col.name)} counts days since 1970-01-01.")
        return days_since_epoch(col.values)
    if col.kind == "numeric":
        x = col.values
        bad = ~np.isnan(x) & (x != 0) & (x != 1)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(
                f"a boolean column holds only 0 and 1, but {quoted(col.name)} is "
                f"{number_text(x[i])}",
                working.where(i, col),
                "Keep it numeric, or make it categorical",
            )
        return x.copy()
    raise _refuse(col, to, "Code a categorical column with indicators instead")


def apply_kind(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    col = working.get(step["column"])
    to = step["to"]
    if col.kind == to:
        working.notes.append(f"{quoted(col.name)} was already {to}; the kind step changed nothing.")
        return []
    if col.role == RESPONSE and to == "categorical":
        raise InputError(
            f"{quoted(col.name)} is the response, which must stay numeric",
            "",
            'Clear the response first with {"step": "response", "column": null}',
        )
    new = derived(col.name, to, _convert(working, col, to), (col,))
    working.replace(col, new)
    return [new]
