"""`rankscope check --json` on the demo table: planted dependencies, flags, contract, exit codes.

Each check names its reference beside it; the demo data itself is never a reference.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from jsonschema import Draft202012Validator

from tests.cli.runner import DEMO, REDUCED, SCHEMA, run

FULL = ("check", DEMO, "--response", "energy_kwh", "--categorical", "site", "--all-levels",
        "--json")
#: Kilograms per avoirdupois pound, exact by the definition of the international pound
#: (1959 agreement); a value from memory.
KG_PER_LB = 0.45359237
REL = 1e-9


@pytest.fixture(scope="module")
def full() -> dict:
    r = run(*FULL)
    assert r.code == 0, r.err
    assert r.err == ""
    return r.json()


@pytest.fixture(scope="module")
def frame() -> pd.DataFrame:
    return pd.read_csv(DEMO)


def null_vector(dep: dict) -> dict[str, float]:
    """column − Σ c·name = 0 as coefficients on names."""
    v = {k: -c for k, c in dep["combination"].items()}
    v[dep["column"]] = 1.0
    return v


def find(doc: dict, names: set[str]) -> dict:
    """The one dependency that involves exactly these columns."""
    hits = [d for d in doc["dependencies"] if {d["column"], *d["combination"]} == names]
    assert len(hits) == 1, [d["equation"] for d in doc["dependencies"]]
    return hits[0]


def scaled(v: dict[str, float], unit: str) -> dict[str, float]:
    """The relation rescaled so that `unit` has coefficient 1 (either direction of writing)."""
    return {k: c / v[unit] for k, c in v.items()}


def test_json_matches_the_documented_contract(full: dict) -> None:
    # Reference: docs/diagnosis.schema.json, checked by the jsonschema package (JSON Schema
    # 2020-12); the strict parse in runner.Result.json already refused NaN and Infinity.
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    Draft202012Validator.check_schema(schema)
    errors = sorted(Draft202012Validator(schema).iter_errors(full), key=str)
    assert not errors, [f"{list(e.path)}: {e.message}" for e in errors[:5]]


def test_pounds_and_kilograms(full: dict) -> None:
    dep = find(full, {"goods_in_kg", "goods_in_lb"})
    v = scaled(null_vector(dep), "goods_in_kg")
    # Reference: 1 lb = 0.45359237 kg exactly (definition of the pound; from memory).
    assert v["goods_in_lb"] == pytest.approx(-KG_PER_LB, rel=REL)


def test_celsius_and_fahrenheit_involve_the_intercept(full: dict) -> None:
    dep = find(full, {"outdoor_temp_f", "outdoor_temp_c", "(intercept)"})
    v = scaled(null_vector(dep), "outdoor_temp_f")
    # Reference: °F = 32 + 1.8·°C, the textbook identity between the two scales.
    assert v["outdoor_temp_c"] == pytest.approx(-1.8, rel=REL)
    assert v["(intercept)"] == pytest.approx(-32.0, rel=REL)


def test_total_beside_its_parts(full: dict) -> None:
    dep = find(full, {"pallets_moved", "pallets_in", "pallets_out"})
    v = scaled(null_vector(dep), "pallets_moved")
    # Reference: a total is the sum of its parts (definition of pallets_moved).
    assert v["pallets_in"] == pytest.approx(-1.0, rel=REL)
    assert v["pallets_out"] == pytest.approx(-1.0, rel=REL)


def test_all_site_levels_add_up_to_the_intercept(full: dict) -> None:
    sites = full["design"]["groups"]["site"]
    # Reference: the four levels seen in the file, counted by pandas.
    assert len(sites) == pd.read_csv(DEMO)["site"].nunique() == 4
    dep = find(full, {"(intercept)", *sites})
    v = scaled(null_vector(dep), "(intercept)")
    # Reference: each row has exactly one level, so the indicators of all levels sum to the
    # constant column (definition of indicator coding).
    for s in sites:
        assert v[s] == pytest.approx(-1.0, rel=REL)


def test_nothing_else_is_exactly_dependent(full: dict) -> None:
    # Reference: the four relations above are independent (each has a column no other one
    # has), so by rank–nullity the rank is the column count less 4.
    assert len(full["dependencies"]) == 4
    assert full["rank"] == len(full["columns"]) - 4
    assert full["full_rank"] is False
    # Reference: the definitions above give null vectors of X; each must lie in the span of
    # the reported null space (least-squares residual at rounding level).
    cols = full["columns"]
    N = np.array([[v.get(c, 0.0) for c in cols] for v in full["null_space"]]).T
    sites = full["design"]["groups"]["site"]
    planted = [
        {"goods_in_kg": 1.0, "goods_in_lb": -KG_PER_LB},
        {"outdoor_temp_f": 1.0, "outdoor_temp_c": -1.8, "(intercept)": -32.0},
        {"pallets_moved": 1.0, "pallets_in": -1.0, "pallets_out": -1.0},
        {"(intercept)": 1.0, **{s: -1.0 for s in sites}},
    ]
    for p in planted:
        x = np.array([p.get(c, 0.0) for c in cols])
        coef, *_ = np.linalg.lstsq(N, x, rcond=None)
        assert np.linalg.norm(N @ coef - x) <= 1e-9 * np.linalg.norm(x)


def test_exactly_dependent_columns_have_infinite_vif_and_are_aliased(full: dict) -> None:
    # Reference: VIF = 1/(1 − R²) with R² = 1 for a column in an exact dependency
    # (definition); the contract writes infinity as null.
    for dep in full["dependencies"]:
        assert full["vif"].get(dep["column"], None) is None
        assert dep["column"] in full["fit"]["aliased"]
        assert full["fit"]["std_errors"][dep["column"]] is None


def test_near_collinear_pair_is_flagged(full: dict, frame: pd.DataFrame) -> None:
    # Reference: pandas' Pearson correlation of the two columns in the file (the planted
    # near-collinearity is there at all).
    assert frame["door_openings"].corr(frame["pallets_moved"]) > 0.97
    # Reference: VIF above 10 marks strong collinearity (common practice).
    assert full["vif"]["door_openings"] > 10


def test_near_dependency_named_once_exact_ones_are_removed() -> None:
    r = run("check", DEMO, "--response", "energy_kwh", *REDUCED, "--json")
    assert r.code == 0, r.err
    doc = r.json()
    assert doc["full_rank"] is True and doc["dependencies"] == []
    near = [set(d["columns"]) for d in doc["near_dependencies"] if not d["exact"]]
    # Reference: condition index above 30 with two or more variance-decomposition
    # proportions above 0.5 is the usual flag (common practice).
    assert any({"door_openings", "pallets_in", "pallets_out"} <= s for s in near), near


def test_design_rows_match_pandas(full: dict, frame: pd.DataFrame) -> None:
    used = ["site", "outdoor_temp_c", "outdoor_temp_f", "humidity_pct", "sunshine_hours",
            "goods_in_lb", "goods_in_kg", "pallets_in", "pallets_out", "pallets_moved",
            "door_openings", "defrost_cycles", "energy_kwh"]
    # Reference: listwise deletion counted by pandas (dropna over the columns used).
    kept = len(frame.dropna(subset=used))
    d = full["design"]
    assert d["rows_total"] == len(frame)
    assert d["rows_used"] == kept == full["n_rows"]
    assert d["rows_dropped"] == len(frame) - kept == sum(d["dropped_by"].values())


def test_keep_moves_the_unit_relation() -> None:
    r = run(*FULL, "--keep", "goods_in_kg")
    doc = r.json()
    dep = find(doc, {"goods_in_kg", "goods_in_lb"})
    assert dep["column"] == "goods_in_lb"
    # Reference: 1 kg = 1/0.45359237 lb (definition of the pound; from memory).
    assert dep["combination"]["goods_in_kg"] == pytest.approx(1 / KG_PER_LB, rel=REL)


def test_fail_if_deficient() -> None:
    r = run(*FULL, "--fail-if", "deficient")
    # Reference: the four planted relations make the design rank deficient (see above).
    assert r.code == 1
    assert len(r.err.splitlines()) == 1 and "deficient" in r.err
    assert r.json()["checks"][0]["crossed"] is True


def test_fail_if_thresholds_on_the_full_rank_design() -> None:
    base = ("check", DEMO, "--response", "energy_kwh", *REDUCED, "--json")
    doc = run(*base).json()
    top_vif = max(doc["vif"].values())
    top_index = max(doc["condition_indices"])
    # Reference: VIF 10 and condition index 30 are the usual marks (common practice); the
    # planted door_openings is above 10 (test_near_collinear_pair_is_flagged).
    crossed = run(*base, "--fail-if", "vif>10")
    assert crossed.code == 1
    assert "vif>10" in crossed.err and "door_openings" in crossed.err
    assert len(crossed.err.splitlines()) == 1
    held = run(*base, "--fail-if", f"vif>{top_vif * 1.01}", "--fail-if", "deficient")
    assert held.code == 0 and held.err == ""
    assert all(not c["crossed"] for c in held.json()["checks"])
    index = run(*base, "--fail-if", f"index>{top_index * 0.99}",
                "--fail-if", f"index>={top_index * 1.01}")
    assert index.code == 1 and len(index.err.splitlines()) == 1
    checks = index.json()["checks"]
    assert [c["crossed"] for c in checks] == [True, False]
    assert checks[0]["value"] == pytest.approx(top_index, rel=1e-15)


def test_fail_if_infinite_vif_crosses_any_limit() -> None:
    r = run(*FULL, "--fail-if", "vif>1e300")
    # Reference: a column in an exact dependency has VIF = ∞ (definition), above any limit.
    assert r.code == 1
    check = r.json()["checks"][0]
    assert check["crossed"] is True and check["value"] is None


def test_text_report_exit_codes_match_json() -> None:
    r = run("check", DEMO, "--response", "energy_kwh", *REDUCED, "--fail-if", "vif>10")
    # Reference: the same rule as in the JSON run above (exit codes are the documented ones).
    assert r.code == 1
    assert "Least-squares fit of energy_kwh" in r.out
