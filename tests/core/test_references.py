"""Reference checks of the core against general-purpose libraries and textbook identities.

Each check names its reference. Data are random (seeded), well conditioned unless said.
"""

from __future__ import annotations

import inspect
import warnings

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given
from hypothesis import strategies as st
from statsmodels.stats.outliers_influence import variance_inflation_factor as sm_vif

from rankscope.core import diagnose, factorize
from rankscope.core.fit import is_estimable


def variance_inflation_factor(X: np.ndarray, j: int) -> float:
    """statsmodels' VIF on X as given (its newer versions standardize unless told not to)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # its conditioning notice, not an error
        if "standardize" in inspect.signature(sm_vif).parameters:
            return float(sm_vif(X, j, standardize=False))
        return float(sm_vif(X, j))


def sample(seed: int, n: int = 120, k: int = 4, corr: float = 0.6):
    rng = np.random.default_rng(seed)
    Z = rng.normal(size=(n, k))
    Z[:, 1] = corr * Z[:, 0] + np.sqrt(1 - corr**2) * Z[:, 1]
    X = np.column_stack([np.ones(n), Z * [1.0, 10.0, 0.01, 3.0][:k] + [0, 5, -2, 100][:k]])
    names = ["(intercept)"] + [f"x{i}" for i in range(k)]
    y = X @ rng.normal(size=k + 1) + rng.normal(size=n)
    return X, names, y


@given(st.integers(0, 10_000))
def test_ols_matches_statsmodels(seed: int) -> None:
    X, names, y = sample(seed)
    d = diagnose(X, names, y)
    ref = sm.OLS(y, X).fit()  # reference: statsmodels OLS
    b = np.array([d.fit["coefficients"][c] for c in names])
    se = np.array([d.fit["std_errors"][c] for c in names])
    assert np.allclose(b, ref.params, rtol=1e-9, atol=1e-12)
    assert np.allclose(se, ref.bse, rtol=1e-9)
    assert np.allclose([d.fit["t_values"][c] for c in names], ref.tvalues, rtol=1e-8)
    assert np.allclose([d.fit["p_values"][c] for c in names], ref.pvalues, rtol=1e-6, atol=1e-14)
    assert np.isclose(d.fit["r_squared"], ref.rsquared, rtol=1e-10)
    assert np.isclose(d.fit["adj_r_squared"], ref.rsquared_adj, rtol=1e-10)
    assert np.isclose(d.fit["f_statistic"], ref.fvalue, rtol=1e-8)
    assert np.isclose(d.fit["f_p_value"], ref.f_pvalue, rtol=1e-6, atol=1e-300)
    assert np.isclose(d.fit["residual_std"], np.sqrt(ref.scale), rtol=1e-10)


@given(st.integers(0, 10_000))
def test_weighted_fit_matches_statsmodels_wls(seed: int) -> None:
    X, names, y = sample(seed)
    w = np.random.default_rng(seed + 1).uniform(0.2, 5.0, size=len(y))
    d = diagnose(X, names, y, weights=w)
    ref = sm.WLS(y, X, weights=w).fit()  # reference: statsmodels WLS
    assert np.allclose([d.fit["coefficients"][c] for c in names], ref.params, rtol=1e-9)
    assert np.allclose([d.fit["std_errors"][c] for c in names], ref.bse, rtol=1e-9)
    assert np.isclose(d.fit["r_squared"], ref.rsquared, rtol=1e-9)


@given(st.integers(0, 10_000))
def test_vif_matches_statsmodels(seed: int) -> None:
    X, names, y = sample(seed, corr=0.95)
    d = diagnose(X, names, y)
    for j in range(1, X.shape[1]):
        # reference: statsmodels variance_inflation_factor (one auxiliary regression each)
        assert np.isclose(d.vif[names[j]], variance_inflation_factor(X, j), rtol=1e-9)
        assert np.isclose(d.tolerance[names[j]], 1 / variance_inflation_factor(X, j), rtol=1e-9)


def test_uncentered_vif_without_constant_matches_statsmodels() -> None:
    X, names, y = sample(3)
    X, names = X[:, 1:] + 4.0, names[1:]
    d = diagnose(X, names, y)
    assert not d.vif_centered
    for j in range(X.shape[1]):
        # reference: statsmodels variance_inflation_factor on an exog without a constant
        assert np.isclose(d.vif[names[j]], variance_inflation_factor(X, j), rtol=1e-8)


def test_gvif_single_column_equals_vif_and_group_matches_determinant_formula() -> None:
    X, names, y = sample(7, k=4, corr=0.8)
    groups = {"one": ["x1"], "pair": ["x2", "x3"]}
    d = diagnose(X, names, y, groups=groups)
    # textbook identity: GVIF of a single column is its VIF (Fox & Monette 1992)
    assert np.isclose(d.gvif["one"]["gvif"], d.vif["x1"], rtol=1e-10)
    # reference: Fox & Monette (1992) eq. 4 evaluated with numpy determinants
    C = np.corrcoef(X[:, 1:], rowvar=False)
    g, o = [2, 3], [0, 1]
    ref = np.linalg.det(C[np.ix_(g, g)]) * np.linalg.det(C[np.ix_(o, o)]) / np.linalg.det(C)
    assert np.isclose(d.gvif["pair"]["gvif"], ref, rtol=1e-9)
    assert np.isclose(d.gvif["pair"]["gvif_scaled"], ref ** (1 / 4), rtol=1e-9)


def test_singular_values_and_condition_numbers_match_numpy() -> None:
    X, names, y = sample(11, corr=0.99)
    d = diagnose(X, names, y)
    # reference: numpy.linalg.svd / numpy.linalg.cond
    assert np.allclose(d.singular_values["raw"], np.linalg.svd(X, compute_uv=False), rtol=1e-10)
    Xe = X / np.linalg.norm(X, axis=0)
    assert np.allclose(d.singular_values["equilibrated"], np.linalg.svd(Xe, compute_uv=False),
                       rtol=1e-10)
    assert np.isclose(d.condition_number["raw"], np.linalg.cond(X), rtol=1e-8)
    assert np.isclose(d.condition_number["equilibrated"], np.linalg.cond(Xe), rtol=1e-8)
    Zc = X[:, 1:] - X[:, 1:].mean(axis=0)
    Zc /= np.linalg.norm(Zc, axis=0)
    assert np.isclose(d.condition_number["centered"], np.linalg.cond(Zc), rtol=1e-8)
    # textbook identity: cond(XᵀX) = cond(X)² in the 2-norm
    assert np.isclose(np.linalg.cond(Xe.T @ Xe), d.condition_number["equilibrated"] ** 2,
                      rtol=1e-6)


def test_condition_indices_and_proportions_match_direct_svd() -> None:
    X, names, y = sample(5, corr=0.999)
    d = diagnose(X, names, y)
    # reference: Belsley, Kuh & Welsch (1980) eqs. 3.10-3.12 evaluated with numpy.linalg.svd
    Xe = X / np.linalg.norm(X, axis=0)
    _, s, Vt = np.linalg.svd(Xe)
    phi = Vt.T**2 / s**2
    pi = (phi / phi.sum(axis=1, keepdims=True)).T
    assert np.allclose(d.condition_indices, s[0] / s, rtol=1e-8)
    got = np.array([[row[c] for c in names] for row in d.variance_proportions])
    assert np.allclose(got, pi, atol=1e-8)
    # the planted pair x0, x1 (corr 0.999) is flagged as a near-dependency
    assert any({"x0", "x1"} <= set(nd["columns"]) for nd in d.near_dependencies)


def test_correlations_match_numpy_and_scipy() -> None:
    from scipy.stats import spearmanr

    X, names, y = sample(2, corr=0.9)
    d = diagnose(X, names, y)
    corr = d.correlations
    assert corr["columns"] == names[1:]
    # reference: numpy.corrcoef and scipy.stats.spearmanr
    assert np.allclose(corr["pearson"], np.corrcoef(X[:, 1:], rowvar=False), atol=1e-12)
    assert np.allclose(corr["spearman"], spearmanr(X[:, 1:]).statistic, atol=1e-12)
    assert sorted(corr["order"]) == list(range(len(names) - 1))


def test_normal_equations_fail_where_rankscope_names_the_dependency() -> None:
    rng = np.random.default_rng(0)
    n = 50
    a, b = rng.normal(size=n), rng.normal(size=n)
    X = np.column_stack([np.ones(n), a, 4.0 * a, b])  # exact column multiple (powers of 2)
    names = ["(intercept)", "a", "a_x4", "b"]
    y = 1 + 2 * a - b + rng.normal(size=n) * 0.1
    # reference: numpy.linalg.solve on XᵀX raises LinAlgError (or is useless) here
    with pytest.raises(np.linalg.LinAlgError):
        np.linalg.solve(X.T @ X, X.T @ y)
    d = diagnose(X, names, y)
    assert d.rank == 3
    assert [r["equation"] for r in d.dependencies] == ["a_x4 = 4·a"]
    assert d.fit["aliased"] == ["a_x4"] and d.fit["coefficients"]["a_x4"] is None
    # minimum-norm solution: reference numpy.linalg.lstsq (SVD, rcond default)
    ref = np.linalg.lstsq(X, y, rcond=None)[0]
    assert np.allclose([d.fit["min_norm"][c] for c in names], ref, rtol=1e-8)
    # basic solution equals OLS without the aliased column (reference: statsmodels)
    ols = sm.OLS(y, X[:, [0, 1, 3]]).fit()
    assert np.allclose([d.fit["coefficients"][c] for c in ["(intercept)", "a", "b"]],
                       ols.params, rtol=1e-10)
    # estimability (Searle 1971 §5.4): β_a + 4·β_a_x4 is estimable, β_a alone is not
    assert is_estimable({"a": 1.0, "a_x4": 4.0}, d.null_space)
    assert not is_estimable({"a": 1.0}, d.null_space)
    assert d.fit["alias_structure"][0]["text"] == "β[a] + 4·β[a_x4]"


def test_ridge_matches_augmented_least_squares() -> None:
    X, names, y = sample(9, corr=0.98)
    lam = 0.05
    d = diagnose(X, names, y, ridge_penalty=lam)
    chosen = d.ridge["chosen"]
    # reference: ridge as ordinary least squares on the augmented system
    # [Z; sqrt(λ)I] b = [yc; 0] (Hoerl & Kennard 1970), solved by numpy.linalg.lstsq
    Xc = X[:, 1:] - X[:, 1:].mean(axis=0)
    length = np.linalg.norm(Xc, axis=0)
    Z = Xc / length
    A = np.vstack([Z, np.sqrt(lam) * np.eye(Z.shape[1])])
    rhs = np.concatenate([y - y.mean(), np.zeros(Z.shape[1])])
    b = np.linalg.lstsq(A, rhs, rcond=None)[0] / length
    assert np.allclose([chosen["coefficients"][c] for c in names[1:]], b, rtol=1e-9)
    assert np.isclose(chosen["constant"], y.mean() - X[:, 1:].mean(axis=0) @ b, rtol=1e-9)
    # at λ = 0 the ridge path is the OLS fit (textbook identity)
    i0 = d.ridge["penalties"].index(0.0)
    assert np.allclose([d.ridge["coefficients"][c][i0] for c in names[1:]],
                       [d.fit["coefficients"][c] for c in names[1:]], rtol=1e-8)


def test_rank_tolerance_is_stated_and_adjustable() -> None:
    rng = np.random.default_rng(4)
    a = rng.normal(size=80)
    X = np.column_stack([np.ones(80), a, a + 1e-7 * rng.normal(size=80)])
    d = diagnose(X, ["(intercept)", "a", "a2"])
    assert d.rank == 3 and d.rank_tolerance > 0 and "eps" in d.tolerance_rule
    d2 = diagnose(X, ["(intercept)", "a", "a2"], tol=1e-5)
    assert d2.rank == 2 and d2.dependencies[0]["column"] == "a2"
    # reference: numpy.linalg.matrix_rank with the same tolerance on the unit-length X
    Xe = X / np.linalg.norm(X, axis=0)
    assert d2.rank == np.linalg.matrix_rank(Xe, tol=1e-5)


def test_factor_blocks_agree_with_one_qr() -> None:
    rng = np.random.default_rng(1)
    X = rng.normal(size=(5000, 3))
    F = factorize(X, ["a", "b", "c"], keep_data=False)
    M = np.column_stack([np.ones(5000), X, np.zeros(5000)])
    R = np.linalg.qr(M, mode="r")  # reference: numpy.linalg.qr (LAPACK geqrf)
    R = R * np.where(np.diag(R) < 0, -1.0, 1.0)[:, None]
    assert np.allclose(np.abs(F.T[:4, :4]), np.abs(R[:4, :4]), rtol=1e-10, atol=1e-9)


def test_all_levels_without_intercept_take_the_vifs_of_the_constant_design() -> None:
    rng = np.random.default_rng(12)
    n = 90
    codes = np.arange(n) % 3
    D = np.column_stack([(codes == k).astype(float) for k in range(3)])
    x = rng.normal(size=n)
    X = np.column_stack([D, x, 2.0 * x])  # plus an exact multiple, to test the span check
    names = ["g[a]", "g[b]", "g[c]", "x", "x2"]
    y = D @ [1.0, 2.0, 3.0] + x + rng.normal(size=n)
    d = diagnose(X, names, y, groups={"g": names[:3]})
    # textbook identity: the indicators of every level sum to the constant, so the model
    # holds a constant implicitly and R² is the centered one (as statsmodels decides it)
    assert d.vif_centered and d.fit["r_squared_centered"]
    ref = sm.OLS(y, X[:, :4]).fit()  # reference: statsmodels (implicit constant detected)
    assert np.isclose(d.fit["r_squared"], ref.rsquared, rtol=1e-10)
    # x and x2 are an exact pair: infinite VIF. The last level carries the constant: it has
    # no VIF, and the other levels get the VIFs of the design with g[c] replaced by the
    # constant (reference: statsmodels' auxiliary regressions on [1, g[a], g[b], x]).
    assert d.vif["x"] is None and d.vif["x2"] is None
    assert "g[c]" not in d.vif and "g[c]" in d.vif_absent
    Xc = np.column_stack([np.ones(n), D[:, :2], x])
    for j, c in ((1, "g[a]"), (2, "g[b]")):
        assert np.isclose(d.vif[c], variance_inflation_factor(Xc, j), rtol=1e-10)
    # no level is in a relation: the group's GVIF is finite
    assert d.gvif["g"]["gvif"] is not None
