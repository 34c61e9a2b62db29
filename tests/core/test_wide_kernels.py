"""The kernels chosen for wide designs agree with the full computations they replace.

References: VIF = diag of the inverse correlation matrix (numpy.linalg.inv, a textbook
identity: Belsley, Kuh & Welsch 1980, §2.1), scipy.cluster.hierarchy for the display order,
numpy.linalg.inv for the triangular inverse. Data are random with planted structure.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.cluster.hierarchy import leaves_list, linkage, optimal_leaf_ordering
from scipy.spatial.distance import squareform

from rankscope.core import diagnose
from rankscope.core.correlation import OPTIMAL_ORDER_LIMIT, cluster_order
from rankscope.core.inflation import triangular_inverse, vif_from_factor

K = 7


def planted(seed: int, n: int = 200, k: int = K) -> np.ndarray:
    """k random columns, column 3 nearly column 0 + column 1 (VIFs in the thousands)."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, k)) * rng.uniform(0.1, 50, k) + rng.uniform(-100, 100, k)
    X[:, 3] = X[:, 0] + X[:, 1] + 1e-2 * rng.normal(size=n) * np.std(X[:, 0])
    return X


@settings(deadline=None, max_examples=40)
@given(st.integers(0, 10_000), st.permutations(range(K)))
def test_vif_from_the_triangular_inverse_is_the_inverse_correlation_diagonal(
        seed: int, order: list[int]) -> None:
    X = planted(seed)[:, order]
    Z = X - X.mean(axis=0)
    Z /= np.linalg.norm(Z, axis=0)
    # reference: VIF_j = [C⁻¹]_jj, C the correlation matrix (numpy.linalg.inv of corrcoef),
    # itself accurate to about κ(C)·eps relative (Higham 2nd ed. §14.1)
    C = np.corrcoef(X, rowvar=False)
    ref = np.diag(np.linalg.inv(C))
    rtol = 1e-10 + 50 * np.finfo(float).eps * np.linalg.cond(C)
    assert np.allclose(vif_from_factor(Z), ref, rtol=rtol)
    d = diagnose(np.column_stack([np.ones(len(X)), X]), ["(intercept)"] + [f"x{j}" for j in order])
    assert np.allclose([d.vif[f"x{j}"] for j in order], ref, rtol=rtol)


@given(st.integers(0, 10_000))
def test_triangular_inverse_is_the_inverse(seed: int) -> None:
    rng = np.random.default_rng(seed)
    R = np.triu(rng.normal(size=(30, 30))) + 4 * np.eye(30)
    # reference: numpy.linalg.inv
    assert np.allclose(triangular_inverse(R), np.linalg.inv(R), rtol=1e-10, atol=1e-12)


def _blocks(k: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Correlations of k columns in 4 planted groups (each column its group's factor plus
    noise), columns shuffled, and each column's group."""
    rng = np.random.default_rng(seed)
    F = rng.normal(size=(400, 4))
    group = rng.permutation(np.arange(k) % 4)
    X = F[:, group] + 0.7 * rng.normal(size=(400, k))
    return np.corrcoef(X, rowvar=False), group


def _scipy_order(C: np.ndarray, optimal: bool) -> list[int]:
    D = 1.0 - np.abs(np.round(C, 10))
    D = (D + D.T) / 2
    np.fill_diagonal(D, 0.0)
    cond = squareform(np.clip(D, 0.0, None), checks=False)
    Z = linkage(cond, method="average")
    return leaves_list(optimal_leaf_ordering(Z, cond) if optimal else Z).tolist()


def test_order_is_scipy_average_linkage_optimal_up_to_the_limit_plain_above() -> None:
    small, _ = _blocks(40, 1)
    # reference: scipy.cluster.hierarchy (average linkage, optimal leaf ordering)
    assert cluster_order(small) == _scipy_order(small, optimal=True)
    wide, group = _blocks(OPTIMAL_ORDER_LIMIT + 20, 2)
    order = cluster_order(wide)
    assert order == _scipy_order(wide, optimal=False)
    assert sorted(order) == list(range(OPTIMAL_ORDER_LIMIT + 20))
    # each planted group stands in one run: a tree's clusters are contiguous in its leaves
    runs = [g for i, g in enumerate(group[order]) if i == 0 or g != group[order][i - 1]]
    assert sorted(runs) == [0, 1, 2, 3]


def test_plain_dict_is_to_dict() -> None:
    X = planted(3)
    d = diagnose(np.column_stack([np.ones(len(X)), X]), ["(intercept)"] + [f"x{j}" for j in
                                                                          range(K)])
    assert d.plain() == d.to_dict()
    assert list(d.plain()) == list(d.to_dict())


@settings(deadline=None, max_examples=60)
@given(st.integers(0, 10_000), st.lists(st.integers(0, 9), min_size=1, max_size=14))
def test_retriangulating_the_trailing_block_is_the_full_qr(seed: int, cols: list[int]) -> None:
    """Columns of a triangular factor shown in any order, some left out or repeated."""
    from rankscope.core.reduce import square_factor, upper_sign_fixed
    from rankscope.core.workspace import _retriangulate

    rng = np.random.default_rng(seed)
    T = upper_sign_fixed(np.linalg.qr(planted(seed, n=60, k=10), mode="r"))
    T[:, rng.integers(0, 10)] *= 0.0  # a column that is all zeros (a constant's centred part)
    M = T[:, cols]
    got = _retriangulate(M)
    # reference: numpy.linalg.qr of the whole matrix (the same R up to rounding)
    ref = upper_sign_fixed(square_factor(np.linalg.qr(M, mode="r"), len(cols)))
    scale = np.where(np.linalg.norm(M, axis=0) > 0, np.linalg.norm(M, axis=0), 1.0)
    assert np.allclose(got.T @ got / np.outer(scale, scale), M.T @ M / np.outer(scale, scale),
                       atol=1e-12)
    assert np.allclose(np.abs(got), np.abs(ref), atol=1e-10 * float(np.max(np.abs(M))))
    assert np.allclose(got, np.triu(got))


@settings(deadline=None, max_examples=60)
@given(st.integers(0, 10_000), st.permutations(range(9)), st.integers(0, 9))
def test_structured_r_factor_is_lapacks_in_every_column_order(seed: int, order: list[int],
                                                              cut: int) -> None:
    """Forced onto the column-by-column path: a triangular factor's columns in any order
    with some left out (cut), a dense block and an upper Hessenberg matrix."""
    from rankscope.core import structured
    from rankscope.core.reduce import square_factor

    rng = np.random.default_rng(seed)
    T = np.linalg.qr(planted(seed, n=40, k=9), mode="r")
    shown = order[: max(cut, 1)] + sorted(order[max(cut, 1):])
    cases = [T[:, shown], T[:, 1:], rng.normal(size=(12, 7)), rng.normal(size=(5, 8))]
    for M in cases:
        # reference: numpy.linalg.qr (LAPACK dgeqrf), the same R up to rounding
        ref = square_factor(np.linalg.qr(M, mode="r"), M.shape[1])
        old = structured.STRUCTURED_MIN_COLUMNS, structured.STRUCTURED_SHARE
        structured.STRUCTURED_MIN_COLUMNS, structured.STRUCTURED_SHARE = 0, np.inf
        try:
            got = structured.r_factor(M)
        finally:
            structured.STRUCTURED_MIN_COLUMNS, structured.STRUCTURED_SHARE = old
        # Two backward-stable QRs of M agree to first order within κ₂(M)·O(eps)·‖M‖ (Sun,
        # "Perturbation bounds for the Cholesky and QR factorizations", BIT 31, 1991): the
        # planted near-collinear columns make κ large enough for 1e-12 alone to be too tight.
        kappa = float(np.linalg.cond(M))
        atol = max(1e-12, 50 * np.finfo(float).eps * kappa) * float(np.max(np.abs(M)))
        assert np.allclose(got, ref, rtol=0, atol=atol), M.shape


def test_structured_r_factor_on_a_wide_factor_with_columns_left_out() -> None:
    from rankscope.core.reduce import square_factor
    from rankscope.core.structured import STRUCTURED_MIN_COLUMNS, r_factor

    k = STRUCTURED_MIN_COLUMNS + 30
    rng = np.random.default_rng(5)
    T = np.linalg.qr(rng.normal(size=(3 * k, k)), mode="r")
    for cols in ([0, *range(2, k)], [*range(7), *range(9, k), 7], [*range(k // 2), *range(
            k // 2 + 1, k)]):
        M = T[:, cols]
        # reference: numpy.linalg.qr
        ref = square_factor(np.linalg.qr(M, mode="r"), len(cols))
        assert np.allclose(r_factor(M), ref, rtol=0, atol=1e-12 * float(np.max(np.abs(M))))


def test_all_zero_columns_are_never_in_the_basis() -> None:
    """Found by the upload fuzz test: two zero columns, a duplicated indicator and a column
    with a 3e8 spread on three rows; the rounding of a 1e-9 singular value's vectors once
    left a zero column in the basis (a singular R11). Reference: a zero column x_j gives the
    exact null vector e_j (X·e_j = 0), so it is always written through the others."""
    X = np.array([[1.0, 0.0, 0.0, 1.0, 1.0, 1.0],
                  [1.0, 0.0, 0.0, 1.0, 0.0, 1.0],
                  [1.0, 0.0, 0.0, 0.0, 300000123.0, 0.0]])
    names = ["(intercept)", "z1", "z2", "a[0]", "big", "b[0]"]
    for order in ([0, 1, 2, 3, 4, 5], [0, 3, 4, 5, 1, 2], [5, 4, 3, 2, 1, 0]):
        d = diagnose(X[:, order], [names[j] for j in order])
        # reference: numpy.linalg.matrix_rank of the unit-length columns (zero ones kept)
        lengths = np.linalg.norm(X, axis=0)
        assert d.rank == 3 == np.linalg.matrix_rank(X / np.where(lengths > 0, lengths, 1.0))
        assert {"z1", "z2"} <= {r["column"] for r in d.dependencies}
        assert "z1" not in d.basis and "z2" not in d.basis


def _deficient_factor(seed: int, p: int, near: float) -> tuple[np.ndarray, int]:
    """Triangular factor of p unit-length columns: three exact relations (a sum, a multiple,
    a column of zeros) and one near pair (difference `near`); returns it and its rank."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(3 * p, p)) * rng.uniform(0.5, 2.0, p)
    X[:, p - 1] = X[:, 0] + X[:, 1]
    X[:, p - 2] = 2.5 * X[:, 2]
    X[:, p - 3] = 0.0
    X[:, p - 4] = X[:, 3] + near * rng.normal(size=3 * p)
    lengths = np.linalg.norm(X, axis=0)
    R = np.linalg.qr(X / np.where(lengths > 0, lengths, 1.0), mode="r")
    return R, p - 3


@pytest.mark.parametrize("near", [1e-3, 1e-6])
def test_null_space_by_inverse_iteration_is_the_svds(near: float) -> None:
    from rankscope.core.rank import EPS, default_tolerance, null_by_inverse_iteration

    R, rank = _deficient_factor(7, 120, near)
    # reference: numpy.linalg.svd (LAPACK gesdd): the right singular vectors past the rank
    _, d, Vt = np.linalg.svd(R)
    tol = default_tolerance(d[0], 360, 120)
    assert int(np.sum(d > tol)) == rank
    N = null_by_inverse_iteration(R, np.linalg.svd(R, compute_uv=False), rank, tol)
    assert N is not None and N.shape == (120, 3)
    assert np.allclose(N.T @ N, np.eye(3), atol=1e-12)
    # the same space: equal orthogonal projectors, to the SVD's own rounding (Wedin:
    # about eps·σ_max/σ_r, σ_r the smallest singular value kept)
    V0 = Vt[rank:].T
    assert np.max(np.abs(N @ N.T - V0 @ V0.T)) < 1e3 * EPS * d[0] / d[rank - 1]


def test_inverse_iteration_declines_a_narrow_gap() -> None:
    from rankscope.core.rank import null_by_inverse_iteration

    d = np.array([1.0, 0.5, 1e-9, 1e-10])  # σ_3/σ_2 = 0.1 > NULL_GAP
    assert null_by_inverse_iteration(np.diag(d), d, 3, 2e-10) is None


def test_wide_rank_path_matches_the_full_svds() -> None:
    """A design past VALUES_FIRST_COLUMNS (values first, null space by inverse iteration,
    index table from the basis factor) against the same design forced onto the full SVD
    path, and its proportions against numpy.linalg.svd of the unit-length basis columns
    (Belsley, Kuh & Welsch 1980, eqs. 3.10-3.12)."""
    from rankscope.core import diagnosis as dm

    p = dm.VALUES_FIRST_COLUMNS + 20
    rng = np.random.default_rng(11)
    X = rng.normal(size=(3 * p, p)) + rng.uniform(-5, 5, p)
    X[:, 0] = 1.0
    X[:, p - 1] = X[:, 4] + X[:, 5]
    X[:, p - 2] = 3.0 * X[:, 6] - X[:, 7]
    X[:, p - 3] = X[:, 8] + 1e-4 * rng.normal(size=3 * p)
    names = ["(intercept)"] + [f"x{j:03d}" for j in range(1, p)]
    y = X[:, 1:10] @ rng.normal(size=9) + rng.normal(size=3 * p)
    wide = diagnose(X, names, y, all_proportions=True, spectra=True)
    old = dm.VALUES_FIRST_COLUMNS
    dm.VALUES_FIRST_COLUMNS = 10 * p
    try:
        ref = diagnose(X, names, y, all_proportions=True, spectra=True)
    finally:
        dm.VALUES_FIRST_COLUMNS = old
    # Without the extras: the same numbers where given; the deficient design's raw and
    # centred spectra are left out (both condition numbers are infinite by rule).
    lean = diagnose(X, names, y)
    assert lean.singular_values["raw"] is None and lean.singular_values["centered"] is None
    assert lean.condition_number == ref.condition_number
    assert lean.singular_values["equilibrated"] == wide.singular_values["equilibrated"]
    given = [k for k, row in enumerate(lean.variance_proportions) if row is not None]
    # Every dimension a reader would look at has its proportions (here all of them: the
    # offsets put every column near the constant's direction, so most indices pass 10).
    assert all(lean.variance_proportions[k] is not None
               for k, x in enumerate(lean.condition_indices) if x is None or x >= 10)
    for k in given:
        assert np.allclose([lean.variance_proportions[k][c] for c in names],
                           [ref.variance_proportions[k][c] for c in names], atol=1e-9)
    assert lean.near_dependencies == wide.near_dependencies or all(
        a["columns"] == b["columns"] for a, b in zip(lean.near_dependencies,
                                                     ref.near_dependencies, strict=True))
    assert wide.rank == ref.rank == p - 2
    assert wide.basis == ref.basis
    assert [r["equation"] for r in wide.dependencies] == [r["equation"]
                                                          for r in ref.dependencies]
    for kind in ("raw", "equilibrated", "centered"):
        assert np.allclose(wide.singular_values[kind], ref.singular_values[kind],
                           rtol=1e-12, atol=1e-14 * ref.singular_values[kind][0])
    got = np.array([[row[c] for c in names] for row in wide.variance_proportions])
    want = np.array([[row[c] for c in names] for row in ref.variance_proportions])
    assert np.allclose(got, want, atol=1e-9)
    assert np.allclose(wide.condition_indices[: p - 2], ref.condition_indices[: p - 2],
                       rtol=1e-9)
    # reference: numpy.linalg.svd of the unit-length basis columns
    B = [names.index(c) for c in names if c in set(wide.basis)]
    Z = X[:, B] / np.linalg.norm(X[:, B], axis=0)
    _, d, Vt = np.linalg.svd(Z, full_matrices=False)
    phi = Vt.T**2 / d**2
    props = (phi / phi.sum(axis=1, keepdims=True)).T
    assert np.allclose(got[: p - 2][:, B], props, atol=1e-9)
    assert wide.vif == ref.vif or all(
        (a is None and b is None) or abs(a - b) <= 1e-9 * b
        for a, b in zip(wide.vif.values(), ref.vif.values(), strict=True))


def test_column_norms_near_underflow_and_overflow() -> None:
    import math

    from rankscope.core.factor import column_norms

    rng = np.random.default_rng(4)
    A = rng.normal(size=(40, 7))
    for j, scale in enumerate([1.0, 1e-200, 1e200, 0.0, 1e-150, 1e145, 1e-300]):
        A[:, j] *= scale
    # reference: math.hypot, which scales its arguments itself (no under- or overflow)
    ref = np.array([math.hypot(*A[:, j]) for j in range(7)])
    got = column_norms(A)
    assert np.allclose(got, ref, rtol=1e-14, atol=0)
