"""Hypothesis search over designs with planted structure: offset columns (offset/spread
from 1 to 1e8), a steady part of a total, a copied column, mixed scales 1e-8..1e8, a
categorical as indicators (with or without the reference level), rows with a missing
value removed first. References: the construction (which columns are planted together),
numpy's rank rule, and the exact rational reference of tests/core/exact.py.

VIF comparisons use 1e-8 relative: where the basis keeps `total` and `part` instead of
`tare`, tare's direction is carried by the stored total, which holds a rounding of
ulp(1800)/2 ≈ 1e-13 per row against tare's spread of 1e-4, a relative difference of
about 2e-9 in the exact VIFs of the two (equally valid) bases.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rankscope.core import Diagnosis
from tests.core import exact as ex
from tests.core.battery import (
    INT,
    check_dependency_fields,
    check_rank_counts,
    check_vif_none_iff_involved,
    involved,
    numpy_rank,
    rank_path,  # noqa: F401 - a fixture (pytestmark)
    rel_err,
    run,
    support,
)

pytestmark = pytest.mark.usefixtures("rank_path")

#: Relative tolerance on VIF values (see the module docstring).
VIF_RTOL = 1e-8


@dataclass
class Case:
    """A design with its planted relations (disjoint supports)."""

    cols: dict[str, np.ndarray]
    y: np.ndarray
    planted: list[set[str]]

    @property
    def names(self) -> list[str]:
        return list(self.cols)


@st.composite
def designs(draw: st.DrawFn) -> Case:
    """Intercept, 1–3 free columns with offsets, and optional planted structure."""
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    n = draw(st.integers(30, 60))
    k = draw(st.integers(1, 3))
    log_ratio = draw(st.floats(0.0, 8.0))
    mixed = draw(st.booleans())
    cols: dict[str, np.ndarray] = {INT: np.ones(n)}
    planted: list[set[str]] = []
    for i in range(k):
        r = 10.0 ** rng.uniform(0.0, log_ratio)
        scale = 10.0 ** float(rng.integers(-8, 9)) if mixed else 1.0
        cols[f"x{i}"] = scale * (r * rng.choice([-1.0, 1.0]) + rng.normal(size=n))
    if draw(st.booleans()):  # a steady part of a total
        part = 300 + 100 * rng.normal(size=n)
        tare = 1500 + rng.uniform(-1e-4, 1e-4, n)
        cols |= {"part": part, "tare": tare, "total": part + tare}
        planted.append({"part", "tare", "total"})
    if draw(st.booleans()):  # a copied column
        cols["x0_copy"] = cols["x0"].copy()
        planted.append({"x0", "x0_copy"})
    if draw(st.booleans()):  # a categorical as indicators
        levels = draw(st.integers(2, 3))
        every = draw(st.booleans())
        codes = np.arange(n) % levels
        rng.shuffle(codes)
        for lv in range(0 if every else 1, levels):
            cols[f"g[{lv}]"] = (codes == lv).astype(float)
        if every:
            planted.append({INT} | {f"g[{lv}]" for lv in range(levels)})
    names = list(cols)
    X = np.column_stack([cols[c] for c in names])
    y = X[:, 1] / np.std(X[:, 1]) + rng.normal(size=n)
    if draw(st.booleans()):  # a few missing values; rows with any are removed first
        for _ in range(int(rng.integers(1, 5))):
            j = int(rng.integers(0, len(names) + 1))
            r_ = int(rng.integers(0, n))
            if j == len(names):
                y[r_] = np.nan
            else:
                X[r_, j] = np.nan
        ok = np.all(np.isfinite(X), axis=1) & np.isfinite(y)
        X, y = X[ok], y[ok]
    return Case({c: X[:, j] for j, c in enumerate(names)}, y, planted)


def exact_vifs_on_basis(case: Case, d: Diagnosis) -> dict[str, float]:
    """Exact centered VIF of every basis column that is in no dependency, in the design of
    the basis columns (the constant added by the reference)."""
    design = [c for c in d.basis if c != INT]
    got = ex.vifs([ex.column(case.cols[c]) for c in design])
    inv = involved(d)
    return {c: float(v) for j, c in enumerate(design)
            if c not in inv and (v := got[j]) is not None}


@settings(max_examples=30, deadline=None)
@given(designs())
def test_invariants(case: Case) -> None:
    """Rank, dependencies, VIF and RSS agree with the construction and the exact reference."""
    d = run(case.cols, case.names, case.y)
    p = len(case.names)
    check_rank_counts(d)
    X = np.column_stack(list(case.cols.values()))
    assert d.rank == p - len(case.planted), (d.rank, case.planted)  # reference: construction
    assert d.rank == numpy_rank(X)  # reference: numpy matrix_rank on the unit-length X
    # reference: construction — each planted relation leaves exactly one column out of the
    # basis, and the minimal support of each named dependency is one planted relation
    for s in case.planted:
        assert len(s - set(d.basis)) == 1, (s, d.basis)
    assert sorted(map(sorted, map(support, d.dependencies))) == sorted(
        map(sorted, case.planted)), [x["equation"] for x in d.dependencies]
    check_vif_none_iff_involved(d)
    want = exact_vifs_on_basis(case, d)  # exact rational reference
    for c, v in want.items():
        assert rel_err(d.vif.get(c), v) < VIF_RTOL, (c, d.vif.get(c), v)
    # exact rational reference: RSS of y on the basis columns
    want_rss = float(ex.rss([ex.column(case.cols[c]) for c in d.basis], ex.column(case.y)))
    assert d.fit is not None
    assert rel_err(d.fit["rss"], want_rss) < 1e-9, (d.fit["rss"], want_rss)
    check_dependency_fields(d)


def same_results(d1: Diagnosis, d2: Diagnosis) -> None:
    """Same rank, same dependency supports, same VIFs off the dependencies."""
    assert d1.rank == d2.rank, (d1.rank, d2.rank)
    s1 = sorted(map(sorted, map(support, d1.dependencies)))
    s2 = sorted(map(sorted, map(support, d2.dependencies)))
    assert s1 == s2, (s1, s2)
    for c, v in d1.vif.items():
        if v is not None:
            assert rel_err(d2.vif.get(c), v) < VIF_RTOL, (c, d2.vif.get(c), v)


@settings(max_examples=25, deadline=None)
@given(designs(), st.integers(0, 2**32 - 1), st.booleans())
def test_column_order_does_not_matter(case: Case, seed: int, intercept_too: bool) -> None:
    """Reference: textbook invariance — rank, dependency supports and VIF do not depend on
    the order of the columns (a permutation of X's columns)."""
    rng = np.random.default_rng(seed)
    names = case.names
    rest = names if intercept_too else names[1:]
    order = [rest[i] for i in rng.permutation(len(rest))]
    order = order if intercept_too else [INT, *order]
    d1 = run(case.cols, names, case.y)
    d2 = run(case.cols, order, case.y)
    same_results(d1, d2)


@settings(max_examples=25, deadline=None)
@given(designs(), st.integers(0, 2**32 - 1))
def test_column_scaling_does_not_matter(case: Case, seed: int) -> None:
    """Reference: textbook invariance — rank, dependency supports and VIF do not change when
    columns are multiplied by powers of 10 (X·D, D diagonal, same column space up to
    rounding). The intercept stays a column of ones."""
    rng = np.random.default_rng(seed)
    scaled = {c: v if c == INT else v * 10.0 ** float(rng.integers(-6, 7))
              for c, v in case.cols.items()}
    d1 = run(case.cols, case.names, case.y)
    d2 = run(scaled, case.names, case.y)
    same_results(d1, d2)
