"""A linear edit never replays the recipe on the rows: the row-reading functions are blocked.

Reference: the same engine without blocking, and the from-scratch replay of the recipe.
"""

from __future__ import annotations

import pytest

import rankscope.design.recipe
import rankscope.design.replay
import rankscope.scale.start
from rankscope.design.recipe import Recipe
from rankscope.scale import EditEngine
from tests.scale.tables import random_table


class RowsTouched(Exception):
    pass


def _refuse(*args, **kwargs):
    raise RowsTouched


def block_rows(monkeypatch: pytest.MonkeyPatch) -> None:
    for module, name in ((rankscope.design.recipe, "build_design"),
                         (rankscope.design.replay, "trace_design"),
                         (rankscope.design.replay, "run_steps"),
                         (rankscope.scale.start, "trace_design"),
                         (rankscope.scale.start, "run_steps"),
                         (rankscope.scale.start, "reduce_blocks")):
        monkeypatch.setattr(module, name, _refuse)


def test_linear_edits_do_not_call_build_design(monkeypatch: pytest.MonkeyPatch) -> None:
    engine = EditEngine.build(random_table(1, 500), Recipe([{"step": "response", "column": "y"}]))
    block_rows(monkeypatch)
    for step in ({"step": "center", "column": "a"},
                 {"step": "combine", "columns": ["b", "c"], "method": "sum", "name": "bc"},
                 {"step": "indicators", "column": "g", "reference": "all"},
                 {"step": "intercept", "include": False},
                 {"step": "response", "column": "d"},
                 {"step": "drop", "column": "bc"}):
        outcome = engine.apply(step)
        assert outcome.path == "factor"
        engine = outcome.engine
    assert engine.diagnose().rank == len(engine.columns)  # diagnosable with rows blocked
    # A non-linear step does need the rows: blocked, it must fail.
    with pytest.raises(RowsTouched):
        engine.apply({"step": "log", "column": "a (centered)", "shift": 1000})
