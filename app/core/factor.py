"""One factorization of the design: the triangular factor of [1, X, y] and column scales.

Everything in the core derives from this object; it is built once per design.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from rankscope.core.reduce import block_rows, reduce_blocks, shifts_of, unshift
from rankscope.core.structured import r_factor

EPS = float(np.finfo(np.float64).eps)
#: Column magnitudes the core accepts: below SMALLEST float64 loses digits towards the
#: subnormal range (2.2e-308), above LARGEST products of two entries overflow (1.8e308).
SMALLEST = 1e-290
LARGEST = 1e150


def _blocks(X: np.ndarray, y: np.ndarray, sw: np.ndarray | None, shifts: np.ndarray):
    """Yield row blocks of the shifted, weighted matrix √w·[1, X − s_X, y − s_y].

    shifts: (p+2,) the shift of each column of M (0 for the constant; see reduce.shifts_of).
    Each block is written once into a fresh Fortran-order array, the layout LAPACK reduces
    in place; without weights (sw None) nothing is multiplied.
    """
    n, p = X.shape
    step = block_rows(p + 2)
    for start in range(0, n, step):
        sl = slice(start, min(start + step, n))
        B = np.empty((sl.stop - sl.start, p + 2), order="F")
        B[:, 0] = 1.0 if sw is None else sw[sl]
        np.subtract(X[sl], shifts[1 : p + 1], out=B[:, 1 : p + 1])
        np.subtract(y[sl], shifts[p + 1], out=B[:, p + 1])
        if sw is not None:
            B[:, 1:] *= sw[sl, None]
        yield B


#: Column lengths between these are taken from the plain sum of squares: no square of an
#: entry can then have overflowed (entries below 1e150) and what underflowed (entries below
#: 1e-154) is below the rounding of the sum. Outside, the column is scaled first.
PLAIN_NORMS = (1e-140, 1e140)


def column_norms(A: np.ndarray) -> np.ndarray:
    """Euclidean length of each column, scaled by its largest entry first where the plain
    sum of squares could under- or overflow (lengths near 1e-200 or 1e200 keep their
    digits, as BLAS dnrm2 does); one pass over A for every other column."""
    if A.shape[0] == 0:
        return np.zeros(A.shape[1])
    with np.errstate(over="ignore", under="ignore"):
        out = np.linalg.norm(A, axis=0)
    redo = ~((out >= PLAIN_NORMS[0]) & (out <= PLAIN_NORMS[1]))
    if np.any(redo):
        B = A[:, redo]
        big = np.max(np.abs(B), axis=0)
        safe = np.where(big > 0, big, 1.0)
        out[redo] = np.linalg.norm(B / safe, axis=0) * big
    return out


def _svd(R: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Full SVD of a small square factor (LAPACK gesdd); empty parts for p = 0."""
    if R.size == 0:
        k = R.shape[0]
        return np.zeros((k, 0)), np.zeros(0), np.zeros((0, R.shape[1]))
    return np.linalg.svd(R)


@dataclass
class Factorization:
    """The triangular factor T of the weighted matrix M = [1, X, y] with its scales.

    T: (p+2, p+2) upper triangular, non-negative diagonal, TᵀT = MᵀM (raw units).
       Column 0 is the constant, columns 1..p are X, column p+1 is y (zeros if no y).
    columns: the p column names of X.
    n: number of rows with positive weight.
    sum_weights: Σw (equals n without weights).
    X, y, weights: the data, kept (when given) for extended-precision refinement of
       the fit, exact relation residuals and rank correlations; None after streaming.
    """

    T: np.ndarray
    columns: list[str]
    n: int
    sum_weights: float
    has_response: bool
    X: np.ndarray | None = None
    y: np.ndarray | None = None
    weights: np.ndarray | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def p(self) -> int:
        return len(self.columns)

    @cached_property
    def norms(self) -> np.ndarray:
        """(p+2,) column lengths of M (weighted); zero columns get length 1 to stay finite."""
        nrm = column_norms(self.T)
        return np.where(nrm > 0, nrm, 1.0)

    @cached_property
    def scales(self) -> np.ndarray:
        """(p,) lengths of the X columns: the column equilibration Xe = X / scales."""
        return self.norms[1 : self.p + 1]

    @cached_property
    def zero_columns(self) -> list[int]:
        """Indices of X columns that are identically zero."""
        nrm = column_norms(self.T[:, 1 : self.p + 1])
        return [j for j in range(self.p) if nrm[j] == 0.0]

    @cached_property
    def T_eq(self) -> np.ndarray:
        """Factor of the column-equilibrated [u, Xe, y]: every X column and u of unit length.

        Column scaling commutes with QR (Q·R·S = Q·(R·S)), and Householder QR is
        columnwise backward stable (Higham, Accuracy and Stability of Numerical
        Algorithms, 2nd ed., Thm 19.4), so scaling after the reduction loses nothing.
        y keeps its raw units.
        """
        s = self.norms.copy()
        s[-1] = 1.0
        return self.T / s

    @cached_property
    def constant_columns(self) -> list[int]:
        """X columns whose centred part is zero (to 16·eps of their length): the intercept
        and any other column that never varies."""
        cen = column_norms(self.T[1:, 1 : self.p + 1])
        return [j for j in range(self.p)
                if cen[j] <= 16 * EPS * self.scales[j] and self.T[0, 1 + j] != 0]

    @cached_property
    def R_xy(self) -> np.ndarray:
        """(p+1, p+1) factor of [Xe, y] (constant column of M removed): RᵀR = [Xe y]ᵀ[Xe y].

        Reduced with the constant columns of X first and then put back in column order, so
        the matrix is triangular only up to that permutation; the other columns keep their
        centred part exactly (see basis.basis_factor). y stays last: R[p, p] is what y
        keeps beyond every column of X.
        """
        perm = self.x_order + [self.p]
        # T_eq without its constant column is upper Hessenberg when the constant columns
        # lead X: r_factor then reduces one entry per column.
        R = r_factor(self.T_eq[:, 1:][:, perm])
        out = np.zeros_like(R)
        out[:, perm] = R
        return out

    @cached_property
    def R_xy_raw(self) -> np.ndarray:
        """(p+1, p+1) triangular factor of the raw [X, y]."""
        s = np.append(self.scales, 1.0)
        return self.R_xy * s

    @property
    def R_x(self) -> np.ndarray:
        """(p, p) factor of Xe: same singular values and Gram matrix as Xe."""
        return self.R_xy[: self.p, : self.p]

    @cached_property
    def x_order(self) -> list[int]:
        """The order in which R_xy reduced the X columns: constant columns first."""
        first = self.constant_columns
        return first + [j for j in range(self.p) if j not in first]

    @cached_property
    def R_x_triangular(self) -> np.ndarray:
        """R_x with its columns in x_order: upper triangular (R_xy's own reduction order,
        so exactly: no entry below the diagonal to clear)."""
        return self.R_x[:, self.x_order]

    @cached_property
    def svd_eq(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(U, d, Vt) of R_x: the SVD of Xe, computed once for the rank, the condition
        indices and their proportions (Xe = Q·R_x shares d and V with R_x)."""
        return _svd(self.R_x)

    @cached_property
    def singular_values_eq(self) -> np.ndarray:
        """(p,) singular values of Xe without vectors (those of svd_eq once it is made):
        about half the work of the full SVD."""
        if "svd_eq" in self.__dict__:
            return self.svd_eq[1]
        R = self.R_x_triangular
        return np.linalg.svd(R, compute_uv=False) if R.size else np.zeros(0)

    @cached_property
    def singular_values_raw(self) -> np.ndarray:
        """(p,) singular values of the raw X (descending), without vectors: its condition
        number needs no more."""
        R = self.R_xy_raw[: self.p, : self.p]
        return np.linalg.svd(R, compute_uv=False) if R.size else np.zeros(0)

    @cached_property
    def means(self) -> np.ndarray:
        """(p+1,) weighted column means of X and y (raw units).

        Row 0 of T holds uᵀ·[X y] with u = sqrt(w)/||sqrt(w)||, u's own entry ||sqrt(w)||.
        """
        return self.T[0, 1:] / self.T[0, 0] if self.T[0, 0] > 0 else np.zeros(self.p + 1)

    @cached_property
    def centered(self) -> np.ndarray:
        """(p+1, p+1) triangular factor of the centered raw [X, y].

        With the constant as the first column of M, the trailing block T[1:, 1:] is the
        factor of M's other columns projected off the constant (Golub & Van Loan,
        Matrix Computations, 4th ed., §5.2: QR of a partitioned matrix).
        """
        return self.T[1:, 1:]

    @cached_property
    def constant_in_span(self) -> bool:
        """True when the constant vector lies in the column space of X (explicitly or not).

        Measured as the length of u (unit length) left after projecting it off X by a
        truncated-SVD least-squares solve (stable under exact dependencies among X's
        columns); at most sqrt(p+1)·max(n, p)·eps·10 means it is in the span (the rank
        tolerance's rule with a safety factor).
        """
        if self.constant_columns:  # an explicit constant column: in the span by definition
            return True
        A = self.T_eq[:, 1 : self.p + 1]
        u = self.T_eq[:, 0]
        cut = max(self.n, self.p) * EPS
        coef, *_ = np.linalg.lstsq(A, u, rcond=cut)
        left = float(np.linalg.norm(u - A @ coef))
        return bool(left <= np.sqrt(self.p + 1) * max(self.n, self.p) * EPS * 10)


def check_values(X: np.ndarray, y: np.ndarray | None, columns: list[str]) -> None:
    """Raise ValueError unless X and y are finite and every column's magnitude lies in
    [SMALLEST, LARGEST] (or is zero)."""
    if not (np.all(np.isfinite(X)) and (y is None or np.all(np.isfinite(y)))):
        raise ValueError("X and y must be finite")
    # Largest magnitude per column without an |X| copy of the whole matrix.
    top = np.maximum(X.max(axis=0), -X.min(axis=0)) if X.shape[0] else np.zeros(X.shape[1])
    for j in range(X.shape[1]):
        if 0.0 < top[j] < SMALLEST or top[j] > LARGEST:
            raise ValueError(
                f"column {columns[j]!r} has largest magnitude {top[j]:g}, outside "
                f"[{SMALLEST:g}, {LARGEST:g}] where float64 keeps its digits through the "
                "analysis; rescale it (multiply by a power of ten) first")


def factorize(
    X: np.ndarray,
    columns: list[str],
    y: np.ndarray | None = None,
    weights: np.ndarray | None = None,
    keep_data: bool = True,
) -> Factorization:
    """Reduce [1, X, y] (rows weighted by sqrt(w)) to its triangular factor in one pass.

    Columns are shifted by their first block's mean before the reduction and the shift is
    put back in row 0 afterwards (reduce.unshift), so offsets cost no centred digits.

    X: (n, p) float64, finite. y: (n,) or None. weights: (n,) non-negative or None.
    The constant column is always carried in front so that centered quantities
    (correlations, VIF, centered condition number, ridge) come from the same factor.
    """
    X = np.asarray(X, dtype=np.float64)
    if X.ndim != 2:
        raise ValueError(f"X must be 2-D, got shape {X.shape}")
    n, p = X.shape
    if len(columns) != p:
        raise ValueError(f"{len(columns)} names for {p} columns")
    has_y = y is not None
    yv = np.zeros(n) if y is None else np.asarray(y, dtype=np.float64).reshape(-1)
    if yv.shape[0] != n:
        raise ValueError(f"y has {yv.shape[0]} rows, X has {n}")
    sw: np.ndarray | None
    if weights is None:
        sw = None
        n_pos, sum_w = n, float(n)
    else:
        w = np.asarray(weights, dtype=np.float64).reshape(-1)
        if w.shape[0] != n or np.any(~np.isfinite(w)) or np.any(w < 0):
            raise ValueError("weights must be finite, non-negative, one per row")
        sw = np.sqrt(w)
        n_pos, sum_w = int(np.count_nonzero(w)), float(w.sum())
    check_values(X, yv, columns)
    head = min(n, block_rows(p + 2))
    shifts = shifts_of(np.column_stack([np.zeros(head), X[:head], yv[:head]]))
    T = unshift(reduce_blocks(_blocks(X, yv, sw, shifts), p + 2), shifts)
    return Factorization(
        T=T,
        columns=list(columns),
        n=n_pos,
        sum_weights=sum_w,
        has_response=has_y,
        X=X if keep_data else None,
        y=yv if (keep_data and has_y) else None,
        weights=None if weights is None else np.asarray(weights, dtype=np.float64),
    )
