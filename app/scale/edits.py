"""The edit engine: factor a design once, then apply recipe steps to the small factor.

Linear steps never touch rows; anything else is replayed from the table. States are immutable.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any, Literal

from rankscope.core.diagnosis import Diagnosis, diagnose_factor
from rankscope.core.factor import Factorization
from rankscope.design.design import Design
from rankscope.design.recipe import Recipe
from rankscope.scale.ledger import Layout, Ledger, Rebuild
from rankscope.scale.linear import State, apply_linear
from rankscope.scale.start import start
from rankscope.scale.store import Store
from rankscope.tables.table import Table

Path = Literal["factor", "rebuild"]


@dataclass(frozen=True)
class Outcome:
    """The result of one edit.

    engine: the state after the edit (undo: keep using the previous engine).
    path: "factor" when the small factor alone was edited, "rebuild" when the recipe was
        replayed on the table; reason says why a rebuild was needed.
    design: the rebuilt Design (rebuild path only).
    """

    engine: EditEngine
    path: Path
    reason: str | None = None
    design: Design | None = None

    @property
    def factorization(self) -> Factorization:
        return self.engine.factorization()

    @property
    def layout(self) -> Layout:
        return self.engine.layout


@dataclass(frozen=True)
class EditEngine:
    """A table, the recipe so far, and the factor of every column an edit may show.

    Create with EditEngine.build(table, recipe). `apply(step)` returns an Outcome whose
    engine includes the step; the engine it was called on is unchanged.
    """

    table: Table
    recipe: Recipe
    ledger: Ledger
    store: Store
    layout: Layout
    with_missing: frozenset[str]  # table columns with a missing value somewhere
    next_key: int
    rows_total: int
    rows_used: int

    @classmethod
    def build(cls, table: Table, recipe: Recipe | None = None) -> EditEngine:
        """Replay the recipe on the table and factor it (the one pass over the rows)."""
        engine, _ = cls.build_with_design(table, recipe or Recipe())
        return engine

    @classmethod
    def build_with_design(cls, table: Table, recipe: Recipe) -> tuple[EditEngine, Design]:
        """As build, also returning the Design the replay made (X and y on the rows)."""
        s = start(table, recipe)
        engine = cls(
            table=table, recipe=recipe, ledger=s.ledger, store=s.store,
            layout=s.ledger.layout(s.with_missing), with_missing=s.with_missing,
            next_key=s.next_key, rows_total=s.design.rows_total, rows_used=s.design.rows_used,
        )
        return engine, s.design

    # ---- what the current design is --------------------------------------------------------
    @property
    def columns(self) -> list[str]:
        return list(self.layout.columns)

    @property
    def groups(self) -> dict[str, list[str]]:
        return {g: list(c) for g, c in self.layout.groups.items()}

    @property
    def response(self) -> str | None:
        return self.layout.response

    def working(self) -> list[tuple[str, str, str]]:
        """(name, kind, role) of every working column, in recipe order."""
        return [(e.name, e.kind, e.role) for e in self.ledger.entries]

    def factorization(self) -> Factorization:
        """The factor of [1, X, y] for the current design, from the held factor (no rows)."""
        return replace(self.store.ws.factorization(), columns=self.columns)

    def diagnose(self, **options: Any) -> Diagnosis:
        """diagnose_factor on the current design, with its response name and groups."""
        return diagnose_factor(self.factorization(), response=self.response,
                               groups=self.groups, **options)

    # ---- edits ------------------------------------------------------------------------------
    def apply(self, step: dict[str, Any]) -> Outcome:
        """The design after one more recipe step.

        Raises InputError exactly when build_design(table, recipe + [step]) does.
        """
        recipe = self.recipe.add(step)  # validates the step's shape
        step = recipe.steps[-1]
        try:
            return Outcome(self._on_factor(recipe, step), "factor")
        except Rebuild as why:
            engine, design = self.build_with_design(self.table, recipe)
            return Outcome(engine, "rebuild", why.reason, design)

    def undo(self) -> EditEngine:
        """The recipe without its last step, replayed (a kept previous engine is cheaper)."""
        return self.build_with_design(self.table, self.recipe.without_last())[0]

    def _on_factor(self, recipe: Recipe, step: dict[str, Any]) -> EditEngine:
        state = State(self.ledger, self.store, self.next_key, self.rows_total)
        state = apply_linear(state, step)
        layout = state.ledger.layout(self.with_missing)
        if layout.used & self.with_missing != self.layout.used & self.with_missing:
            # Listwise deletion would keep other rows; statistics must be recomputed on them.
            raise Rebuild("the rows used change")
        store = state.store.shown(layout.visible, layout.response_id)
        return replace(self, recipe=recipe, ledger=state.ledger, store=store, layout=layout,
                       next_key=state.next_key)
