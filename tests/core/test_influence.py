"""The rows behind ill-conditioning: exact leave-one-out against brute-force deletion.

Reference: numpy's SVD of the design with the row deleted (same column scaling), for every
row of small designs; and planted rows that alone make a near-dependency, ranked first.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from rankscope.core import diagnose
from rankscope.core.influence import leave_one_out


def _brute(X: np.ndarray, scales: np.ndarray, basis: list[int], k: int | None) -> np.ndarray:
    out = []
    for i in range(X.shape[0]):
        d = np.linalg.svd(np.delete(X, i, axis=0)[:, basis] / scales[basis], compute_uv=False)
        out.append(d[0] / d[-1] if k is None else d[0] / d[k])
    return np.array(out)


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**31 - 1), st.integers(8, 40), st.integers(2, 6))
def test_every_row_equals_brute_force_deletion(seed: int, n: int, p: int) -> None:
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) * rng.uniform(0.1, 10, p) + rng.normal(size=p)
    X[:, 0] = 1.0
    scales = np.linalg.norm(X, axis=0)
    basis = list(range(p))
    got = leave_one_out(X, scales, basis, list(range(p)))
    # Reference: numpy SVD of each design with one row deleted (n SVDs).
    ref = _brute(X, scales, basis, None)
    assert np.allclose(got["condition_number"]["without"], ref, rtol=1e-9)
    for dim in got["dimensions"]:
        ref_k = _brute(X, scales, basis, dim["k"])
        assert np.allclose(dim["without"], ref_k, rtol=1e-9)


def test_planted_rows_behind_a_near_dependency_rank_first() -> None:
    rng = np.random.default_rng(4)
    n = 300
    a, b, c = rng.normal(size=(3, n))  # independent everywhere ...
    planted = [17, 150, 222]
    big = rng.uniform(250, 350, 3)
    a[planted] = big  # ... except three far rows where a and b move together
    b[planted] = big * (1 + rng.normal(0, 1e-3, 3))
    X = np.column_stack([np.ones(n), a, b, c])
    d = diagnose(X, ["(intercept)", "a", "b", "c"], rng.normal(size=n), influence=True)
    dims = d.influence["dimensions"]
    assert dims and {"a", "b"} <= set(dims[0]["columns"])
    # The three far rows make a and b look collinear: leaving one out moves the index most.
    assert {t["row"] for t in dims[0]["top"][:3]} == set(planted)
    assert {t["row"] for t in d.influence["condition_number"]["top"][:3]} == set(planted)


def test_weights_are_rows_scaled_by_their_square_root() -> None:
    rng = np.random.default_rng(5)
    n = 30
    X = np.column_stack([np.ones(n), rng.normal(size=n), rng.normal(size=n)])
    w = rng.uniform(0.5, 2.0, n)
    d = diagnose(X, ["(intercept)", "u", "v"], rng.normal(size=n), weights=w, influence=True)
    Xw = X * np.sqrt(w)[:, None]
    # Reference: brute force on the weighted rows, scaled by the weighted column lengths.
    ref = _brute(Xw, np.linalg.norm(Xw, axis=0), [0, 1, 2], None)
    assert np.allclose(d.influence["condition_number"]["without"], ref, rtol=1e-9)
