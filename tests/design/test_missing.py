"""Missing values: listwise deletion, its counts, the drop_column policy, statistics on kept rows.

References: pandas.DataFrame.dropna for the rows kept, numpy for the statistics.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from rankscope.design.recipe import Recipe, build_design
from rankscope.tables.errors import InputError
from tests.design.tables import table

NAN = np.nan


def data() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "y": [1.0, 2.0, NAN, 4.0, 5.0, 6.0, 7.0, 8.0],
            "a": [1.0, NAN, NAN, 4.0, 2.0, 3.0, 9.0, 5.0],
            "b": [3.0, 1.0, 2.0, NAN, 4.0, 6.0, 5.0, 7.0],
            "c": pd.Categorical(["p", "q", "p", "q", None, "p", "q", "p"]),
            "m": [NAN] * 6 + [1.0, 2.0],
        }
    )


def build(*steps: dict):
    return build_design(table(data()), Recipe([{"step": "response", "column": "y"}, *steps]))


def test_listwise_deletion_matches_dropna() -> None:
    design = build({"step": "drop", "column": "m"})
    # Reference: pandas dropna over the used columns keeps the same rows.
    kept = data().dropna(subset=["y", "a", "b", "c"])
    assert design.rows_total == 8 and design.rows_used == len(kept) == 4
    np.testing.assert_array_equal(design.y, kept["y"])
    np.testing.assert_array_equal(design.X[:, design.columns.index("a")], kept["a"])
    # Each deleted row counts once, under its first missing column in table order
    # (data row 2 misses y and a: it counts for y). Counted by hand from data().
    assert design.dropped_by == {"y": 1, "a": 1, "b": 1, "c": 1}
    assert sum(design.dropped_by.values()) == design.rows_total - design.rows_used
    assert any("Deleted 4 of 8 rows" in note for note in design.notes)


def test_unused_columns_do_not_delete_rows() -> None:
    design = build(
        {"step": "drop", "column": "m"},
        {"step": "drop", "column": "a"},
        {"step": "drop", "column": "c"},
    )
    # Reference: pandas dropna over y and b only.
    assert design.rows_used == len(data().dropna(subset=["y", "b"])) == 6


def test_drop_column_policy() -> None:
    design = build({"step": "missing", "column": "m", "policy": "drop_column"})
    assert "m" not in design.columns
    assert design.rows_used == len(data().dropna(subset=["y", "a", "b", "c"]))  # reference: dropna
    assert any('Left out "m"' in note and "6 row(s)" in note for note in design.notes)
    back = build(
        {"step": "missing", "column": "m", "policy": "drop_column"},
        {"step": "missing", "column": "m", "policy": "delete_rows"},
    )
    assert "m" in back.columns and back.rows_used == len(data().dropna()) == 2  # reference: dropna


def test_drop_column_policy_acts_only_on_missing_values() -> None:
    design = build(
        {"step": "missing", "column": "b", "policy": "drop_column"},
        {"step": "drop", "column": "m"},
    )
    assert "b" not in design.columns  # b misses one value, so it is left out
    assert design.rows_used == len(data().dropna(subset=["y", "a", "c"]))  # reference: dropna
    complete = build_design(
        table(pd.DataFrame({"x": [1.0, 2.0, 3.0]})),
        Recipe([{"step": "missing", "column": "x", "policy": "drop_column"}]),
    )
    # Reference: docs/recipe.md, the policy only acts when the column has missing values.
    assert "x" in complete.columns


def test_statistics_use_the_kept_rows() -> None:
    design = build({"step": "drop", "column": "m"}, {"step": "standardize", "column": "a"})
    x = design.X[:, design.columns.index("a (standardized)")]
    # Reference: numpy mean and std(ddof=1) of the column in X: 0 and 1 after deletion.
    assert np.mean(x) == pytest.approx(0.0, abs=1e-12)
    assert np.std(x, ddof=1) == pytest.approx(1.0)


def test_unused_column_that_becomes_constant_does_not_fail() -> None:
    # On the kept rows m is constant, but m is dropped, so the design does not need it.
    design = build(
        {"step": "standardize", "column": "m"},
        {"step": "drop", "column": "m (standardized)"},
        {"step": "drop", "column": "a"},
    )
    assert design.rows_used == 5


def test_reference_level_gone_after_deletion_is_an_error() -> None:
    frame = pd.DataFrame({"c": pd.Categorical(["r", "s", "s"]), "x": [NAN, 1.0, 2.0]})
    with pytest.raises(InputError) as e:
        build_design(
            table(frame), Recipe([{"step": "indicators", "column": "c", "reference": "r"}])
        )
    assert "rows kept" in str(e.value) and '"r"' in str(e.value)


def test_no_rows_left() -> None:
    frame = pd.DataFrame({"x": [NAN, 1.0], "z": [2.0, NAN]})
    with pytest.raises(InputError) as e:
        build_design(table(frame), Recipe())
    assert "no rows are left" in str(e.value) and "drop_column" in e.value.todo


def test_missing_categorical_and_boolean_delete_rows() -> None:
    frame = pd.DataFrame(
        {
            "c": pd.Categorical(["p", None, "q", "p"]),
            "f": pd.array([True, False, None, False], dtype="boolean"),
            "x": [1.0, 2.0, 3.0, 4.0],
        }
    )
    design = build_design(table(frame), Recipe())
    # Reference: pandas dropna on all columns keeps rows 0 and 3.
    assert design.rows_used == len(frame.dropna()) == 2
    assert design.dropped_by == {"c": 1, "f": 1}


def test_used_column_constant_on_kept_rows_is_an_error() -> None:
    frame = pd.DataFrame({"s": [1.0, 2.0, 2.0], "x": [NAN, 1.0, 3.0]})
    with pytest.raises(InputError) as e:
        build_design(table(frame), Recipe([{"step": "standardize", "column": "s"}]))
    # Reference: on the kept rows s is 2, 2; a constant has standard deviation 0.
    assert "rows kept" in e.value.what and "no spread" in e.value.what
