"""`check --with`: Spearman correlations and the clustered order only when asked, null otherwise,
and a check without them that never loads scipy.stats or scipy.cluster.

References: scipy.stats.spearmanr on the same columns; docs/diagnosis.schema.json (checked by
jsonschema); Python's sys.modules in a fresh interpreter for what was imported.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from jsonschema import Draft202012Validator
from scipy import stats

from tests.cli.runner import SCHEMA, loaded_modules, run

#: Modules a plain check must not load (extras and the web stack).
HEAVY = ("scipy.stats", "scipy.cluster", "plotly", "jinja2", "fastapi", "openpyxl")


@pytest.fixture(scope="module")
def table(tmp_path_factory) -> str:
    """Random columns with planted structure: a monotone but non-linear pair (Spearman 1,
    Pearson below 1), integer columns with ties, and two groups of columns that move
    together (each group driven by one latent column)."""
    rng = np.random.default_rng(15)
    n = 400
    a, b = rng.standard_normal(n), rng.standard_normal(n)
    frame = pd.DataFrame({
        "g1_a": a + 0.1 * rng.standard_normal(n),
        "g2_a": b + 0.1 * rng.standard_normal(n),
        "g1_b": a + 0.1 * rng.standard_normal(n),
        "g2_b": b + 0.1 * rng.standard_normal(n),
        "g1_c": a + 0.1 * rng.standard_normal(n),
        "u": rng.standard_normal(n),
        "counts": rng.integers(0, 5, n),
        "ties": rng.integers(0, 3, n),
    })
    frame["u_exp"] = np.exp(frame["u"])  # monotone in u: rank correlation exactly 1
    frame["y"] = frame["g1_a"] - frame["g2_b"] + rng.standard_normal(n)
    path = tmp_path_factory.mktemp("extras") / "planted.csv"
    frame.to_csv(path, index=False)
    return str(path)


def _json(*args: str) -> dict:
    r = run("check", *args, "--json")
    assert r.code == 0, r.err
    return r.json()


def _valid(doc: dict) -> None:
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    errors = sorted(Draft202012Validator(schema).iter_errors(doc), key=str)
    assert not errors, [f"{list(e.path)}: {e.message}" for e in errors[:5]]


def test_extras_are_null_when_not_asked(table: str) -> None:
    doc = _json(table, "--response", "y")
    _valid(doc)  # the contract allows null for both
    assert doc["extras"] == []
    assert doc["correlations"]["spearman"] is None
    assert doc["correlations"]["order"] is None
    assert len(doc["correlations"]["pearson"]) == len(doc["correlations"]["columns"])


def test_spearman_when_asked_equals_scipy(table: str) -> None:
    doc = _json(table, "--response", "y", "--with", "spearman")
    _valid(doc)
    assert doc["extras"] == ["spearman"]
    assert doc["correlations"]["order"] is None
    corr = doc["correlations"]
    frame = pd.read_csv(table)
    expected = stats.spearmanr(frame[corr["columns"]].to_numpy()).statistic
    np.testing.assert_allclose(np.array(corr["spearman"]), expected, rtol=0, atol=1e-12)
    i, j = corr["columns"].index("u"), corr["columns"].index("u_exp")
    assert corr["spearman"][i][j] == pytest.approx(1.0, abs=1e-12)
    assert corr["pearson"][i][j] < 0.9


def test_order_when_asked_keeps_the_planted_groups_together(table: str) -> None:
    doc = _json(table, "--response", "y", "--with", "order,spearman")
    _valid(doc)
    assert doc["extras"] == ["spearman", "order"]
    corr = doc["correlations"]
    order = corr["order"]
    assert sorted(order) == list(range(len(corr["columns"])))
    names = [corr["columns"][k] for k in order]
    for group in ("g1_", "g2_"):
        at = [k for k, c in enumerate(names) if c.startswith(group)]
        assert at == list(range(at[0], at[0] + len(at))), names


def test_unknown_extra_and_spearman_while_streaming_are_refused(table: str) -> None:
    r = run("check", table, "--response", "y", "--with", "kendall")
    assert r.code == 2 and "--with" in r.err and "spearman" in r.err
    r = run("check", table, "--response", "y", "--stream", "--with", "spearman")
    assert r.code == 2 and "--stream" in r.err


@pytest.mark.parametrize("asked", [(), ("--with", "spearman,order")])
def test_modules_a_check_loads(table: str, asked: tuple[str, ...]) -> None:
    modules = loaded_modules("check", table, "--response", "y", "--json", *asked)
    loaded = {h for h in HEAVY if h in modules}
    if asked:
        assert {"scipy.stats", "scipy.cluster"} <= loaded
        assert not loaded & {"plotly", "jinja2", "fastapi", "openpyxl"}
    else:
        assert not loaded, loaded
