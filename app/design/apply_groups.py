"""Steps that make one column from several: product (members stay) and combine (members go).

Builds columns only; the principal component here is a way to build one column, not a diagnosis.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from rankscope.design.apply_columns import check_finite
from rankscope.design.names import number_text, quoted
from rankscope.design.working import PREDICTOR, RESPONSE, Col, WorkingColumns, derived
from rankscope.tables.errors import InputError


def apply_product(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    """Add a*b right after a (after any columns already made beside a)."""
    a_name, b_name = step["columns"]
    a = working.number_col(a_name, "a product")
    b = working.number_col(b_name, "a product")
    values = a.values * b.values
    check_finite(working, [a, b], values, f"the product of {quoted(a.name)} and {quoted(b.name)}")
    out = derived(step["name"], "numeric", values, (a,) if a is b else (a, b))
    working.check_free(out.name)
    working.insert_after(a, out)
    return [out]


def _ratio(working: WorkingColumns, a: Col, b: Col) -> np.ndarray:
    zero = b.values == 0
    if zero.any():
        i = int(np.flatnonzero(zero)[0])
        raise InputError(
            f"the ratio divides by {quoted(b.name)}, which is 0 here",
            working.where(i, b),
            "Use a difference, or swap the columns if the other one is never 0",
        )
    return a.values / b.values


def _first_component(working: WorkingColumns, members: list[Col], name: str
                     ) -> tuple[np.ndarray, str | None]:
    """Scores on the first principal component of the standardized members.

    Standardized with the sample standard deviation (ddof=1) over rows where no member is
    missing. The sign is fixed so the largest weight is positive, making replays identical.
    """
    X = np.column_stack([m.values for m in members])
    complete = ~np.isnan(X).any(axis=1)
    scores = np.full(len(X), np.nan)
    if complete.sum() < 2:
        return scores, working.trouble(
            f"the first component needs at least 2 rows where {name}'s members all have values"
        )
    Xc = X[complete]
    flat = [
        m for m, lo, hi in zip(members, Xc.min(axis=0), Xc.max(axis=0), strict=True) if lo == hi
    ]
    if flat:
        return scores, working.trouble(
            f"{quoted(flat[0].name)} is constant, so it cannot be standardized for the component",
            "Leave it out of the group",
        )
    Z = (Xc - Xc.mean(axis=0)) / Xc.std(axis=0, ddof=1)
    try:
        if not np.isfinite(Z).all():
            raise np.linalg.LinAlgError("values too large to standardize")
        _, s, vt = np.linalg.svd(Z, full_matrices=False)
    except np.linalg.LinAlgError:
        return scores, working.trouble(
            f"the first component of {quoted(name)}'s members could not be computed "
            "(values too large or too uneven)",
            "Rescale the members first (a multiply or standardize step)",
        )
    weights = vt[0] * np.sign(vt[0][np.argmax(np.abs(vt[0]))])
    scores[complete] = Z @ weights
    share = float(s[0] ** 2 / np.sum(s**2))
    listed = ", ".join(
        f"{quoted(m.name)} {number_text(round(w, 3))}"
        for m, w in zip(members, weights, strict=True)
    )
    working.notes.append(
        f"{quoted(name)} is the first principal component of its standardized members; "
        f"it carries {share:.0%} of their variance (weights: {listed})."
    )
    return scores, None


def apply_combine(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    """Replace the members by one column at the first listed member's position."""
    members = [working.number_col(n, "combine") for n in step["columns"]]
    for m in members:
        if m.role == RESPONSE:
            raise InputError(
                f"{quoted(m.name)} is the response and cannot be combined into a predictor",
                "",
                'Choose another response first ({"step": "response", "column": null} clears it)',
            )
    name = step["name"]
    working.check_free(name, replacing=tuple(members))  # members go away: their names are free
    method = step["method"]
    values = np.column_stack([m.values for m in members])
    problem = None
    if method == "sum":
        result = values.sum(axis=1)
    elif method == "mean":
        result = values.mean(axis=1)
    elif method == "difference":
        result = members[0].values - members[1].values
    elif method == "ratio":
        result = _ratio(working, members[0], members[1])
    else:
        result, problem = _first_component(working, members, name)
    if problem is None:
        check_finite(working, members, result, f"the {method} of the group {quoted(name)}")
    out = derived(name, "numeric", result, tuple(members))
    out.problem = problem or out.problem
    first = members[0]
    working.replace(first, out)
    out.role = PREDICTOR
    out.on_missing = "delete_rows"
    for m in members[1:]:
        working.cols.remove(m)
    for c in working.cols:
        if c.anchor in members:
            c.anchor = out
    return [out]
