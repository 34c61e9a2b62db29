"""The default check that an edit makes sense on a session's current state: replay the recipe.

Calls the recipe's own replay; computes nothing itself and reads or writes nothing.
"""

from __future__ import annotations

from typing import Protocol

from rankscope.design.names import quoted
from rankscope.design.recipe import Recipe, build_design
from rankscope.store.history import Change, Folded
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table


class Check(Protocol):
    """Raise InputError when `change` cannot be made on top of `before`."""

    def __call__(self, table: Table, before: Folded, change: Change) -> None: ...


def replay_check(table: Table, before: Folded, change: Change) -> None:
    """A step must build on the table after the steps in force; a basis choice must name a
    column the design has now; a ridge penalty was already checked for shape."""
    if change.kind == "step":
        build_design(table, Recipe([*before.steps, change.payload]))
    elif change.kind == "recipe":  # an import: its steps replayed once, all together
        build_design(table, Recipe([*before.steps, *change.payload["steps"]]))
    elif change.kind == "keep":
        column = change.payload["column"]
        if column not in build_design(table, before.recipe).columns:
            raise InputError(
                f"{quoted(column)} is not a column of the design, so it cannot be kept first",
                "basis choice", "Choose a column the design has")
