"""The generated Python script rebuilds X and y from the CSV file.

Reference: the recipe replay, build_design(table, recipe), on a Table made from the same CSV.
"""

from __future__ import annotations

import ast
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings

from rankscope.design.recipe import Recipe, build_design
from rankscope.design.script import recipe_to_python
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table
from tests.design.strategies import tables_and_steps
from tests.design.tables import table


def read_back(path: Path, kinds: dict[str, str]) -> Table:
    """The CSV as a Table in the reader's types (categorical labels kept as text)."""
    text = [c for c, k in kinds.items() if k == "categorical"]
    raw = pd.read_csv(path, dtype={c: str for c in text})
    for name, kind in kinds.items():
        if kind == "boolean":
            raw[name] = raw[name].map({"True": True, "False": False, True: True, False: False})
            raw[name] = raw[name].astype("boolean")
        elif kind == "date":
            raw[name] = pd.to_datetime(raw[name])
        elif kind == "categorical":
            raw[name] = raw[name].astype("category")
        else:
            raw[name] = raw[name].astype("float64")
    return Table(raw, dict(kinds), path.name)


def run_script(source: str) -> dict:
    namespace: dict = {}
    exec(compile(source, "<recipe script>", "exec"), namespace)  # noqa: S102 - our own output
    return namespace


def check_same(tab: Table, recipe: Recipe, path: Path) -> str:
    design = build_design(tab, recipe)
    source = recipe_to_python(recipe, str(path), tab)
    out = run_script(source)
    # Reference: the recipe replay (build_design) on the same file.
    assert out["columns"] == design.columns
    np.testing.assert_allclose(out["X"], design.X, rtol=1e-12, atol=1e-12)
    if design.y is None:
        assert out["y"] is None
    else:
        np.testing.assert_allclose(out["y"], design.y, rtol=1e-12, atol=1e-12)
    return source


def test_script_reproduces_every_value_step(tmp_path: Path) -> None:
    rng = np.random.default_rng(11)
    n = 25
    frame = pd.DataFrame(
        {
            "sales": rng.uniform(1, 100, n),
            "price": rng.uniform(0.5, 3, n),
            "ads": rng.normal(10, 2, n),
            "tv": rng.normal(5, 1, n),
            "web": rng.normal(3, 1, n),
            "store": rng.choice(["north", "south", "east"], n),
            "grade": rng.choice([1, 2, 3], n).astype(float),
            "promo": rng.choice([True, False], n),
            "day": pd.date_range("2024-01-01", periods=n, freq="D"),
            "tag": rng.choice(["1.5", "2", "4"], n),
        }
    )
    frame.loc[[2, 7], "ads"] = np.nan
    frame.loc[4, "store"] = None
    path = tmp_path / "sales.csv"
    frame.to_csv(path, index=False)
    kinds = {
        "sales": "numeric",
        "price": "numeric",
        "ads": "numeric",
        "tv": "numeric",
        "web": "numeric",
        "store": "categorical",
        "grade": "numeric",
        "promo": "boolean",
        "day": "date",
        "tag": "categorical",
    }
    recipe = Recipe(
        [
            {"step": "response", "column": "sales"},
            {"step": "log", "column": "sales", "base": 10, "shift": 1},
            {"step": "center", "column": "price", "keep": True},
            {"step": "standardize", "column": "ads"},
            {"step": "unit_length", "column": "tv", "keep": True},
            {"step": "multiply", "column": "web", "by": 1000},
            {"step": "power", "column": "price (centered)", "exponent": 2, "name": "pc2"},
            {"step": "log", "column": "price", "base": 3, "keep": True},
            {"step": "product", "columns": ["price", "ads (standardized)"], "name": "p x a"},
            {
                "step": "combine",
                "columns": ["tv", "web*1000"],
                "method": "first_component",
                "name": "media",
            },
            {
                "step": "combine",
                "columns": ["price", "log3(price)"],
                "method": "ratio",
                "name": "r",
            },
            {"step": "indicators", "column": "store", "reference": "south"},
            {"step": "kind", "column": "grade", "to": "categorical"},
            {"step": "indicators", "column": "grade", "reference": "all"},
            {"step": "kind", "column": "day", "to": "numeric"},
            {"step": "kind", "column": "tag", "to": "numeric"},
            {"step": "drop", "column": "tv (unit length)"},
            {"step": "missing", "column": "ads (standardized)", "policy": "delete_rows"},
        ]
    )
    source = check_same(read_back(path, kinds), recipe, path)
    ast.parse(source)  # reference: Python's own parser accepts the script
    assert "import numpy as np" in source and "import pandas as pd" in source
    assert "tv (unit length)" not in source.split("X = ")[1]  # dropped: not in X


def test_script_for_sums_means_differences_and_no_intercept(tmp_path: Path) -> None:
    frame = pd.DataFrame(
        {
            "a": [1.0, 2.0, 4.0, 3.0],
            "b": [2.0, 0.5, 1.0, 7.0],
            "c": [1.0, 1.0, 2.0, 5.0],
            "d": [0.0, 1.0, 1.0, 0.0],
        }
    )
    path = tmp_path / "abc.csv"
    frame.to_csv(path, index=False)
    tab = read_back(path, {"a": "numeric", "b": "numeric", "c": "numeric", "d": "numeric"})
    for method in ("sum", "mean", "difference"):
        members = ["a", "b", "c"] if method != "difference" else ["c", "a"]
        recipe = Recipe(
            [
                {"step": "intercept", "include": False},
                {"step": "combine", "columns": members, "method": method, "name": "g"},
                {"step": "kind", "column": "d", "to": "boolean"},
            ]
        )
        check_same(tab, recipe, path)


def test_script_of_a_recipe_that_does_not_build() -> None:
    frame = pd.DataFrame({"a": [1.0, -2.0]})
    with pytest.raises(InputError):
        recipe_to_python(Recipe([{"step": "log", "column": "a"}]), "a.csv", table(frame))


def test_windows_path_stays_valid_python() -> None:
    tab = table(pd.DataFrame({"a": [1.0, 2.0]}))
    source = recipe_to_python(Recipe(), "C:\\data\\x1.csv", tab)
    ast.parse(source)  # reference: Python's parser; "\x1" would be a bad escape in a docstring
    assert "SOURCE = 'C:\\\\data\\\\x1.csv'" in source


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables_and_steps(max_steps=5))
def test_script_reproduces_random_recipes(case: tuple[Table, list[dict]]) -> None:
    tab, steps = case
    try:
        recipe = Recipe(steps)
        build_design(tab, recipe)
    except InputError:
        return
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "random.csv"
        tab.frame.to_csv(path, index=False)
        check_same(read_back(path, tab.kinds), recipe, path)
