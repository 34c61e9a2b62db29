"""Where a session's factor comes from: its rows in memory, or a dataset reduced once (streamed
or on Dask). Each source answers two questions only, the same way; no web, no store here.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from rankscope.core.factor import Factorization
from rankscope.design.recipe import Recipe
from rankscope.scale.edits import EditEngine
from rankscope.scale.ledger import Layout, Ledger
from rankscope.scale.reduced import Reduced
from rankscope.scale.reduced_steps import fold, takes_without_rows
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

#: What a page says about everything a factor without rows cannot give.
NO_ROWS_NOTE = ("Reduced without holding the rows: this analysis comes from the dataset's "
                "small factor, not from its rows, so there are no Spearman correlations and "
                "no residuals of the relations on the rows. Keep choices, the ridge penalty, "
                "dropping or restoring a column, the intercept, and the linear steps center, "
                "standardize, unit_length, multiply and combine (sum, mean, difference) work; "
                "other changes need the rows and are not available.")


@dataclass(frozen=True)
class Factored:
    """The factor of a recipe's design, how the design is laid out, its working columns
    (ledger), the rows counted and the notes the design comes with."""

    F: Factorization
    layout: Layout
    ledger: Ledger
    rows_total: int
    rows_used: int
    notes: list[str]


@dataclass(frozen=True)
class RowsSource:
    """A table held in memory: every step can be taken, from the rows when it needs them."""

    rows: Table
    engine: str = "memory"

    def factor_for(self, recipe: list[dict[str, Any]]) -> Factored:
        """The recipe replayed on the rows and factored (the one pass over the rows)."""
        engine, design = EditEngine.build_with_design(self.rows, Recipe(recipe))
        return Factored(engine.factorization(), engine.layout, engine.ledger,
                        design.rows_total, design.rows_used, list(design.notes))

    def takes_without_rows(self, step: dict[str, Any]) -> bool:
        return takes_without_rows(step)


@dataclass(frozen=True)
class ReducedSource:
    """A dataset reduced to its factor (streamed or on Dask); its rows stay where they are."""

    reduced: Reduced
    rows: None = None

    @property
    def engine(self) -> str:
        return self.reduced.engine

    def factor_for(self, recipe: list[dict[str, Any]]) -> Factored:
        """The reduced factor with the recipe's steps taken on it; InputError for a step
        that needs the rows."""
        folded = fold(self.reduced, recipe)
        lay = self.reduced.info.layout
        return Factored(folded.F, folded.layout, folded.ledger, lay.rows_total, lay.rows_used,
                        [NO_ROWS_NOTE, *lay.notes])

    def takes_without_rows(self, step: dict[str, Any]) -> bool:
        return takes_without_rows(step)


#: How to serve a reduced dataset again, by engine.
AGAIN = {"dask": "rankscope serve DIR --engine dask",
         "stream": "rankscope serve FILE --engine stream"}


@dataclass(frozen=True)
class UnkeptSource:
    """A session reduced by a rankscope that did not keep factors: only its schema is left."""

    engine: str
    rows: None = None

    def factor_for(self, recipe: list[dict[str, Any]]) -> Factored:
        raise InputError("this session was reduced before rankscope kept reduced factors; its "
                         "factor is not kept", "session",
                         f"Serve the dataset again with {AGAIN[self.engine]}")

    def takes_without_rows(self, step: dict[str, Any]) -> bool:
        return takes_without_rows(step)


#: A session's source of its factor.
Source = RowsSource | ReducedSource | UnkeptSource
