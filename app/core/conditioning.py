"""Singular values, condition numbers, condition indices and variance-decomposition
proportions. Works on small triangular factors only; no names beyond lists, no I/O.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from rankscope.core.factor import column_norms
from rankscope.core.rank import default_tolerance, inverse_sweeps

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
    proportions: (p − first, p) π[k, j] for the rows k ≥ first, the share of var(b_j)
        tied to singular value k; over all p rows each column j sums to 1.
    flagged: for each flagged row k, the column indices with π[k, j] > threshold.
    exact: for each row k, whether σ_k is at or below the rank tolerance.
    first: the first row with proportions (0: every row; a wide design's table has the
        rows of its largest indices only, subset_index_table).
    """

    indices: np.ndarray
    proportions: np.ndarray
    flagged: list[tuple[int, list[int]]]
    exact: list[bool]
    first: int = 0


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


#: Basis columns from which a design counts as wide here: its index table gets the
#: proportions of the dimensions that can show a dependency only (those with an index of
#: PROPORTION_INDEX or more, see shown_dimensions), from their singular vectors alone. A
#: full SVD's vectors cost about as much again as its values (measured: 0.38 s against
#: 0.17 s at 1,000 columns, 4.5 s against 2.5 s at 2,000, one core), and p² proportions
#: are p² numbers to carry to every view. Narrower designs get every dimension's.
WIDE_DIMENSIONS = 200

#: Condition index from which a wide design's dimensions get their proportions. Indices
#: of 5 to 10 mark weak dependencies and 30 or more moderate to strong ones (Belsley, Kuh
#: & Welsch 1980, §3.3; common practice): 10 keeps every dimension a reader would look at
#: with margin below the flagging mark (the lower of this and the caller's mark is used).
PROPORTION_INDEX = 10.0

#: Largest share of the basis' dimensions computed by subspace iteration; past it the
#: full SVD costs less.
SUBSET_SHARE = 0.25

#: Extra directions carried along in the subspace iteration, and the largest ratio
#: s_m/s_{m+GUARD+1} (slowest wanted singular value over the first one not carried) it
#: accepts: each sweep shrinks what a wanted vector keeps of the others by that ratio
#: squared (Golub & Van Loan, Matrix Computations, 4th ed., §8.2.4 and §7.6.1), so at 0.3
#: fifteen sweeps reach eps. Without such a gap the full SVD is taken.
GUARD = 8
SUBSET_GAP = 0.3
SUBSET_SWEEPS = 15


#: Relative tolerance of the Lanczos iterations for the extreme singular values: far below
#: the four significant digits a condition number is shown with.
EXTREME_TOL = 1e-12


def extreme_singular_values(R: np.ndarray) -> tuple[float, float] | None:
    """(σ_max, σ_min) of a square, upper triangular R without the rest of its spectrum;
    None when an iteration does not converge (the caller then takes the SVD's values).

    Lanczos (ARPACK's implicitly restarted variant, scipy.sparse.linalg.eigsh; Golub & Van
    Loan 4th ed. §10.1) for the largest eigenvalue of RᵀR = σ_max² and of (RᵀR)⁻¹ =
    R⁻¹R⁻ᵀ = 1/σ_min², the latter by two triangular solves a step (backward stable, so
    σ_min is that of a matrix within p·eps·‖R‖ of R: the SVD's own accuracy). O(p²) a
    step instead of the SVD's (8/3)·p³: 0.1 s against 2.1 s at 2,000 columns (measured).
    A random start (fixed seed: the same design always gets the same numbers) leaves no
    direction out, as a start of ones would for a difference of two columns.
    """
    p = R.shape[0]
    if p == 0:
        return None
    if p < 3 or not np.all(np.isfinite(R)) or not np.all(np.diagonal(R) != 0):
        return None
    from scipy.linalg import solve_triangular
    from scipy.sparse.linalg import ArpackError, ArpackNoConvergence, LinearOperator, eigsh

    start = np.random.default_rng(0).normal(size=p)
    gram = LinearOperator((p, p), dtype=np.float64, matvec=lambda v: R.T @ (R @ v))
    inverse = LinearOperator((p, p), dtype=np.float64, matvec=lambda v: solve_triangular(
        R, solve_triangular(R, v, trans="T", check_finite=False), check_finite=False))
    try:
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            top = eigsh(gram, k=1, which="LA", tol=EXTREME_TOL, v0=start,
                        return_eigenvectors=False)[0]
            low = eigsh(inverse, k=1, which="LA", tol=EXTREME_TOL, v0=start,
                        return_eigenvectors=False)[0]
    except (ArpackNoConvergence, ArpackError):
        return None
    if not (np.isfinite(top) and np.isfinite(low) and top > 0 and low > 0):
        return None
    return float(np.sqrt(top)), float(1.0 / np.sqrt(low))


def shown_dimensions(d: np.ndarray, index_floor: float) -> int | None:
    """How many of the smallest singular values d (descending, all > 0) get proportions on
    a wide design: those with index d_max/d_k ≥ index_floor (0 when none has), extended to
    the next gap that the subspace iteration can use (a wider set only adds rows). None
    when the basis is narrow or the set would be more than SUBSET_SHARE of it: the caller
    then takes every dimension from the full SVD."""
    k = d.size
    if k < WIDE_DIMENSIONS:
        return None
    top = float(d[0])
    s = d[::-1]  # ascending
    m = int(np.count_nonzero(top >= index_floor * s))
    if m == 0:
        return 0
    cap = int(SUBSET_SHARE * k)
    for size in range(m, cap + 1):
        if s[size - 1] <= SUBSET_GAP * s[size + GUARD]:
            return size
    return None


def smallest_right_vectors(R: np.ndarray, d: np.ndarray, m: int) -> np.ndarray | None:
    """(k, m) right singular vectors of the upper triangular R for its m smallest singular
    values d[k−m:] (d: all of R's, descending, from an SVD without vectors), in d's order;
    None when they fail their check (the caller then takes the full SVD).

    Subspace inverse iteration with R⁻¹R⁻ᵀ (two triangular solves a sweep, O(k²·(m+GUARD)))
    and a Rayleigh–Ritz step, the SVD of R·W (Golub & Van Loan 4th ed. §8.2.4, §10.1.2 for
    Ritz vectors). The number of sweeps takes what the start keeps of the unwanted
    directions below eps at the gap d shows; proportions then agree with the full SVD's to
    its own rounding (tests/core/test_wide_proportions.py compares them).
    """
    k = R.shape[0]
    b = m + GUARD
    if m == 0 or b >= k or not np.all(np.isfinite(R)):
        return None
    s = d[::-1]
    ratio = float(s[m - 1] / s[b]) if s[b] > 0 else 1.0
    if ratio > SUBSET_GAP:
        return None
    sweeps = 1 if ratio == 0.0 else min(
        SUBSET_SWEEPS, 1 + math.ceil(math.log(EPS) / (2 * math.log(ratio))))
    W = inverse_sweeps(R, b, sweeps)
    if W is None:
        return None
    _, ritz, Qt = np.linalg.svd(R @ W, full_matrices=False)
    V = (W @ Qt.T)[:, b - m:]
    # The sweeps follow from the gap the SVD's values show, as in rank.null_by_inverse_
    # iteration; the check catches a start that missed a wanted direction: each Ritz value
    # must be its singular value (a Ritz value exceeds it by about θ²·gap, θ the vector's
    # angle to the true one), to the SVD's own absolute accuracy k·eps·d_max.
    off = np.abs(ritz[b - m:] - d[k - m:])
    if not np.all(off <= 1e-8 * d[k - m:] + k * EPS * float(d[0])):
        return None
    return V


def subset_index_table(
    R: np.ndarray,
    d: np.ndarray,
    R_inv: Callable[[], np.ndarray],
    m: int,
    index_threshold: float = INDEX_THRESHOLD,
    proportion_threshold: float = PROPORTION_THRESHOLD,
) -> IndexTable | None:
    """index_table of a wide basis with the proportions of its m largest indices only
    (none when m is 0); None when the vectors fail their check.

    R: (k, k) upper triangular factor of the unit-length basis columns, d: its singular
    values (descending), R_inv: gives R⁻¹ (only asked for when m > 0). The denominators
    Σ_k φ_jk = Σ_k v_jk²/d_k² are the diagonal of (RᵀR)⁻¹ = R⁻¹R⁻ᵀ, the squared row
    lengths of R⁻¹ (Belsley, Kuh & Welsch 1980, eq. 3.10: var(b_j)/σ² of the unit-length
    design), so the proportions of a dimension need its own vector only. Every flagged
    row is among the m (shown_dimensions counts from an index below the mark).
    """
    k = d.size
    dmax = d[0]
    dfl = np.maximum(d, dmax * EPS * EPS)
    if m == 0:
        return IndexTable(dmax / dfl, np.zeros((0, k)), [], (d <= 0).tolist(), first=k)
    V = smallest_right_vectors(R, d, m)
    if V is None:
        return None
    inv = R_inv()
    total = np.einsum("ij,ij->i", inv, inv)
    prop = ((V**2) / dfl[None, k - m:] ** 2 / total[:, None]).T
    idx = dmax / dfl
    above = prop > proportion_threshold
    flagged = [(k - m + i, np.flatnonzero(above[i]).tolist()) for i in range(m)
               if idx[k - m + i] > index_threshold and np.count_nonzero(above[i]) >= 2]
    return IndexTable(idx, prop, flagged, (d <= 0).tolist(), first=k - m)


def unit_columns(A: np.ndarray, keep: list[int]) -> np.ndarray:
    """A[:, keep] with each column scaled to unit length (lengths taken without underflow)."""
    B = A[:, keep]
    nrm = column_norms(B)
    return B / np.where(nrm > 0, nrm, 1.0)
