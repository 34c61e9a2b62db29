"""Steps that choose roles and positions: response, intercept, drop, restore, keep, order.

Reference: the rules in docs/recipe.md; values compared with numpy where numbers move.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from rankscope.design.design import INTERCEPT
from rankscope.design.recipe import Recipe, build_design
from tests.design.tables import table


def data() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "a": [1.0, 2.0, 3.0, 4.0, 6.0],
            "b": [2.0, 1.0, 4.0, 3.0, 5.0],
            "y": [0.5, 1.5, 2.5, 3.0, 4.5],
            "c": pd.Categorical(["u", "v", "u", "w", "v"]),
            "d": [9.0, 7.0, 8.0, 6.0, 1.0],
        }
    )


def build(*steps: dict):
    return build_design(table(data()), Recipe(list(steps)))


def test_response_leaves_the_predictors() -> None:
    design = build({"step": "response", "column": "y"})
    assert design.response == "y" and "y" not in design.columns
    np.testing.assert_array_equal(design.y, data()["y"])  # reference: the column itself


def test_changing_and_clearing_the_response() -> None:
    design = build({"step": "response", "column": "y"}, {"step": "response", "column": "a"})
    # Reference: docs/recipe.md, the previous response becomes a predictor again.
    assert design.response == "a" and "y" in design.columns and "a" not in design.columns
    cleared = build({"step": "response", "column": "y"}, {"step": "response", "column": None})
    assert cleared.response is None and cleared.y is None and "y" in cleared.columns


def test_log_of_the_response_stays_the_response() -> None:
    design = build({"step": "response", "column": "y"}, {"step": "log", "column": "y"})
    assert design.response == "log(y)"
    np.testing.assert_allclose(design.y, np.log(data()["y"]))  # reference: numpy.log


def test_intercept_off_and_on() -> None:
    off = build({"step": "intercept", "include": False})
    assert INTERCEPT not in off.columns and not off.intercept
    on = build({"step": "intercept", "include": False}, {"step": "intercept", "include": True})
    assert on.columns[0] == INTERCEPT


def test_drop_and_restore() -> None:
    dropped = build({"step": "drop", "column": "c"}, {"step": "drop", "column": "b"})
    assert dropped.columns == [INTERCEPT, "a", "y", "d"] and dropped.groups == {}
    restored = build({"step": "drop", "column": "b"}, {"step": "restore", "column": "b"})
    # Reference: restore puts the column back in its table position.
    assert restored.columns.index("b") == 2


def test_column_order_with_new_columns() -> None:
    design = build(
        {"step": "product", "columns": ["b", "a"], "name": "ba"},
        {"step": "power", "column": "b", "exponent": 2, "keep": True},
        {"step": "product", "columns": ["a", "d"], "name": "ad"},
        {"step": "combine", "columns": ["d", "a"], "method": "sum", "name": "da"},
        {"step": "center", "column": "y"},
    )
    # Reference: docs/recipe.md, new columns sit after their first member, in the order made;
    # combine takes the first listed member's place; a replaced column keeps its place.
    assert design.columns == [
        INTERCEPT,
        "ad",
        "b",
        "ba",
        "b^2",
        "y (centered)",
        "c[v]",
        "c[w]",
        "da",
    ]


def test_keep_places_the_result_beside_the_original() -> None:
    design = build({"step": "standardize", "column": "a", "keep": True})
    assert design.columns[1:3] == ["a", "a (standardized)"]
    a = data()["a"].to_numpy()
    # Reference: numpy (x - mean) / std(ddof=1); the original column is untouched.
    np.testing.assert_allclose(design.X[:, 2], (a - a.mean()) / a.std(ddof=1))
    np.testing.assert_array_equal(design.X[:, 1], a)


def test_rename_in_place_with_the_same_name() -> None:
    design = build({"step": "multiply", "column": "a", "by": 0.001, "name": "a"})
    np.testing.assert_allclose(design.X[:, 1], data()["a"] * 0.001)  # reference: numpy
    assert design.columns[1] == "a"


def test_combine_may_reuse_a_member_name() -> None:
    design = build({"step": "combine", "columns": ["a", "b"], "method": "mean", "name": "b"})
    assert design.columns[:3] == [INTERCEPT, "b", "y"]
    # Reference: arithmetic mean of the two columns.
    np.testing.assert_allclose(design.X[:, 1], (data()["a"] + data()["b"]) / 2)


def test_groups_follow_renames_and_drops() -> None:
    design = build(
        {"step": "indicators", "column": "c", "reference": "v"},
        {"step": "intercept", "include": False},
    )
    assert design.groups == {"c": ["c[u]", "c[w]"]}
    single = build_design(
        table(pd.DataFrame({"c": pd.Categorical(["k", "k"]), "x": [1.0, 2.0]})), Recipe()
    )
    # Reference: a single level against itself leaves no column (nothing to contrast).
    assert single.columns == [INTERCEPT, "x"] and single.groups == {}
    assert any("single level" in note for note in single.notes)


def test_kind_step_that_changes_nothing_is_noted() -> None:
    design = build({"step": "kind", "column": "a", "to": "numeric"})
    assert any("already numeric" in note for note in design.notes)
