"""A fitted statsmodels model gives the diagnosis of its design: the same rank, VIF, GVIF by
term and fit as the CSV path; the fit matches statsmodels' params and bse at full rank
(statsmodels is the outside reference)."""

from __future__ import annotations

import numpy as np
import pytest

import rankscope
from rankscope.design.design import INTERCEPT
from tests.api.data import planted, write_csv

sm = pytest.importorskip("statsmodels.api")
smf = pytest.importorskip("statsmodels.formula.api")

FULL = "y ~ u + v + z + C(g) + u:g"


def _same_diagnosis(a, b) -> None:
    # statsmodels (through patsy) orders the columns by kind of term; names are compared.
    assert a.rank == b.rank and sorted(a.columns) == sorted(b.columns)
    for c in a.columns:
        va, vb = a.vif.get(c), b.vif.get(c)
        assert (va is None) == (vb is None) and (va is None or va == pytest.approx(vb, 1e-12))
    assert set(a.gvif) == set(b.gvif)
    for t in a.gvif:
        assert a.gvif[t]["columns"] == b.gvif[t]["columns"]
        ga, gb = a.gvif[t]["gvif"], b.gvif[t]["gvif"]
        assert (ga is None) == (gb is None) and (ga is None or ga == pytest.approx(gb, 1e-12))
    for key in ("coefficients", "std_errors"):
        for c in a.columns:
            x, y = a.fit[key][c], b.fit[key][c]
            assert (x is None) == (y is None) and (x is None or x == pytest.approx(y, 1e-12))


def _matches_statsmodels(got, results) -> None:
    # Outside reference: statsmodels' OLS/WLS estimates and standard errors.
    names = [INTERCEPT if n in ("Intercept", "const") else n for n in results.model.exog_names]
    assert got.columns == names
    coef = np.array([got.fit["coefficients"][c] for c in names])
    se = np.array([got.fit["std_errors"][c] for c in names])
    np.testing.assert_allclose(coef, np.asarray(results.params), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(se, np.asarray(results.bse), rtol=1e-9, atol=1e-12)
    assert got.fit["r_squared"] == pytest.approx(results.rsquared, rel=1e-10)


def test_formula_results_match_the_csv_path(tmp_path):
    frame = planted(missing=True)
    results = smf.ols(FULL, frame).fit()
    from_model = rankscope.inspect(results)
    from_csv = rankscope.inspect(write_csv(frame, tmp_path), formula=FULL)
    assert from_model.design.rows_used == results.nobs == from_csv.design.rows_used
    assert from_model.full_rank
    _same_diagnosis(from_model, from_csv)
    _matches_statsmodels(from_model, results)
    # The formula's terms are the GVIF groups: all columns of C(g), of u:g.
    assert from_model.gvif["C(g)"]["df"] == 2 and from_model.gvif["u:g"]["df"] == 2
    assert rankscope.inspect(results.model).to_dict() == from_model.to_dict()


def test_array_results_match_the_csv_path(tmp_path):
    frame = planted().drop(columns="g")
    X = sm.add_constant(frame[["u", "v", "z"]])
    results = sm.OLS(frame["y"], X).fit()
    from_model = rankscope.inspect(results)
    from_csv = rankscope.inspect(write_csv(frame, tmp_path), "y", recipe=[
        {"step": "drop", "column": "w"}])
    assert from_model.columns == [INTERCEPT, "u", "v", "z"]
    _same_diagnosis(from_model, from_csv)
    _matches_statsmodels(from_model, results)
    assert from_model.gvif == {}  # no formula, no terms: VIF per column


def test_weighted_results_match_statsmodels():
    frame = planted()
    weights = np.random.default_rng(3).uniform(0.5, 2.0, len(frame))
    results = smf.wls("y ~ u + v + C(g)", frame, weights=weights).fit()
    got = rankscope.inspect(results)
    assert got.fit["weighted"]
    _matches_statsmodels(got, results)
    # The same weights through the data path, by column name and as an array.
    frame["wt"] = weights
    by_name = rankscope.inspect(frame, formula="y ~ u + v + C(g)", weights="wt")
    by_array = rankscope.inspect(frame, formula="y ~ u + v + C(g)", weights=weights)
    _same_diagnosis(by_name, got)
    _same_diagnosis(by_array, got)


@pytest.mark.filterwarnings("ignore:The design matrix is rank-deficient")
def test_deficient_model_names_the_dependency_by_its_terms():
    frame = planted()
    results = smf.ols("y ~ u + v + w + C(g)", frame).fit()
    got = rankscope.inspect(results)
    assert got.rank == len(got.columns) - 1 == results.model.rank
    assert [r["equation"] for r in got.dependencies] == ["w = u − 2·v"]
    assert got.gvif["w"]["gvif"] is None  # in an exact dependency: infinite
    assert got.gvif["C(g)"]["gvif"] is not None
