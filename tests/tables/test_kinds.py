"""Inference rules, user overrides (with_kinds) and missing_summary."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from rankscope.tables.errors import InputError
from rankscope.tables.read import missing_summary, read_bytes, with_kinds
from rankscope.tables.table import Table


def read(text: str, **kw) -> Table:
    return read_bytes(text.encode(), "data.csv", **kw)


def test_integer_codes_stay_numeric_with_note():
    rows = "".join(f"{i % 4 + 1},{i}\n" for i in range(40))
    table = read("group,y\n" + rows)
    assert table.kinds["group"] == "numeric"
    assert any("whole numbers 1, 2, 3, 4" in n and "categorical" in n for n in table.notes)


def test_zero_one_is_numeric_not_boolean():
    table = read("d,y\n0,1\n1,2\n1,3\n")
    assert table.kinds["d"] == "numeric"


@pytest.mark.parametrize(
    "words", [("true", "false"), ("TRUE", "FALSE"), ("Yes", "no"), ("YES", "NO")]
)
def test_boolean_words(words):
    t, f = words
    table = read(f"b,y\n{t},1\n{f},2\n,3\n")
    assert table.kinds["b"] == "boolean"
    assert table.frame["b"].tolist()[:2] == [True, False]
    assert pd.isna(table.frame["b"].iloc[2])


def test_short_flags_are_categorical():
    assert read("b,y\ny,1\nn,2\n").kinds["b"] == "categorical"


def test_iso_dates_and_datetimes():
    table = read("t,y\n2024-01-01,1\n2024-01-01T10:30:00,2\n2024-01-02 23:59:59.5,3\nNA,4\n")
    assert table.kinds["t"] == "date"
    assert str(table.frame["t"].dtype) == "datetime64[ns]"
    assert table.frame["t"].iloc[2] == pd.Timestamp("2024-01-02 23:59:59.5")


def test_dates_with_zone_become_utc():
    table = read("t,y\n2024-01-01T10:00:00+02:00,1\n2024-01-01T10:00:00Z,2\n")
    assert table.frame["t"].tolist() == [
        pd.Timestamp("2024-01-01 08:00"),
        pd.Timestamp("2024-01-01 10:00"),
    ]
    assert any("UTC" in n for n in table.notes)


def test_non_iso_dates_are_categorical():
    assert read("t,y\n31/01/2024,1\n01/02/2024,2\n").kinds["t"] == "categorical"


def test_categories_sorted_and_text_kept():
    table = read("g,y\nb ,1\na,2\nc,3\n")
    assert list(table.frame["g"].cat.categories) == ["a", "b ", "c"]


def test_leading_zero_codes_can_be_declared_categorical():
    table = read("zip,y\n02139,1\n10001,2\n", kinds={"zip": "categorical"})
    assert list(table.frame["zip"]) == ["02139", "10001"]


def test_declared_boolean_accepts_01():
    table = read("d,y\n1,1\n0,2\n,3\n", kinds={"d": "boolean"})
    assert table.kinds["d"] == "boolean"
    assert table.frame["d"].tolist()[:2] == [True, False]


def test_missing_summary():
    table = read("a,b,c\n1,,x\n2,NA,\nn/a,3,y\n")
    assert missing_summary(table) == {"a": 1, "b": 2, "c": 1}


# ---- with_kinds -----------------------------------------------------------------------------


def test_numeric_to_categorical_in_numeric_order():
    table = with_kinds(read("k,y\n10,1\n2,2\n1.5,3\n,4\n"), {"k": "categorical"})
    assert table.kinds["k"] == "categorical"
    assert list(table.frame["k"].cat.categories) == ["1.5", "2", "10"]
    assert pd.isna(table.frame["k"].iloc[3])
    assert any("categorical as you chose" in n for n in table.notes)


def test_categorical_to_numeric_with_markers():
    base = read("k,y\na,1\nb,2\n", kinds={"k": "categorical"})
    assert base.kinds["k"] == "categorical"
    table = read("k,y\n1,1\n2.5,2\nNA,3\n", kinds={"k": "categorical"})
    out = with_kinds(table, {"k": "numeric"})
    np.testing.assert_array_equal(out.frame["k"].to_numpy(), [1.0, 2.5, np.nan])
    assert out.frame.index.equals(table.frame.index)


def test_numeric_override_on_text_names_first_row_and_value():
    table = read("name,y\nalpha,1\n\n7,2\nbeta,3\n")
    with pytest.raises(InputError) as info:
        with_kinds(table, {"name": "numeric"})
    e = info.value
    assert e.where == "data.csv, line 2, column 'name'"
    assert "cannot be read as numbers" in e.what
    assert "2 cells hold text that is not a number: 'alpha', 'beta'" in e.what
    assert "(the first at line 2)" in e.what
    assert "another kind" in e.todo


def test_override_row_after_blank_lines():
    table = read("g,y\n1,1\n\n\nx,2\n")
    with pytest.raises(InputError) as info:
        with_kinds(table, {"g": "numeric"})
    assert info.value.where == "data.csv, line 5, column 'g'"


def test_numeric_to_boolean_only_0_1():
    table = read("d,y\n1,1\n0,2\n")
    assert with_kinds(table, {"d": "boolean"}).frame["d"].tolist() == [True, False]
    with pytest.raises(InputError) as info:
        with_kinds(table, {"y": "boolean"})
    assert "other than 0 or 1" in info.value.what
    assert info.value.where == "data.csv, line 3, column 'y'"


def test_boolean_to_numeric_and_categorical():
    table = read("b,y\ntrue,1\nfalse,2\n,3\n")
    out = with_kinds(table, {"b": "numeric"})
    np.testing.assert_array_equal(out.frame["b"].to_numpy(), [1.0, 0.0, np.nan])
    cats = with_kinds(table, {"b": "categorical"}).frame["b"]
    assert list(cats.cat.categories) == ["false", "true"]


def test_date_to_categorical_and_back():
    table = read("t,y\n2024-01-02,1\n2024-01-01,2\n")
    cats = with_kinds(table, {"t": "categorical"})
    assert list(cats.frame["t"]) == ["2024-01-02", "2024-01-01"]
    back = with_kinds(cats, {"t": "date"})
    assert back.frame["t"].tolist() == [pd.Timestamp("2024-01-02"), pd.Timestamp("2024-01-01")]


@pytest.mark.parametrize(("col", "kind"), [("y", "date"), ("t", "numeric"), ("t", "boolean")])
def test_impossible_conversions(col, kind):
    table = read("t,y\n2024-01-02,1\n2024-01-01,2\n")
    with pytest.raises(InputError) as info:
        with_kinds(table, {col: kind})
    assert "cannot be read as" in info.value.what
    assert f"column '{col}'" in info.value.where


def test_with_kinds_unknown_column_and_kind():
    table = read("a,b\n1,2\n")
    with pytest.raises(InputError, match="no column 'c'"):
        with_kinds(table, {"c": "numeric"})
    with pytest.raises(InputError, match="Unknown kind"):
        with_kinds(table, {"a": "text"})


def test_with_kinds_on_plain_table_counts_header_as_row_1():
    frame = pd.DataFrame({"g": pd.Categorical(["1", "x"]), "y": [1.0, 2.0]})
    table = Table(frame=frame, kinds={"g": "categorical", "y": "numeric"}, source="t")
    with pytest.raises(InputError) as info:
        with_kinds(table, {"g": "numeric"})
    assert info.value.where == "t, row 3, column 'g'"


def test_with_kinds_leaves_input_unchanged():
    table = read("k,y\n1,1\n2,2\n")
    with_kinds(table, {"k": "categorical"})
    assert table.kinds["k"] == "numeric"
    assert table.frame["k"].dtype == np.float64
