"""The exports: the design as CSV safe to open in a spreadsheet, the recipe as JSON and back,
the Python script, and clear refusals of a bad recipe file.

References: OWASP's guidance on CSV injection (from memory), Python's csv and json modules,
pandas and numpy on the same file, and the recipe replay (build_design).
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from rankscope.design.design import Design
from rankscope.design.recipe import Recipe, build_design
from rankscope.report.export import (
    FORMULA_START,
    design_csv,
    design_csv_chunks,
    download_name,
    import_recipe,
    neutralize,
    recipe_json,
    recipe_script,
)
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_table

#: Reference: OWASP, "CSV Injection" (quoted from memory): a cell that begins with =, +, -
#: or @ (also tab or carriage return) can run as a formula; prefix it with a single quote.
OWASP_STARTS = ["=", "+", "-", "@", "\t", "\r"]


def rows_of(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text)))  # Reference: Python's csv module


def test_neutralize_follows_owasp() -> None:
    assert sorted(FORMULA_START) == sorted(OWASP_STARTS)
    for start in OWASP_STARTS:
        cell = start + "HYPERLINK(\"x\")"
        assert neutralize(cell) == "'" + cell
    for safe in ["price", "(intercept)", "store[north]", "", "1e5", " =x"]:
        assert neutralize(safe) == safe


def test_design_csv_neutralizes_names_and_keeps_negative_numbers() -> None:
    X = np.array([[1.0, -2.5, 0.1, -1e-300], [1.0, 3.0, -7.25, 2.0]])
    names = ["(intercept)", "=cmd|' /C calc'!A0", "-x", "@sum"]
    design = Design(X=X, columns=names, y=np.array([-1.0, 0.3]), response="+y",
                    rows_total=2, rows_used=2)
    text = design_csv(design)
    rows = rows_of(text)
    # Reference: OWASP's advice; text cells starting like a formula begin with a quote.
    assert rows[0] == ["(intercept)", "'=cmd|' /C calc'!A0", "'-x", "'@sum", "'+y"]
    # Number cells are not touched: a negative value reads back as the same number, not text.
    # Reference: float() on the cell text, and pandas reading the file as float64.
    values = np.array([[float(c) for c in row] for row in rows[1:]])
    np.testing.assert_array_equal(values[:, :4], X)
    np.testing.assert_array_equal(values[:, 4], design.y)
    frame = pd.read_csv(io.StringIO(text))
    assert all(str(t) == "float64" for t in frame.dtypes)
    assert not any(c.startswith("'") for row in rows[1:] for c in row)
    assert text.endswith("\r\n")  # Reference: RFC 4180 line ends, as csv.writer writes


def test_design_csv_from_a_file_with_a_formula_header(tmp_path: Path) -> None:
    path = tmp_path / "sheet.csv"
    rng = np.random.default_rng(3)
    n = 7000  # more than one streamed piece
    pd.DataFrame({"=1+2": rng.normal(size=n), "y": rng.normal(size=n)}).to_csv(path,
                                                                                index=False)
    tab = read_table(path)
    design = build_design(tab, Recipe([{"step": "response", "column": "y"}]))
    assert len(list(design_csv_chunks(design))) > 2
    frame = pd.read_csv(io.StringIO(design_csv(design)))
    # Reference: pandas on the exported text; the values equal the replay's X exactly.
    assert list(frame.columns) == ["(intercept)", "'=1+2", "y"]
    np.testing.assert_array_equal(frame.to_numpy()[:, :2], design.X)
    np.testing.assert_array_equal(frame["y"].to_numpy(), design.y)


STEPS = [
    {"step": "response", "column": "sales"},
    {"step": "indicators", "column": "store", "reference": "south"},
    {"step": "standardize", "column": "ads"},
    {"step": "log", "column": "price", "base": 10},
    {"step": "product", "columns": ["tv", "web"], "name": "tv x web"},
    {"step": "drop", "column": "web"},
]


@pytest.fixture
def shop(tmp_path: Path) -> Path:
    rng = np.random.default_rng(9)
    n = 40
    frame = pd.DataFrame({
        "sales": rng.uniform(1, 100, n), "price": rng.uniform(0.5, 3, n),
        "ads": rng.normal(10, 2, n), "tv": rng.normal(5, 1, n), "web": rng.normal(3, 1, n),
        "store": rng.choice(["north", "south", "east"], n),
    })
    frame.loc[4, "ads"] = np.nan
    path = tmp_path / "shop.csv"
    frame.to_csv(path, index=False)
    return path


def test_script_reproduces_the_design(shop: Path) -> None:
    tab = read_table(shop)
    recipe = Recipe(STEPS)
    namespace: dict = {}
    exec(compile(recipe_script(recipe, str(shop), tab), "<script>", "exec"), namespace)  # noqa: S102
    design = build_design(tab, recipe)
    # Reference: build_design, the recipe replay, on the same file.
    assert namespace["columns"] == design.columns
    np.testing.assert_allclose(namespace["X"], design.X, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(namespace["y"], design.y, rtol=1e-12, atol=1e-12)
    # Reference: pandas and numpy by hand for one column (rows missing ads are deleted).
    raw = pd.read_csv(shop).dropna()
    ads = raw["ads"].to_numpy()
    j = design.columns.index("ads (standardized)")
    np.testing.assert_allclose(design.X[:, j], (ads - ads.mean()) / ads.std(ddof=1),
                               rtol=1e-12)


def test_recipe_json_round_trip(shop: Path) -> None:
    recipe = Recipe(STEPS)
    text = recipe_json(recipe)
    doc = json.loads(text)  # Reference: the json module reads the export as plain JSON.
    assert doc["format"] == "rankscope-recipe" and doc["steps"] == STEPS
    assert import_recipe(text, read_table(shop), "mine.json") == recipe
    assert import_recipe(text.encode("utf-8-sig")) == recipe  # a BOM from an editor is fine


def test_bad_json_names_the_place(shop: Path) -> None:
    text = '{"steps": [\n  {"step": "drop", "column": "price"}\n'
    with pytest.raises(json.JSONDecodeError) as reference:
        json.loads(text)  # Reference: the json module's own position of the mistake.
    with pytest.raises(InputError) as caught:
        import_recipe(text, read_table(shop), "mine.json")
    where = f"mine.json, line {reference.value.lineno}, column {reference.value.colno}"
    assert caught.value.where == where and "not valid JSON" in caught.value.what


@pytest.mark.parametrize("text, found", [
    ('{"steps": [{"step": "paint", "column": "price"}]}', 'unknown step "paint"'),
    ('{"steps": [{"step": "drop", "column": "prise"}]}', 'no column named "prise"'),
    ('{"steps": [{"step": "drop", "column": "price", "colour": 1}]}', 'no field "colour"'),
    ('[1, 2]', "a step must be an object"),
])
def test_bad_recipe_files_are_refused_clearly(shop: Path, text: str, found: str) -> None:
    with pytest.raises(InputError) as caught:
        import_recipe(text, read_table(shop), "mine.json")
    # Reference: the recipe format (docs/recipe.md): step names, fields, the table's columns.
    assert found in caught.value.message and "mine.json" in caught.value.message
    assert caught.value.todo or "Close matches" in caught.value.message


def test_recipe_file_that_is_not_text_or_too_big() -> None:
    with pytest.raises(InputError, match="not UTF-8"):
        import_recipe(b"\xff\xfe\x00{", None, "r.json")
    with pytest.raises(InputError, match="far"):
        import_recipe(b" " * 1_000_001, None, "r.json")


def test_download_names() -> None:
    assert download_name("Cold storage: May/June", ".html") == "Cold_storage_May_June.html"
    assert download_name("../../etc/passwd", ".csv") == "etc_passwd.csv"
    assert download_name("///", ".json") == "rankscope.json"


def test_design_csv_is_safe_under_every_common_separator() -> None:
    names = ["(intercept)", "a;=1+1", "b\t@SUM(A1)", "c,-2", "plain;name"]
    X = np.array([[1.0, 2.0, 3.0, 4.0, 5.0]])
    text = design_csv(Design(X=X, columns=names, rows_total=1, rows_used=1))
    # Reference: Python's csv module reading the file as a spreadsheet of each locale would
    # (comma, semicolon, tab): no header cell starts like a formula (OWASP's list), and
    # names keep their separators inside one quoted cell.
    for sep in (",", ";", "\t"):
        header = next(csv.reader(io.StringIO(text), delimiter=sep))
        assert not any(c.lstrip().startswith(tuple(OWASP_STARTS)) for c in header), (sep, header)
    assert next(csv.reader(io.StringIO(text)))[4] == "plain;name"
