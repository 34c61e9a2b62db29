"""Edits on the small factor agree with an analysis from scratch (issue: factor once).

Reference: the same diagnosis computed from the edited matrix built row by row in numpy.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from rankscope.core import diagnose, factorize
from rankscope.core.diagnosis import diagnose_factor
from rankscope.core.workspace import CONSTANT, Workspace

DIGITS = 1e-10  # at least 10 significant digits


def close(a, b, rel=DIGITS) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return bool(np.allclose(a, b, rtol=rel, atol=rel * max(1.0, np.max(np.abs(b)))))


def same(d_fast, d_ref) -> None:
    assert d_fast.columns == d_ref.columns
    assert d_fast.rank == d_ref.rank
    assert [r["column"] for r in d_fast.dependencies] == [r["column"] for r in d_ref.dependencies]
    for key in ("raw", "equilibrated", "centered"):
        assert close(d_fast.condition_number[key], d_ref.condition_number[key], 1e-8), key
    assert close(d_fast.singular_values["equilibrated"], d_ref.singular_values["equilibrated"])
    for c, v in d_ref.vif.items():
        assert close(d_fast.vif[c], v, 1e-8), c
    if d_ref.fit:
        for c, v in d_ref.fit["coefficients"].items():
            assert close(d_fast.fit["coefficients"][c], v), c
            assert close(d_fast.fit["std_errors"][c], d_ref.fit["std_errors"][c]), c
        assert close(d_fast.fit["r_squared"], d_ref.fit["r_squared"])


@st.composite
def table(draw):
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    n = draw(st.integers(30, 300))
    k = 5
    X = rng.normal(size=(n, k)) * rng.uniform(0.5, 50, size=k) + rng.uniform(-20, 20, size=k)
    X[:, 2] = 0.7 * X[:, 0] + 0.1 * X[:, 2]
    y = X @ rng.normal(size=k) + rng.normal(size=n)
    return X, y


@given(table(), st.floats(0.01, 1000.0))
def test_linear_edits_on_factor_equal_from_scratch(data, by) -> None:
    X, y = data
    n = len(y)
    names = [CONSTANT, "a", "b", "c", "d", "e"]
    X1 = np.column_stack([np.ones(n), X])
    ws = Workspace.from_factorization(factorize(X1, names, y), response="y")
    # center a, multiply b by a constant, combine c+d into s, drop e
    ws = ws.add("a_c", {"a": 1.0, CONSTANT: -ws.mean("a")}, replaces=("a",))
    ws = ws.add("b_x", {"b": by}, replaces=("b",))
    ws = ws.add("s", {"c": 1.0, "d": 1.0}, replaces=("c", "d"))
    ws = ws.hide("e")
    fast = diagnose_factor(ws.factorization())
    # reference: the edited matrix built from the rows with numpy
    Xr = np.column_stack([np.ones(n), X[:, 0] - X[:, 0].mean(), by * X[:, 1], X[:, 2] + X[:, 3]])
    ref = diagnose(Xr, [CONSTANT, "a_c", "b_x", "s"], y)
    same(fast, ref)
    # restore e at the end, and make d the response instead of y
    ws2 = ws.show("e").with_response("e")
    ref2 = diagnose(Xr, [CONSTANT, "a_c", "b_x", "s"], X[:, 4])
    same(diagnose_factor(ws2.factorization()), ref2)


@given(table())
def test_standardize_and_unit_length_from_factor_statistics(data) -> None:
    X, y = data
    n = len(y)
    names = [CONSTANT, "a", "b", "c", "d", "e"]
    ws = Workspace.from_factorization(factorize(np.column_stack([np.ones(n), X]), names, y), "y")
    # reference: numpy mean, std(ddof=1) and norm of the rows
    assert np.isclose(ws.mean("b"), X[:, 1].mean(), rtol=1e-12, atol=1e-12 * abs(X[:, 1]).max())
    assert np.isclose(ws.sd("b"), X[:, 1].std(ddof=1), rtol=1e-10)
    assert np.isclose(ws.length("b"), np.linalg.norm(X[:, 1]), rtol=1e-12)
