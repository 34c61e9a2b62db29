"""The fit printed by `rankscope check --json` against statsmodels OLS on the demo table.

The reference design is rebuilt from the CSV with pandas, independently of rankscope's recipe.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from tests.cli.runner import DEMO, REDUCED, run

REL = 1e-8
NUMERIC = ["outdoor_temp_c", "humidity_pct", "sunshine_hours", "goods_in_lb", "pallets_in",
           "pallets_out", "door_openings", "defrost_cycles"]


@pytest.fixture(scope="module")
def ours() -> dict:
    r = run("check", DEMO, "--response", "energy_kwh", *REDUCED, "--json")
    assert r.code == 0, r.err
    return r.json()


@pytest.fixture(scope="module")
def reference() -> tuple[pd.DataFrame, pd.Series]:
    """Intercept, site indicators against the first level in sorted order, numeric columns."""
    df = pd.read_csv(DEMO).dropna(subset=["site", *NUMERIC, "energy_kwh"])
    levels = sorted(df["site"].unique())
    X = pd.DataFrame({"(intercept)": 1.0}, index=df.index)
    for lv in levels[1:]:
        X[f"site[{lv}]"] = (df["site"] == lv).astype(float)
    for c in NUMERIC:
        X[c] = df[c].astype(float)
    return X, df["energy_kwh"].astype(float)


def test_same_columns_and_rows(ours: dict, reference) -> None:
    X, y = reference
    # Reference: the design rebuilt with pandas (columns by name, rows by dropna).
    assert sorted(ours["columns"]) == sorted(X.columns)
    assert ours["n_rows"] == len(y)


def test_coefficients_and_standard_errors(ours: dict, reference) -> None:
    X, y = reference
    res = sm.OLS(y, X).fit()  # Reference: statsmodels OLS.
    fit = ours["fit"]
    assert fit["aliased"] == []
    for c in X.columns:
        assert fit["coefficients"][c] == pytest.approx(res.params[c], rel=REL), c
        assert fit["std_errors"][c] == pytest.approx(res.bse[c], rel=REL), c
        assert fit["t_values"][c] == pytest.approx(res.tvalues[c], rel=REL), c


def test_summary_statistics(ours: dict, reference) -> None:
    X, y = reference
    res = sm.OLS(y, X).fit()  # Reference: statsmodels OLS.
    fit = ours["fit"]
    assert fit["residual_std"] == pytest.approx(np.sqrt(res.scale), rel=REL)
    assert fit["rss"] == pytest.approx(res.ssr, rel=REL)
    assert fit["r_squared"] == pytest.approx(res.rsquared, rel=REL)
    assert fit["adj_r_squared"] == pytest.approx(res.rsquared_adj, rel=REL)
    assert fit["f_statistic"] == pytest.approx(res.fvalue, rel=REL)
    assert fit["df_residual"] == int(res.df_resid)
    assert fit["df_model"] == int(res.df_model)


def test_vif_of_the_near_collinear_column(ours: dict, reference) -> None:
    X, _ = reference
    target = "door_openings"
    # Reference: VIF_j = 1/(1 − R_j²), R_j² from statsmodels OLS of column j on the other
    # columns with the intercept (the definition of the VIF).
    r2 = sm.OLS(X[target], X.drop(columns=[target])).fit().rsquared
    assert ours["vif"][target] == pytest.approx(1.0 / (1.0 - r2), rel=REL)
