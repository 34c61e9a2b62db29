"""Single-column steps (center, standardize, unit_length, multiply, log, power).

Must not change roles or rows; refuses values it cannot transform, naming the first such row.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from rankscope.design.names import number_text, quoted
from rankscope.design.steps import output_name
from rankscope.design.working import Col, WorkingColumns, derived
from rankscope.tables.errors import InputError

Result = tuple[np.ndarray, str | None]


def _present(x: np.ndarray) -> np.ndarray:
    return ~np.isnan(x)


def _center(working: WorkingColumns, col: Col, step: dict[str, Any]) -> Result:
    x = col.values
    ok = _present(x)
    if not ok.any():
        return np.full_like(x, np.nan), working.trouble(f"{quoted(col.name)} has no values")
    return x - x[ok].mean(), None


def _standardize(working: WorkingColumns, col: Col, step: dict[str, Any]) -> Result:
    x = col.values
    ok = _present(x)
    if ok.sum() < 2 or x[ok].min() == x[ok].max():
        # Exact constancy: a computed sd of equal values can be a tiny non-zero number.
        shown = number_text(x[ok][0]) if ok.any() else "missing"
        problem = working.trouble(
            f"{quoted(col.name)} has no spread (every value is {shown}), "
            "so it cannot be divided by its standard deviation",
            "Use a center step instead, or drop the column",
        )
        return np.full_like(x, np.nan), problem
    return (x - x[ok].mean()) / x[ok].std(ddof=1), None


def _unit_length(working: WorkingColumns, col: Col, step: dict[str, Any]) -> Result:
    x = col.values
    ok = _present(x)
    length = float(np.linalg.norm(x[ok])) if ok.any() else 0.0
    if length == 0.0:
        problem = working.trouble(
            f"{quoted(col.name)} is all zero, so it has no length to divide by",
            "Drop the column",
        )
        return np.full_like(x, np.nan), problem
    return x / length, None


def _multiply(working: WorkingColumns, col: Col, step: dict[str, Any]) -> Result:
    return col.values * float(step["by"]), None


def _first(bad: np.ndarray) -> int | None:
    return int(np.flatnonzero(bad)[0]) if bad.any() else None


def _log(working: WorkingColumns, col: Col, step: dict[str, Any]) -> Result:
    shift = float(step.get("shift", 0))
    y = col.values + shift
    i = _first(_present(y) & (y <= 0))
    if i is not None:
        value = number_text(col.values[i])
        shifted = f" (plus the shift {number_text(shift)}: {number_text(y[i])})" if shift else ""
        raise InputError(
            f"a log needs positive values, but {quoted(col.name)} is {value}{shifted}",
            working.where(i, col),
            "Give the log step a shift that makes every value positive, or leave the log out",
        )
    base = step.get("base")
    if base is None:
        return np.log(y), None
    if base == 10:
        return np.log10(y), None
    if base == 2:
        return np.log2(y), None
    return np.log(y) / np.log(float(base)), None


def _power(working: WorkingColumns, col: Col, step: dict[str, Any]) -> Result:
    e = float(step["exponent"])
    x = col.values
    i = None if e.is_integer() else _first(_present(x) & (x < 0))
    if i is not None:
        raise InputError(
            f"a negative number has no real power {number_text(e)}, "
            f"and {quoted(col.name)} is {number_text(x[i])}",
            working.where(i, col),
            "Use a whole-number exponent, or make the column positive first",
        )
    i = _first(x == 0) if e < 0 else None
    if i is not None:
        raise InputError(
            f"0 to the negative power {number_text(e)} is infinite, and {quoted(col.name)} is 0",
            working.where(i, col),
            "Use a positive exponent, or leave the power out",
        )
    return np.power(x, e), None


COMPUTE: dict[str, Callable[[WorkingColumns, Col, dict[str, Any]], Result]] = {
    "center": _center,
    "standardize": _standardize,
    "unit_length": _unit_length,
    "multiply": _multiply,
    "log": _log,
    "power": _power,
}


def check_finite(working: WorkingColumns, inputs: list[Col], values: np.ndarray, what: str) -> None:
    """Refuse results that overflowed: the core needs finite numbers."""
    present = np.ones(len(values), dtype=bool)
    for c in inputs:
        present &= ~c.missing()
    bad = present & ~np.isfinite(values)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"{what} is too large to hold as a number",
            working.where(i, inputs[0]),
            "Rescale the columns first (a multiply or standardize step)",
        )


def place(working: WorkingColumns, col: Col, out: Col, keep: bool) -> None:
    """Put a result in place of its column, or beside it when the original is kept."""
    if keep:
        working.check_free(out.name)
        working.insert_after(col, out)
    else:
        working.check_free(out.name, replacing=(col,))
        working.replace(col, out)


def apply_single(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    """Run a single-column step; return the column it made."""
    kind = step["step"]
    col = working.number_col(step["column"], f"the {kind} step")
    values, problem = COMPUTE[kind](working, col, step)
    if problem is None:
        check_finite(working, [col], values, f"the {kind} of {quoted(col.name)}")
    out = derived(output_name(step), "numeric", values, (col,))
    out.problem = problem or out.problem
    place(working, col, out, bool(step.get("keep", False)))
    return [out]
