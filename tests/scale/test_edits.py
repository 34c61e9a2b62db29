"""The edit engine's designs and diagnoses equal a from-scratch build, step after step.

Reference everywhere: the from-scratch replay, build_design(table, full recipe) (the
recipe engine's own row-by-row construction) diagnosed by diagnose() on its rows.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rankscope.core import conditioning as cnd
from rankscope.core import factorize
from rankscope.core.diagnosis import diagnose_factor
from rankscope.design.design import INTERCEPT
from rankscope.design.recipe import Recipe, build_design
from rankscope.scale import EditEngine
from rankscope.tables.errors import InputError
from tests.scale.compare import assert_same, assert_same_gram, close
from tests.scale.tables import LEVELS, random_table

SINGLE = ("center", "standardize", "unit_length", "multiply")
METHODS = ("sum", "mean", "difference", "first_component")


def centering_unsettled(F) -> bool:
    """No intercept column, and either the constant is in the span (every level's indicator)
    or X is rank deficient: the core's choice between centered and uncentered VIF is then
    undefined or decided by rounding noise (Factorization.constant_in_span reads one
    diagonal entry of an unpivoted QR), on either side. Reported to the core."""
    if INTERCEPT in F.columns:
        return False
    sv = cnd.singular_values(F.R_x)
    rank = int(np.sum(sv > cnd.default_tolerance(sv[0], F.n, F.p))) if sv.size else 0
    return F.constant_in_span or rank < F.p


def check_against_scratch(engine: EditEngine) -> None:
    # Reference: the recipe replayed on the rows (build_design), factored and diagnosed by
    # the core from that X.
    d = build_design(engine.table, engine.recipe)
    assert engine.columns == d.columns
    assert engine.groups == d.groups
    assert engine.response == d.response
    assert engine.rows_used == d.rows_used
    F_ref = factorize(d.X, d.columns, d.y)
    assert_same_gram(engine.factorization().T, F_ref.T)
    if centering_unsettled(F_ref):
        # The factor comparison above and the singular values are what this case checks.
        fast = cnd.singular_values(engine.factorization().R_x)
        assert close(fast, cnd.singular_values(F_ref.R_x))
        return
    ref = diagnose_factor(F_ref, response=d.response, groups=d.groups)
    y_len = float(np.linalg.norm(d.y)) if d.y is not None else 0.0
    units = {c: y_len / float(F_ref.scales[j]) for j, c in enumerate(d.columns)}
    assert_same(engine.diagnose(), ref, units)


@st.composite
def linear_step(draw, engine: EditEngine, i: int) -> dict:
    """A random linear step on the engine's current working columns (valid or not)."""
    work = engine.working()
    numbers = [n for n, k, _ in work if k in ("numeric", "boolean")]
    dropped = [n for n, _, r in work if r == "dropped"]
    kind = draw(st.sampled_from(
        ["response", "intercept", "drop", "restore", "indicators", *SINGLE, "combine"]))
    if kind == "response":
        return {"step": "response", "column": draw(st.sampled_from([None, *numbers]))}
    if kind == "intercept":
        return {"step": "intercept", "include": draw(st.booleans())}
    if kind == "drop":
        return {"step": "drop", "column": draw(st.sampled_from([n for n, _, _ in work]))}
    if kind == "restore":
        return {"step": "restore", "column": draw(st.sampled_from(dropped or ["a"]))}
    if kind == "indicators":
        ref = draw(st.sampled_from([None, "all", *LEVELS, "zz"]))
        step = {"step": "indicators", "column": "g"}
        return step if ref is None else step | {"reference": ref}
    if kind in SINGLE:
        step = {"step": kind, "column": draw(st.sampled_from(numbers))}
        if kind == "multiply":
            step["by"] = draw(st.sampled_from([-2.5, 0.001, 3.0, 1e4]))
        if draw(st.booleans()):
            step["keep"] = True
        if draw(st.integers(0, 3)) == 0:
            step["name"] = f"n{i}"
        return step
    method = draw(st.sampled_from(METHODS))
    k = 2 if method == "difference" else draw(st.integers(2, 3))
    members = draw(st.lists(st.sampled_from(numbers), min_size=k, max_size=k, unique=True))
    return {"step": "combine", "columns": members, "method": method, "name": f"k{i}"}


@settings(max_examples=30)
@given(st.integers(0, 2**32 - 1), st.integers(20, 150), st.booleans(), st.data())
def test_random_linear_sequences_equal_scratch(seed, n, gaps, data) -> None:
    table = random_table(seed, n, gaps)
    engine = EditEngine.build(table, Recipe([{"step": "response", "column": "y"}]))
    check_against_scratch(engine)
    for i in range(data.draw(st.integers(1, 6))):
        step = data.draw(linear_step(engine, i))
        try:
            # Reference: build_design on the longer recipe decides whether the step is valid.
            build_design(table, engine.recipe.add(step))
        except InputError as e:
            with pytest.raises(InputError) as got:
                engine.apply(step)
            assert str(got.value) == str(e)
            continue
        outcome = engine.apply(step)
        engine = outcome.engine
        check_against_scratch(engine)


LINEAR_STEPS = [
    {"step": "center", "column": "a"},
    {"step": "standardize", "column": "b", "keep": True},
    {"step": "unit_length", "column": "c", "name": "c1"},
    {"step": "multiply", "column": "d", "by": 1000},
    {"step": "indicators", "column": "g", "reference": "r"},
    {"step": "combine", "columns": ["c1", "d*1000"], "method": "first_component", "name": "pc"},
    {"step": "combine", "columns": ["b", "b (standardized)"], "method": "difference",
     "name": "bd"},
    {"step": "drop", "column": "bd"},
    {"step": "restore", "column": "bd"},
    {"step": "intercept", "include": False},
    {"step": "indicators", "column": "g", "reference": "all"},
    {"step": "response", "column": "pc"},
    {"step": "response", "column": None},
    {"step": "combine", "columns": ["a (centered)", "y"], "method": "mean", "name": "ay"},
]


@pytest.mark.parametrize("gaps", [False, True])
def test_each_linear_step_takes_the_factor_path(gaps: bool) -> None:
    table = random_table(7, 80, gaps)
    engine = EditEngine.build(table, Recipe([{"step": "response", "column": "y"}]))
    for step in LINEAR_STEPS:
        outcome = engine.apply(step)
        assert outcome.path == "factor", (step, outcome.reason)
        engine = outcome.engine
        check_against_scratch(engine)


@pytest.mark.parametrize("step", [
    {"step": "log", "column": "a", "shift": 100},
    {"step": "power", "column": "b", "exponent": 2},
    {"step": "product", "columns": ["a", "b"], "name": "ab"},
    {"step": "combine", "columns": ["a", "b"], "method": "ratio", "name": "r"},
    {"step": "kind", "column": "g", "to": "numeric"},
    {"step": "missing", "column": "m", "policy": "drop_column"},
    {"step": "drop", "column": "m"},  # rows missing m are no longer deleted
], ids=lambda s: s["step"])
def test_other_steps_rebuild_and_still_equal_scratch(step: dict) -> None:
    table = random_table(3, 60, gaps=True)
    table.frame["g"] = table.frame["g"].cat.rename_categories(["1", "2", "3", "4"])
    engine = EditEngine.build(table, Recipe([{"step": "response", "column": "y"}]))
    outcome = engine.apply(step)
    assert outcome.path == "rebuild" and outcome.reason
    check_against_scratch(outcome.engine)


def test_states_are_immutable_and_undo_is_the_old_state() -> None:
    table = random_table(11, 50)
    engine = EditEngine.build(table, Recipe([{"step": "response", "column": "y"}]))
    before = engine.factorization().T.copy()
    after = engine.apply({"step": "center", "column": "a"}).engine
    assert engine.columns == ["(intercept)", "a", "b", "c", "d", "g[q]", "g[r]", "g[s]", "on"]
    assert (engine.factorization().T == before).all()
    assert "a (centered)" in after.columns
    assert after.undo().columns == engine.columns
    check_against_scratch(after.undo())


def test_errors_are_the_recipe_errors() -> None:
    table = random_table(5, 40)
    engine = EditEngine.build(table, Recipe([{"step": "response", "column": "y"}]))
    for step in ({"step": "drop", "column": "y"}, {"step": "center", "column": "g"},
                 {"step": "center", "column": "nope"},
                 {"step": "combine", "columns": ["a", "y"], "method": "sum", "name": "s"},
                 {"step": "multiply", "column": "a", "by": 2, "name": "b"},
                 {"step": "indicators", "column": "g", "reference": "zz"}):
        # Reference: the message build_design gives for the same recipe.
        with pytest.raises(InputError) as want:
            build_design(table, engine.recipe.add(step))
        with pytest.raises(InputError) as got:
            engine.apply(step)
        assert str(got.value) == str(want.value)
