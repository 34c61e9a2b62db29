"""Property tests with planted structure: random full-rank blocks plus exact combinations.

The planted relations are the reference: we built them, so their columns and
coefficients are known exactly.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from rankscope.core import diagnose
from tests.core.battery import rank_path  # noqa: F401 - a fixture

pytestmark = pytest.mark.usefixtures("rank_path")

INT = "(intercept)"


@st.composite
def planted(draw):
    """A design: intercept, k random columns, and planted dependent columns."""
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    n = draw(st.integers(40, 160))
    k = draw(st.integers(3, 6))
    base = rng.normal(size=(n, k)) * rng.uniform(0.1, 100.0, size=k) + rng.normal(size=k) * 5
    cols = {INT: np.ones(n)} | {f"x{i}": base[:, i] for i in range(k)}
    rel: dict[str, dict[str, float]] = {}
    # A multiple of one column (e.g. a unit change).
    m = float(draw(st.sampled_from([2.0, -0.5, 1000.0, 0.45359237, 3.0])))
    cols["mult"] = m * cols["x0"]
    rel["mult"] = {"x0": m}
    # An affine map involving the intercept (e.g. a second temperature scale).
    a, b = float(draw(st.sampled_from([32.0, -7.0, 273.15]))), 1.8
    cols["affine"] = a + b * cols["x1"]
    rel["affine"] = {INT: a, "x1": b}
    # The sum of three columns (a total beside its parts).
    cols["total"] = cols["x0"] + cols["x1"] + cols["x2"]
    rel["total"] = {"x0": 1.0, "x1": 1.0, "x2": 1.0}
    # A complete indicator set beside the intercept: the last level is the dependent one.
    levels = draw(st.integers(2, 4))
    codes = np.arange(n) % levels
    rng.shuffle(codes)
    for lv in range(levels):
        cols[f"g[{lv}]"] = (codes == lv).astype(float)
    rel[f"g[{levels - 1}]"] = {INT: 1.0} | {f"g[{lv}]": -1.0 for lv in range(levels - 1)}
    names = list(cols)
    X = np.column_stack([cols[c] for c in names])
    y = base @ rng.normal(size=k) + rng.normal(size=n)
    groups = {"g": [f"g[{lv}]" for lv in range(levels)]}
    return X, names, y, rel, groups


@given(planted())
def test_rank_dependent_columns_and_coefficients_recovered(case) -> None:
    X, names, y, rel, _ = case
    d = diagnose(X, names, y)
    # reference: the planted construction (p columns, len(rel) exact relations)
    assert d.rank == len(names) - len(rel)
    assert d.rank_qr == d.rank
    got = {r["column"]: r["combination"] for r in d.dependencies}
    assert set(got) == set(rel)
    for col, combo in rel.items():
        assert set(got[col]) == set(combo), (col, got[col])
        for name, c in combo.items():
            assert np.isclose(got[col][name], c, rtol=1e-7, atol=1e-9), (col, name)
    # rank matches numpy's SVD rank rule on the equilibrated matrix (reference: numpy)
    Xe = X / np.linalg.norm(X, axis=0)
    assert d.rank == np.linalg.matrix_rank(Xe)


@given(planted(), st.integers(0, 2**31 - 1))
def test_vif_and_condition_indices_invariant_under_rescaling(case, seed) -> None:
    X, names, y, rel, _ = case
    # Make only the near part: drop planted exact columns so VIFs are finite.
    keep = [j for j, c in enumerate(names) if c not in rel]
    X, names = X[:, keep], [names[j] for j in keep]
    scale = np.random.default_rng(seed).uniform(1e-3, 1e3, size=len(names))
    d1 = diagnose(X, names, y)
    d2 = diagnose(X * scale, names, y)
    # textbook identity: VIF and equilibrated condition indices are invariant to column
    # scaling (Belsley, Kuh & Welsch 1980, §3.3)
    for c in names:
        if d1.vif.get(c) is not None:
            assert np.isclose(d1.vif[c], d2.vif[c], rtol=1e-8)
    assert np.allclose(d1.condition_indices, d2.condition_indices, rtol=1e-8)


@given(planted())
def test_predictions_invariant_under_choice_of_basis(case) -> None:
    X, names, y, rel, _ = case
    d1 = diagnose(X, names, y)
    # Put the dependent columns first: a different basis, the same column space.
    d2 = diagnose(X, names, y, keep=list(rel))
    assert set(d2.fit["aliased"]) != set(d1.fit["aliased"])

    def predict(fit):
        b = np.array([fit["coefficients"][c] or 0.0 for c in names])
        return X @ b

    # textbook identity: fitted values are the projection of y on col(X), basis-free
    p1, p2 = predict(d1.fit), predict(d2.fit)
    assert np.allclose(p1, p2, rtol=1e-7, atol=1e-7 * np.abs(y).max())
    # reference: numpy.linalg.lstsq gives the same fitted values
    ref = X @ np.linalg.lstsq(X, y, rcond=None)[0]
    assert np.allclose(p1, ref, rtol=1e-7, atol=1e-7 * np.abs(y).max())


@given(planted())
def test_columns_in_exact_dependencies_have_infinite_vif(case) -> None:
    X, names, y, rel, groups = case
    d = diagnose(X, names, y, groups=groups)
    involved = set(rel) | {c for combo in rel.values() for c in combo} - {"(intercept)"}
    for c in involved:
        assert d.vif[c] is None  # exact dependency: VIF is infinite by definition
    assert d.gvif["g"]["gvif"] is None
