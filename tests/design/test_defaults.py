"""The design an empty recipe makes from a table.

Reference: the defaults stated in docs/recipe.md, with values checked against pandas/numpy.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from rankscope.design.design import INTERCEPT
from rankscope.design.recipe import Recipe, build_design
from tests.design.tables import table


def frame() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "when": pd.to_datetime(["2024-01-01", "2024-01-02", "2024-01-03", "2024-01-04"]),
            "size": [1.0, 2.0, 3.0, 5.0],
            "shade": pd.Categorical(["red", "blue", "red", "green"]),
            "on": pd.array([True, False, True, True], dtype="boolean"),
            "code": pd.Categorical(["10", "9", "10", "2"]),
        }
    )


def test_defaults() -> None:
    design = build_design(table(frame()), Recipe())
    # Reference: docs/recipe.md defaults: intercept first, table order, dates left out,
    # categorical coded against the first sorted level, booleans as 0/1, no response.
    assert design.columns == [
        INTERCEPT,
        "size",
        "shade[green]",
        "shade[red]",
        "on",
        "code[9]",
        "code[10]",
    ]
    assert design.response is None and design.y is None
    assert design.rows_total == design.rows_used == 4 and design.dropped_by == {}
    assert any('date column "when"' in note for note in design.notes)
    expected = np.column_stack(
        [
            np.ones(4),  # reference: a constant column of ones
            [1.0, 2.0, 3.0, 5.0],
            # reference: pandas.get_dummies on the labels, first sorted level ("blue") removed
            pd.get_dummies(frame()["shade"], dtype=float)[["green", "red"]].to_numpy(),
            [1.0, 0.0, 1.0, 1.0],  # reference: True -> 1, False -> 0
            pd.get_dummies(frame()["code"], dtype=float)[["9", "10"]].to_numpy(),
        ]
    )
    np.testing.assert_array_equal(design.X, expected)
    # the layout the factorization reads fastest (row blocks copied out column by column)
    assert design.X.dtype == np.float64 and design.X.flags["F_CONTIGUOUS"]
    assert design.groups == {
        "shade": ["shade[green]", "shade[red]"],
        "code": ["code[9]", "code[10]"],
    }


def test_integer_codes_sort_as_numbers() -> None:
    # Reference: numeric order 2 < 9 < 10 (text order would put "10" first).
    design = build_design(table(frame()), Recipe())
    assert any('against its first level "2"' in note for note in design.notes)
