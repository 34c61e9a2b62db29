"""The one rank decision: numerical rank from the SVD of the unit-length columns, and the
basis and dependent columns that follow from it. Small (p, p) factors only; no names, no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.linalg import solve_triangular

from rankscope.core.basis import Basis, basis_factor

EPS = float(np.finfo(np.float64).eps)

#: A column may stand on the left of an equation (be deferred) only when its row of the
#: null-space basis keeps at least this much length beyond the rows already chosen.
#: Below it the column's part in the dependencies is rounding noise (or so small that
#: writing it through the others would magnify the noise by more than 1/sqrt(eps)).
#: sqrt(eps) ≈ 1.5e-8 is the usual split between signal and noise (Golub & Van Loan,
#: Matrix Computations, 4th ed., §5.5.6, numerical rank and subset selection).
PIVOT_FLOOR = float(np.sqrt(EPS))


def null_row_floor(d: np.ndarray, rank: int, tol: float) -> float:
    """The length below which a row of the computed null-space basis is noise.

    The computed null space is off by an angle of about tol/σ_r, σ_r the smallest singular
    value kept (Wedin's sin θ theorem, BIT 12, 1972; Golub & Van Loan 4th ed. §8.6.2), so
    each of its rows carries noise of that size. A near-dependency just above the rank cut
    (σ_r ≈ 1e-8) makes that noise larger than PIVOT_FLOOR: the floor is the larger of
    the two, so noise never puts a column on the left of an equation.
    """
    if rank == 0 or d[rank - 1] <= 0:
        return PIVOT_FLOOR
    return max(PIVOT_FLOOR, float(tol / d[rank - 1]))


def default_tolerance(sigma_max: float, n: int, p: int) -> float:
    """σ_max·max(n, p)·eps: the usual numerical-rank tolerance.

    Golub & Van Loan, Matrix Computations, 4th ed., §5.4.1; the same rule as
    numpy.linalg.matrix_rank and Press et al., Numerical Recipes, 3rd ed., §2.6.
    """
    return float(sigma_max) * max(n, p) * EPS


#: Largest ratio σ_{r+1}/σ_r (the largest singular value cut over the smallest kept) for
#: which the null space is found by inverse iteration; each sweep shrinks what the start
#: keeps of the kept directions by (σ_{r+1}/σ_r)² at least (subspace iteration with R⁻¹R⁻ᵀ,
#: Golub & Van Loan 4th ed. §8.2.4, §7.6.1), so at this ratio four sweeps reach eps.
#: A narrower gap takes the full SVD's vectors.
NULL_GAP = 1e-2
NULL_SWEEPS = 5


def inverse_sweeps(T: np.ndarray, k: int, sweeps: int) -> np.ndarray | None:
    """(p, k) orthonormal W after `sweeps` of subspace iteration with (TᵀT)⁻¹ = T⁻¹T⁻ᵀ, two
    triangular solves a sweep (Golub & Van Loan 4th ed. §8.2.4), from a fixed random start
    (the same design always gets the same result); None when a solve overflows."""
    W, _ = np.linalg.qr(np.random.default_rng(0).normal(size=(T.shape[0], k)))
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        for _ in range(sweeps):
            Y = solve_triangular(T, W, trans="T", check_finite=False)
            Y /= np.where((n := np.linalg.norm(Y, axis=0)) > 0, n, 1.0)
            Z = solve_triangular(T, Y, check_finite=False)
            if not np.all(np.isfinite(Z)):
                return None
            W, _ = np.linalg.qr(Z)
    return W


def null_by_inverse_iteration(R: np.ndarray, d: np.ndarray, rank: int, tol: float
                              ) -> np.ndarray | None:
    """(p, p − rank) orthonormal basis of the numerical null space of the upper triangular
    R (nothing below its diagonal), from its singular values d (descending, without
    vectors) by subspace inverse iteration; None when the gap is too narrow or the result
    fails its check (then the caller takes the SVD's vectors).

    Spans the same space as the right singular vectors of d[rank:] to the rounding the
    SVD itself carries: R·N is checked to be at most 2·tol + p·eps·σ_max, so N leans on a
    kept direction by at most that over σ_r (Wedin's bound, as null_row_floor). The basis
    differs from the SVD's by a rotation, which dependent_columns does not see (it works
    on the rows' lengths and angles). Zero pivots are raised to eps·‖R‖, a perturbation
    below the rank tolerance, so every solve is defined.
    """
    p = R.shape[0]
    k = p - rank
    if k == 0 or rank == 0 or not np.all(np.isfinite(R)):
        return None
    ratio = float(d[rank] / d[rank - 1]) if d[rank - 1] > 0 else 1.0
    if ratio > NULL_GAP:
        return None
    sweeps = 1 if ratio == 0.0 else min(
        NULL_SWEEPS, 1 + math.ceil(math.log(EPS) / (2 * math.log(ratio))))
    top = float(d[0])
    floor = EPS * top
    T = R.copy()
    diag = np.diagonal(T).copy()
    small = np.abs(diag) < floor
    diag[small] = np.where(diag[small] < 0, -floor, floor)
    np.fill_diagonal(T, diag)
    W = inverse_sweeps(T, k, sweeps)
    if W is None:
        return None
    left = float(np.linalg.norm(R @ W, 2))
    return W if left <= 2 * tol + p * EPS * top else None


@dataclass(frozen=True)
class RankDecision:
    """Rank, tolerance and basis of the unit-length X, all from one SVD.

    rank: number of singular values of Xe above tol. singular_values: (p,) descending.
    null: (p, p − rank) orthonormal basis of the numerical null space (right singular
        vectors of the singular values at or below tol).
    basis: the Basis factor (rankscope.core.basis) with exactly `rank` basis columns, constant
        columns first, then the caller's priority order; the p − rank others dependent.
    """

    rank: int
    tol: float
    singular_values: np.ndarray
    null: np.ndarray
    basis: Basis


def dependent_columns(null: np.ndarray, order: list[int], floor: float = PIVOT_FLOOR,
                      first: tuple[int, ...] = ()) -> list[int]:
    """Choose which p − r columns are written through the others, lowest priority first.

    null: (p, k) orthonormal null-space basis N. A set D of k columns can be written
    through the rest exactly when N[D, :] is nonsingular; the smallest singular value of
    N[D, :] bounds how much the basis loses against the best possible one (subset
    selection, Golub, Klema & Stewart, Stanford TR STAN-CS-76-559, 1976; Golub & Van Loan
    §5.5.6). Walking the priority order backwards, a column joins D when its row keeps
    more than `floor` (relative to the largest row) after projecting off the rows already
    in D: modified Gram–Schmidt on the rows, so the keep priority is honoured wherever the
    numbers allow it and never at the price of a singular basis. first: columns that are
    all zeros, taken before the walk: e_j is then an exact null vector, and the rounding
    in a near-zero singular value's vectors must not leave one of them in the basis.
    """
    p, k = null.shape
    if k == 0:
        return []
    top = float(np.max(np.linalg.norm(null, axis=1))) or 1.0
    chosen: list[int] = []
    directions: list[np.ndarray] = []

    def left(j: int) -> np.ndarray:
        """Row j of the null-space basis beyond the rows already chosen."""
        v = null[j].copy()
        for q in directions:
            v -= (q @ v) * q
        return v

    def take(j: int, v: np.ndarray) -> None:
        chosen.append(j)
        directions.append(v / max(float(np.linalg.norm(v)), 1e-300))

    for j in first[:k]:
        take(j, left(j))
    if len(chosen) == k:
        return chosen
    for j in reversed(order):
        if j in chosen:
            continue
        v = left(j)
        if float(np.linalg.norm(v)) > floor * top:
            take(j, v)
            if len(chosen) == k:
                return chosen
    # Fewer than k rows stood out (only when the null space is itself noise): take the
    # longest remaining rows so that exactly k columns are deferred.
    while len(chosen) < k:
        rest = [j for j in reversed(order) if j not in chosen]
        if not rest:
            break
        j = max(rest, key=lambda i: float(np.linalg.norm(left(i))))
        take(j, left(j))
    return chosen


def decide(
    A: np.ndarray,
    svd: tuple[np.ndarray, np.ndarray, np.ndarray],
    order: list[int],
    tol: float,
    constants: list[int],
    rhs: np.ndarray | None = None,
    null: np.ndarray | None = None,
) -> RankDecision:
    """The rank and basis of the unit-length columns A (m, p) from their SVD.

    svd: (U, d, Vt) of A; U and Vt may be None when `null` is given: the (p, p − rank)
    orthonormal null-space basis found without the vectors (null_by_inverse_iteration).
    order: basis priority, a permutation of range(p). tol: absolute threshold on d.
    constants: columns whose centred part is zero; they lead the QR of the basis so that
    the remaining columns are reduced in centred form.
    """
    _, d, Vt = svd
    p = A.shape[1]
    rank = int(np.sum(d > tol)) if d.size else 0
    if null is None:
        null = Vt[rank:].T if p else np.zeros((0, 0))
    empty = ~np.any(A, axis=0) if p else np.zeros(0, dtype=bool)
    zero = tuple(j for j in order if empty[j])
    dependent = dependent_columns(null, order, floor=null_row_floor(d, rank, tol), first=zero)
    dep = set(dependent)
    basis = [j for j in order if j not in dep]
    first = [j for j in basis if j in constants]
    qr_order = first + [j for j in basis if j not in first]
    dependent = [j for j in order if j in dep]
    return RankDecision(rank, tol, d, null, basis_factor(A, qr_order, dependent, rhs))
