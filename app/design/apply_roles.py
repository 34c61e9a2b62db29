"""Role steps (response, intercept, drop, restore, indicators, missing): what a column is for.

Must not change any values; refuses a change that makes no sense and says why.
"""

from __future__ import annotations

from typing import Any

from rankscope.design.names import level_order, quoted, suggestion
from rankscope.design.steps import ALL_LEVELS
from rankscope.design.working import DROPPED, PREDICTOR, RESPONSE, Col, WorkingColumns
from rankscope.tables.errors import InputError

_CLEAR = '{"step": "response", "column": null}'


def apply_response(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    """Make a column the response; the previous response becomes a predictor again."""
    current = working.response()
    name = step["column"]
    new = None if name is None else working.number_col(name, "the response")
    if new is not None and new.on_missing == "drop_column":
        raise InputError(
            f"{quoted(new.name)} is set to be left out when missing; a response cannot be",
            "",
            f'First set {{"step": "missing", "column": "{new.name}", "policy": "delete_rows"}}',
        )
    if current is not None:
        current.role = PREDICTOR
    if new is not None:
        new.role = RESPONSE
    return []


def apply_intercept(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    working.intercept = bool(step["include"])
    return []


def _not_response(col: Col, action: str) -> None:
    if col.role == RESPONSE:
        raise InputError(
            f"{quoted(col.name)} is the response, so there is no predictor to {action}",
            "",
            f"Clear the response first with {_CLEAR}",
        )


def apply_drop(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    col = working.get(step["column"])
    _not_response(col, "drop")
    if col.role == DROPPED:
        raise InputError(f"{quoted(col.name)} is already dropped", "", "Remove this step")
    col.role = DROPPED
    return []


def apply_restore(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    col = working.get(step["column"])
    _not_response(col, "restore")
    if col.role != DROPPED:
        todo = "Remove this step"
        if col.on_missing == "drop_column":
            todo = (
                f"If it is missing from the design, its missing policy leaves it out: use "
                f'{{"step": "missing", "column": "{col.name}", "policy": "delete_rows"}}'
            )
        raise InputError(
            f"{quoted(col.name)} is not dropped, so there is nothing to restore", "", todo
        )
    col.role = PREDICTOR
    return []


def levels_of(col: Col) -> list[str]:
    """The levels a categorical column takes on the rows held, in sorted order."""
    return level_order(set(col.values[~col.missing()]))


def apply_indicators(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    col = working.get(step["column"])
    if col.kind != "categorical":
        raise InputError(
            f"indicators code categorical columns, and {quoted(col.name)} is {col.kind}",
            "",
            f'Use {{"step": "kind", "column": "{col.name}", "to": "categorical"}} first',
        )
    reference = step.get("reference")
    if reference not in (None, ALL_LEVELS):
        levels = levels_of(col)
        if reference not in levels:
            problem = working.trouble(
                f"{quoted(col.name)} has no level {quoted(reference)}",
                suggestion(str(reference), levels) + f', or "{ALL_LEVELS}" to keep every level',
            )
            col.problem = col.problem or problem
    col.reference = reference
    return []


def apply_missing(working: WorkingColumns, step: dict[str, Any]) -> list[Col]:
    col = working.get(step["column"])
    if col.role == RESPONSE and step["policy"] == "drop_column":
        raise InputError(
            f"{quoted(col.name)} is the response: rows missing it are always deleted",
            "",
            "Set the policy on a predictor instead",
        )
    col.on_missing = step["policy"]
    return []
