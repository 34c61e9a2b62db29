"""Steps that cannot apply: each raises InputError saying why, where, and what to do.

References: the math fact beside each case; rows follow app/tables/errors.py (header = row 1).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from rankscope.design.recipe import Recipe, build_design
from rankscope.tables.errors import InputError
from tests.design.tables import table


def data() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "price": [3.0, 2.0, -1.0, 4.0, 0.0],
            "income": [1.0, 0.0, 2.0, 5.0, 3.0],
            "y": [1.0, 2.0, 3.0, 4.0, 5.0],
            "flat": [7.0, 7.0, 7.0, 7.0, 7.0],
            "shade": pd.Categorical(["red", "blue", "red", "green", "blue"]),
            "label": pd.Categorical(["1", "2", "x3", "4", "5"]),
        }
    )


def fails(*steps: dict) -> InputError:
    with pytest.raises(InputError) as e:
        build_design(table(data(), "shop.csv"), Recipe(list(steps)))
    assert str(e.value).strip()
    return e.value


def test_log_of_non_positive_names_row_and_value() -> None:
    e = fails({"step": "response", "column": "y"}, {"step": "log", "column": "price"})
    # Reference: log is defined for positive numbers only; -1 is data position 2 -> row 4.
    assert '"price" is -1' in e.what
    assert e.where == 'recipe step 2 (log), shop.csv, row 4, column "price"'
    assert "shift" in e.todo


def test_log_shift_that_is_too_small() -> None:
    e = fails({"step": "log", "column": "price", "shift": 1})
    # Reference: -1 + 1 = 0 and log(0) is undefined (minus infinity).
    assert "row 4" in e.where and "plus the shift 1: 0" in e.what


def test_unknown_column_lists_close_matches() -> None:
    e = fails({"step": "drop", "column": "prices"})
    # Reference: the brief asks for close matches; "price" is one letter away.
    assert 'no column named "prices"' in e.what and '"price"' in e.todo


def test_unknown_column_in_other_case() -> None:
    e = fails({"step": "center", "column": "Income"})
    assert e.todo.startswith('Close matches: "income"')  # same letters, other case first


def test_indicator_name_is_explained() -> None:
    e = fails({"step": "drop", "column": "shade[red]"})
    assert "indicators step" in e.todo  # indicator columns are not working columns


def test_power_of_negative_with_fractional_exponent() -> None:
    e = fails({"step": "power", "column": "price", "exponent": 0.5})
    # Reference: (-1) ** 0.5 is not a real number.
    assert "no real power 0.5" in e.what and "row 4" in e.where


def test_zero_to_a_negative_power() -> None:
    e = fails({"step": "power", "column": "price", "exponent": -2})
    # Reference: 0 ** -2 = 1 / 0 is infinite; 0 is data position 4 -> row 6.
    assert "infinite" in e.what and "row 6" in e.where


def test_ratio_with_zero_denominator() -> None:
    e = fails({"step": "combine", "columns": ["price", "income"], "method": "ratio", "name": "r"})
    # Reference: division by zero is undefined; income is 0 at data position 1 -> row 3.
    assert "0 here" in e.what and 'row 3, column "income"' in e.where


def test_combine_needs_two_columns() -> None:
    e = fails({"step": "combine", "columns": ["price"], "method": "sum", "name": "s"})
    assert "at least 2" in e.what  # reference: a group of one is not a combination


def test_reference_level_not_present() -> None:
    e = fails({"step": "indicators", "column": "shade", "reference": "Red"})
    assert 'no level "Red"' in e.what and '"red"' in e.todo and '"all"' in e.todo


def test_indicators_need_a_categorical() -> None:
    e = fails({"step": "indicators", "column": "price"})
    assert "is numeric" in e.what and '"to": "categorical"' in e.todo


def test_numbers_needed() -> None:
    e = fails({"step": "center", "column": "shade"})
    assert "needs numbers" in e.what and "categorical" in e.what


def test_standardize_a_constant() -> None:
    e = fails({"step": "standardize", "column": "flat"})
    # Reference: the standard deviation of a constant is 0; dividing by it is undefined.
    assert "no spread" in e.what and "every value is 7" in e.what


def test_unit_length_of_zeros() -> None:
    frame = pd.DataFrame({"z": [0.0, 0.0], "x": [1.0, 2.0]})
    with pytest.raises(InputError) as e:
        build_design(table(frame), Recipe([{"step": "unit_length", "column": "z"}]))
    assert "all zero" in e.value.what  # reference: the zero vector has length 0


def test_first_component_of_a_constant_member() -> None:
    e = fails(
        {"step": "combine", "columns": ["flat", "y"], "method": "first_component", "name": "c"}
    )
    assert '"flat" is constant' in e.what  # reference: a constant cannot be standardized


def test_label_that_is_not_a_number() -> None:
    e = fails({"step": "kind", "column": "label", "to": "numeric"})
    # Reference: float("x3") raises ValueError; it is data position 2 -> row 4.
    assert '"x3"' in e.what and "row 4" in e.where


def test_number_that_is_not_boolean() -> None:
    e = fails({"step": "kind", "column": "price", "to": "boolean"})
    assert "only 0 and 1" in e.what and "row 2" in e.where  # 3 is at data position 0


def test_name_clash() -> None:
    e = fails({"step": "product", "columns": ["price", "y"], "name": "income"})
    assert 'named "income" already exists' in e.what
    e = fails({"step": "center", "column": "price", "name": "(intercept)"})
    assert "intercept" in e.what


def test_roles_that_make_no_sense() -> None:
    e = fails({"step": "response", "column": "y"}, {"step": "drop", "column": "y"})
    assert "is the response" in e.what
    e = fails({"step": "restore", "column": "price"})
    assert "not dropped" in e.what
    e = fails({"step": "drop", "column": "price"}, {"step": "drop", "column": "price"})
    assert "already dropped" in e.what
    e = fails({"step": "response", "column": "shade"})
    assert "needs numbers" in e.what
    e = fails(
        {"step": "response", "column": "y"},
        {"step": "missing", "column": "y", "policy": "drop_column"},
    )
    assert "always deleted" in e.what
    e = fails(
        {"step": "response", "column": "y"},
        {"step": "combine", "columns": ["y", "price"], "method": "sum", "name": "s"},
    )
    assert "is the response" in e.what


def test_empty_design() -> None:
    steps = [{"step": "intercept", "include": False}] + [
        {"step": "drop", "column": c} for c in data().columns
    ]
    e = fails(*steps)
    assert "no columns" in e.what


def test_overflow_is_refused() -> None:
    e = fails({"step": "multiply", "column": "price", "by": 1e308})
    # Reference: 3 * 1e308 exceeds the largest float64 (about 1.8e308, numpy.finfo).
    assert np.finfo(np.float64).max < 3e308
    assert "too large" in e.what and "row 2" in e.where


def test_date_cannot_become_categorical() -> None:
    frame = pd.DataFrame({"d": pd.to_datetime(["2024-01-01"]), "x": [1.0]})
    with pytest.raises(InputError) as e:
        build_design(table(frame), Recipe([{"step": "kind", "column": "d", "to": "categorical"}]))
    assert "cannot become categorical" in e.value.what


def test_restore_explains_the_missing_policy() -> None:
    frame = data()
    frame.loc[0, "income"] = np.nan
    with pytest.raises(InputError) as e:
        build_design(
            table(frame),
            Recipe(
                [
                    {"step": "missing", "column": "income", "policy": "drop_column"},
                    {"step": "restore", "column": "income"},
                ]
            ),
        )
    assert "delete_rows" in e.value.todo  # the column is out because of its policy
