"""`rankscope check` on everyday designs that once fooled the core: a timestamp beside the
hours it was built from, a steady part of a total, a copied column. Through the CLI and its
JSON, as a pipeline sees them.
"""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import numpy as np
import pandas as pd

from tests.cli.runner import SCHEMA, run


def _csv(tmp_path: Path, name: str, cols: dict[str, np.ndarray]) -> str:
    path = tmp_path / name
    pd.DataFrame(cols).to_csv(path, index=False, float_format="%.17g")
    return str(path)


def test_timestamp_first_is_named_and_the_fit_is_least_squares(tmp_path: Path) -> None:
    rng = np.random.default_rng(11)
    n = 120
    hours = rng.uniform(0, 100, n)
    temp = rng.normal(20, 5, n)
    y = 2 * hours + temp + rng.normal(size=n)
    path = _csv(tmp_path, "stamps.csv", {"stamp": 1.7e9 + 3600 * hours, "hours": hours,
                                         "temp": temp, "y": y})
    r = run("check", path, "--response", "y", "--json", "--fail-if", "vif>10")
    d = r.json()
    jsonschema.validate(d, json.loads(SCHEMA.read_text()))
    # Reference: the construction (stamp is affine in hours; rank 3 of 4).
    assert d["rank"] == 3 and len(d["basis"]) == 3 and len(d["dependencies"]) == 1
    dep = d["dependencies"][0]
    assert {dep["column"], *dep["combination"]} == {"stamp", "hours", "(intercept)"}
    assert dep["verified"]
    assert d["vif"]["stamp"] is None and d["vif"]["hours"] is None
    # Reference: numpy.linalg.lstsq on [1, hours, temp] gives the least-squares RSS.
    X = np.column_stack([np.ones(n), hours, temp])
    ref = float(np.sum((y - X @ np.linalg.lstsq(X, y, rcond=None)[0]) ** 2))
    assert abs(d["fit"]["rss"] - ref) <= 1e-9 * ref
    # The VIF rule fires, and it names the columns of the equation.
    assert r.code == 1 and "stamp" in r.err


def test_steady_part_does_not_spread_infinity(tmp_path: Path) -> None:
    rng = np.random.default_rng(12)
    n = 60
    payload = rng.uniform(100, 200, n)
    tare = 1500 + rng.uniform(-1e-4, 1e-4, n)
    z = rng.normal(size=n)
    path = _csv(tmp_path, "total.csv", {"payload": payload, "tare": tare,
                                        "total": payload + tare, "z": z,
                                        "y": payload + z + rng.normal(size=n)})
    d = run("check", path, "--response", "y", "--json").json()
    assert [dep["column"] for dep in d["dependencies"]] == ["total"]
    # Reference: statsmodels' auxiliary regression of z on [1, payload, tare].
    from statsmodels.stats.outliers_influence import variance_inflation_factor

    X = np.column_stack([np.ones(n), payload, tare, z])
    assert np.isclose(d["vif"]["z"], variance_inflation_factor(X, 3), rtol=1e-8)
    r = run("check", path, "--response", "y", "--fail-if", "vif>10")
    assert "z" not in r.err.split("(")[-1]


def test_copied_column_keeps_the_near_dependency_visible(tmp_path: Path) -> None:
    rng = np.random.default_rng(13)
    n = 80
    x = 1000 + 0.1 * rng.normal(size=n)
    z = rng.normal(size=n)
    path = _csv(tmp_path, "copy.csv", {"x": x, "x_copy": x, "z": z, "y": z + rng.normal(size=n)})
    d = run("check", path, "--response", "y", "--json").json()
    assert [e["columns"] for e in d["exact_dimensions"]] == [["x", "x_copy"]]
    near = [f for f in d["near_dependencies"] if not f["exact"]]
    # Textbook (Belsley, Kuh & Welsch 1980, ch. 3): a column with a small coefficient of
    # variation is nearly collinear with the constant.
    assert any({"(intercept)", "x"} <= set(f["columns"]) for f in near)
    assert all("z" not in f["columns"] for f in near)
