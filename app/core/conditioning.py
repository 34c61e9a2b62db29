"""Singular values, condition numbers, condition indices and variance-decomposition
proportions. Works on small triangular factors only; no names beyond lists, no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rankscope.core.factor import column_norms
from rankscope.core.rank import default_tolerance

__all__ = ["default_tolerance"]

EPS = float(np.finfo(np.float64).eps)

#: Condition index above which a near-dependency is flagged. Common practice
#: (Belsley, Kuh & Welsch, Regression Diagnostics, 1980, ch. 3: indices of 30 and more
#: signal moderate to strong dependencies).
INDEX_THRESHOLD = 30.0
#: Variance-decomposition proportion above which a column counts as involved (common
#: practice, same source).
PROPORTION_THRESHOLD = 0.5


def singular_values(R: np.ndarray) -> np.ndarray:
    """Singular values (descending) of a small factor; equal to those of the tall matrix."""
    if R.size == 0:
        return np.zeros(0)
    return np.linalg.svd(R, compute_uv=False)


def condition_number(sv: np.ndarray, tol: float) -> float:
    """σ_max / σ_min, or infinity when σ_min is at or below tol (rank deficient)."""
    if sv.size == 0:
        return float("nan")
    if sv[-1] <= tol:
        return float("inf")
    return float(sv[0] / sv[-1])


@dataclass(frozen=True)
class IndexTable:
    """Condition indices (ascending) and variance-decomposition proportions.

    indices: (p,) η_k = σ_max/σ_k, in ascending order (so σ descending).
    proportions: (p, p) π[k, j], the share of var(b_j) tied to singular value k;
        each column j sums to 1.
    flagged: for each flagged row k, the column indices with π[k, j] > threshold.
    exact: for each row k, whether σ_k is at or below the rank tolerance.
    """

    indices: np.ndarray
    proportions: np.ndarray
    flagged: list[tuple[int, list[int]]]
    exact: list[bool]


def index_table(
    R_eq: np.ndarray,
    tol: float,
    index_threshold: float = INDEX_THRESHOLD,
    proportion_threshold: float = PROPORTION_THRESHOLD,
    svd: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None,
) -> IndexTable:
    """Condition indices and variance-decomposition proportions of the unit-length,
    uncentered X (Belsley, Kuh & Welsch 1980, §3.2, eqs. 3.10–3.12).

    With Xe = U·D·Vᵀ: φ_jk = v_jk² / d_k², π_kj = φ_jk / Σ_k φ_jk, η_k = d_max / d_k.
    R_eq: (p, p) factor of Xe (same D and V as Xe); svd: its (U, d, Vt) when already
    computed. A zero d_k is floored at d_max·eps² so that the proportions stay defined
    (that row is then all but exact).
    """
    _, d, Vt = svd if svd is not None else np.linalg.svd(R_eq)
    dmax = d[0] if d.size else 1.0
    dfl = np.maximum(d, dmax * EPS * EPS)
    phi = (Vt.T**2) / dfl[None, :] ** 2  # (p columns, p singular values)
    prop = (phi / phi.sum(axis=1, keepdims=True)).T  # rows: singular values
    idx = dmax / dfl
    above = prop > proportion_threshold
    flagged = [(k, np.flatnonzero(above[k]).tolist()) for k in range(len(d))
               if idx[k] > index_threshold and np.count_nonzero(above[k]) >= 2]
    return IndexTable(idx, prop, flagged, (d <= tol).tolist())


def unit_columns(A: np.ndarray, keep: list[int]) -> np.ndarray:
    """A[:, keep] with each column scaled to unit length (lengths taken without underflow)."""
    B = A[:, keep]
    nrm = column_norms(B)
    return B / np.where(nrm > 0, nrm, 1.0)
