"""Random recipes on random tables: they apply or fail with InputError, nothing else.

References: the Design contract (app/design/design.py), numpy, pandas, Python's json module.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rankscope.design.design import INTERCEPT, Design
from rankscope.design.recipe import Recipe, build_design
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table
from tests.design.strategies import tables, tables_and_steps

SETTINGS = settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def check_design(design: Design, tab: Table) -> None:
    n, p = design.X.shape
    # Reference: the Design docstring: float64, no missing values, one name per column.
    assert design.X.dtype == np.float64 and np.isfinite(design.X).all()
    assert len(design.columns) == p == len(set(design.columns)) and p > 0
    assert design.rows_total == tab.n_rows and n == design.rows_used > 0
    assert sum(design.dropped_by.values()) == design.rows_total - design.rows_used
    assert set(design.dropped_by) <= set(tab.columns)
    if INTERCEPT in design.columns:
        assert design.columns.index(INTERCEPT) == 0
        np.testing.assert_array_equal(design.X[:, 0], 1.0)
    for members in design.groups.values():
        assert members and set(members) <= set(design.columns)
        block = design.X[:, [design.columns.index(m) for m in members]]
        assert set(np.unique(block)) <= {0.0, 1.0}  # indicators: each entry 0 or 1
        assert (block.sum(axis=1) <= 1).all()  # at most one level per row
    if design.y is not None:
        assert design.y.shape == (n,) and np.isfinite(design.y).all()


@SETTINGS
@given(tables_and_steps())
def test_random_recipes_apply_or_explain(case: tuple[Table, list[dict]]) -> None:
    tab, steps = case
    try:
        design = build_design(tab, Recipe(steps))
    except InputError as e:
        # Reference: app/tables/errors.py, an InputError says what is wrong.
        assert e.what.strip() and str(e).strip()
        return
    check_design(design, tab)
    again = build_design(tab, Recipe.from_json(Recipe(steps).to_json()))
    assert again.X.tobytes() == design.X.tobytes()  # replay after a JSON round trip


@SETTINGS
@given(tables_and_steps())
def test_valid_recipes_survive_json(case: tuple[Table, list[dict]]) -> None:
    _, steps = case
    try:
        recipe = Recipe(steps)
    except InputError:
        return
    # Reference: json.loads(json.dumps(v)) == v for JSON values.
    assert Recipe.from_json(recipe.to_json()) == recipe
    assert Recipe.from_json(recipe.to_json()).steps == steps


@SETTINGS
@given(tables(with_bool=False))
def test_default_design_matches_pandas(tab: Table) -> None:
    try:
        design = build_design(tab, Recipe())
    except InputError:
        return
    # Reference: pandas: dropna for listwise deletion, get_dummies(drop_first=True) on the
    # kept rows for categorical columns (levels here are letters, so text order is the order).
    kept = tab.frame.dropna()
    parts = [np.ones((len(kept), 1))]
    for name in tab.columns:
        if tab.kinds[name] == "numeric":
            parts.append(kept[[name]].to_numpy(dtype=float))
        else:
            labels = kept[name].astype(str)
            parts.append(pd.get_dummies(labels, drop_first=True, dtype=float).to_numpy())
    np.testing.assert_array_equal(design.X, np.hstack(parts))


@SETTINGS
@given(tables(with_bool=False), st.sampled_from(["center", "standardize", "unit_length"]))
def test_scaling_matches_numpy_on_kept_rows(tab: Table, step: str) -> None:
    try:
        design = build_design(tab, Recipe([{"step": step, "column": "x1", "name": "s"}]))
    except InputError:
        return
    x = tab.frame.dropna()["x1"].to_numpy()
    # Reference: numpy on the rows pandas.dropna keeps: x - mean, (x - mean)/std(ddof=1),
    # x / numpy.linalg.norm(x).
    ref = {
        "center": lambda: x - x.mean(),
        "standardize": lambda: (x - x.mean()) / x.std(ddof=1),
        "unit_length": lambda: x / np.linalg.norm(x),
    }[step]()
    np.testing.assert_allclose(design.X[:, design.columns.index("s")], ref, rtol=1e-9, atol=1e-12)
