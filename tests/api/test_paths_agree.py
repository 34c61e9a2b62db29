"""One design reached four ways (formula, recipe, CLI, API) gives one diagnosis JSON.

Reference: the recipe path of `rankscope check --json` (the JSON contract), itself checked
against outside references in tests/core and tests/cli; here every other way must match it
to 1e-12.
"""

from __future__ import annotations

import json

import pytest

import rankscope
from tests.api.data import assert_close, planted, write_csv
from tests.cli.runner import run

# The parts of the document that describe where the design came from, not the design.
ORIGIN = ("source",)


def _cli(*args: str) -> dict:
    # The command computes the extras only when asked; inspect() computes all by default.
    got = run("check", *args, "--json", "--with", "spearman,order,proportions,spectra")
    assert got.code == 0, got.err
    return got.json()


def _without_origin(doc: dict) -> dict:
    doc = {k: v for k, v in doc.items() if k not in ORIGIN}
    doc["design"] = {k: v for k, v in doc["design"].items() if k != "notes"}
    return doc


def _formula_as_recipe(doc: dict) -> dict:
    """A formula document in the recipe's names: formulaic writes a level as g[T.north],
    the recipe as g[north]; the single-column terms' groups (which the recipe does not
    make) are left out after checking their GVIF is their VIF."""
    doc = json.loads(json.dumps(doc).replace("g[T.", "g["))
    singles = [t for t, cols in doc["design"]["groups"].items() if cols == [t]]
    for t in singles:
        # Reference: a one-column GVIF is the VIF (Fox & Monette, JASA 1992, eq. 10).
        vif = doc["vif"][t]
        got = doc["gvif"].pop(t)["gvif"]
        assert (got is None and vif is None) or got == pytest.approx(vif, rel=1e-12)
        del doc["design"]["groups"][t]
    return doc


@pytest.fixture(scope="module")
def csv(tmp_path_factory):
    return write_csv(planted(missing=True), tmp_path_factory.mktemp("agree"))


def test_recipe_cli_and_api_agree(csv, tmp_path):
    frame = planted(missing=True)
    steps = [{"step": "response", "column": "y"}, {"step": "drop", "column": "z"}]
    recipe = tmp_path / "recipe.json"
    recipe.write_text(json.dumps({"steps": steps}), encoding="utf-8")
    by_options = _cli(str(csv), "--response", "y", "--drop", "z")
    by_recipe_file = _cli(str(csv), "--recipe", str(recipe))
    by_api_path = rankscope.inspect(csv, "y", recipe=[{"step": "drop", "column": "z"}]).to_dict()
    by_api_frame = rankscope.inspect(frame, recipe=steps).to_dict()
    assert by_options["rank"] == len(by_options["columns"]) - 1  # w = u − 2v, planted
    assert by_options["dependencies"][0]["column"] == "w"
    reference = _without_origin(by_options)
    for doc in (by_recipe_file, by_api_path, by_api_frame):
        assert_close(_without_origin(doc), reference)
    # The CLI and the API write the same document for the same file, source included.
    assert by_api_path["source"] == by_options["source"]


def test_formula_cli_and_api_agree_with_the_recipe(csv):
    frame = planted(missing=True)
    formula = "y ~ u + v + w + z + g"
    by_cli = _cli(str(csv), "--formula", formula)
    by_api = rankscope.inspect(frame, formula=formula).to_dict()
    by_api_path = rankscope.inspect(csv, formula=formula).to_dict()
    assert by_cli["columns"][:2] == ["(intercept)", "u"]
    assert "g[T.north]" in by_cli["columns"]
    assert_close(_without_origin(by_api), _without_origin(by_cli))
    assert_close(by_api_path, by_cli)
    recipe = _cli(str(csv), "--response", "y")
    assert_close(_formula_as_recipe(_without_origin(by_cli)), _without_origin(recipe))


def test_formula_with_recipe_steps_on_top(csv):
    """The formula starts the design; recipe steps then act on its columns."""
    frame = planted(missing=True)
    on_top = rankscope.inspect(frame, formula="y ~ u + v + w + z", recipe=[
        {"step": "drop", "column": "w"}]).to_dict()
    direct = rankscope.inspect(frame, formula="y ~ u + v + z").to_dict()
    on_top_cli = _cli(str(csv), "--formula", "y ~ u + v + w + z", "--drop", "w")
    assert on_top["full_rank"] and on_top["columns"] == direct["columns"]
    assert_close(_without_origin(on_top)["vif"], _without_origin(direct)["vif"])
    assert_close(on_top["fit"], direct["fit"])
    assert_close(_without_origin(on_top_cli), _without_origin(on_top))


def test_other_table_types_agree():
    pa = pytest.importorskip("pyarrow")
    frame = planted()
    reference = rankscope.inspect(frame, "y").to_dict()
    arrow = rankscope.inspect(pa.Table.from_pandas(frame), "y").to_dict()
    assert_close(_without_origin(arrow), _without_origin(reference))
    numeric = frame.drop(columns="g")
    as_array = rankscope.inspect(numeric.to_numpy(), "y", names=list(numeric.columns)).to_dict()
    direct = rankscope.inspect(numeric, "y").to_dict()
    assert_close(_without_origin(as_array), _without_origin(direct))
    pl = pytest.importorskip("polars")
    polars = rankscope.inspect(pl.from_pandas(frame), "y").to_dict()
    assert_close(_without_origin(polars), _without_origin(reference))


def test_document_follows_the_schema():
    from pathlib import Path

    from jsonschema import Draft202012Validator

    schema = json.loads((Path(__file__).resolve().parents[2] / "docs" /
                         "diagnosis.schema.json").read_text(encoding="utf-8"))
    doc = json.loads(rankscope.inspect(planted(), formula="y ~ u + v + w + C(g) + u:g").to_json())
    errors = sorted(Draft202012Validator(schema).iter_errors(doc), key=str)
    assert not errors, errors[0]


def test_a_table_with_model_like_column_names_is_a_table():
    frame = planted().rename(columns={"u": "exog", "v": "endog", "z": "model"})
    frame["exog_names"] = 1.0
    got = rankscope.inspect(frame, "y")
    assert "exog" in got.columns and got.source == "DataFrame"
