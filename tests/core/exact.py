"""Exact rational reference for the core: rank, least squares, VIF, GVIF, minimum norm.

Every stored float64 is converted without rounding by Fraction(float(v)); all arithmetic
after that is exact (fractions.Fraction), so these values carry no rounding of their own:
they are the true answers for the stored numbers (or, where a test passes rational
columns it built itself, for the intended numbers). Normal equations and determinants
are fine here because nothing is rounded. Everything is read off one exact Gram matrix
by symmetric Gaussian elimination (Schur complements), so keep n·p small (n ≤ 60, p ≤ 10).

Columns are passed as sequences (one per column) of floats or Fractions.
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

import numpy as np

Col = list[Fraction]
Matrix = list[list[Fraction]]
Number = float | int | Fraction


def column(values: Sequence[Number] | np.ndarray) -> Col:
    """One column as exact rationals: each stored float64 converted without rounding."""
    return [v if isinstance(v, Fraction) else Fraction(float(v)) for v in values]


def columns_of(X: np.ndarray) -> list[Col]:
    """The columns of a 2-D float array as exact rationals."""
    return [column(X[:, j]) for j in range(X.shape[1])]


def ones(n: int) -> Col:
    """The constant column."""
    return [Fraction(1)] * n


def dot(a: Col, b: Col) -> Fraction:
    """Exact inner product."""
    return sum((x * y for x, y in zip(a, b, strict=True)), Fraction(0))


def gram(cols: list[Col]) -> Matrix:
    """Exact Gram matrix AᵀA of the given columns."""
    k = len(cols)
    G = [[Fraction(0)] * k for _ in range(k)]
    for i in range(k):
        for j in range(i, k):
            G[i][j] = G[j][i] = dot(cols[i], cols[j])
    return G


def sub(G: Matrix, idx: list[int]) -> Matrix:
    """The symmetric submatrix G[idx, idx]."""
    return [[G[a][b] for b in idx] for a in idx]


def eliminate(G: Matrix, m: int) -> tuple[list[int], Matrix]:
    """Symmetric Gaussian elimination on the first m rows/columns of a Gram matrix, in
    order, skipping zero pivots. Returns the pivots kept (a maximal independent subset of
    those m columns, chosen greedily in order) and the reduced matrix, whose trailing
    block is the Schur complement: for [X, y] it holds ||y − X·β̂||² (Golub & Van Loan,
    4th ed., §4.2 / §5.3: the Schur complement of XᵀX in the augmented Gram matrix)."""
    M = [row[:] for row in G]
    k = len(M)
    kept: list[int] = []
    for j in range(m):
        piv = M[j][j]
        if piv == 0:
            # G is positive semidefinite: a zero pivot means the whole row is zero.
            continue
        kept.append(j)
        for a in range(j + 1, k):
            f = M[a][j] / piv
            if f:
                for b in range(j + 1, k):
                    M[a][b] -= f * M[j][b]
    return kept, M


def det(A: Matrix) -> Fraction:
    """Exact determinant by Gaussian elimination (1 for the empty matrix)."""
    M = [row[:] for row in A]
    k = len(M)
    out = Fraction(1)
    for c in range(k):
        piv = next((r for r in range(c, k) if M[r][c] != 0), None)
        if piv is None:
            return Fraction(0)
        if piv != c:
            M[c], M[piv] = M[piv], M[c]
            out = -out
        out *= M[c][c]
        for r in range(c + 1, k):
            f = M[r][c] / M[c][c]
            if f:
                M[r] = [a - f * b for a, b in zip(M[r], M[c], strict=True)]
    return out


def solve(A: Matrix, b: list[Fraction]) -> list[Fraction]:
    """Exact solution of the nonsingular square system A·x = b (Gauss–Jordan)."""
    k = len(A)
    M = [row[:] + [b[i]] for i, row in enumerate(A)]
    for c in range(k):
        piv = next(r for r in range(c, k) if M[r][c] != 0)
        M[c], M[piv] = M[piv], M[c]
        inv = 1 / M[c][c]
        M[c] = [v * inv for v in M[c]]
        for r in range(k):
            if r != c and M[r][c] != 0:
                f = M[r][c]
                M[r] = [a - f * e for a, e in zip(M[r], M[c], strict=True)]
    return [M[i][k] for i in range(k)]


def independent(cols: list[Col]) -> list[int]:
    """Indices of a maximal independent subset, chosen greedily in the given order."""
    return eliminate(gram(cols), len(cols))[0]


def rank(cols: list[Col]) -> int:
    """Exact rank of the matrix with these columns."""
    return len(independent(cols))


def rss(cols: list[Col], y: Col) -> Fraction:
    """Exact least-squares residual sum of squares of y on the span of cols."""
    p = len(cols)
    _, M = eliminate(gram(cols + [y]), p)
    return M[p][p]


def vifs(cols: list[Col], which: list[int] | None = None) -> dict[int, Fraction | None]:
    """Centered VIF of each column j in `which` (default all): 1/(1 − R²_j) = TSS_j/RSS_j,
    RSS_j from the exact regression of x_j on the other columns and the constant
    (Marquardt, Technometrics 12, 1970; Belsley, Kuh & Welsch 1980 §2.1). None when
    RSS_j is 0 (x_j in the span of the others: infinite VIF)."""
    n = len(cols[0])
    G = gram([ones(n)] + cols)  # index 0 is the constant, column j is at j + 1
    out: dict[int, Fraction | None] = {}
    for j in range(len(cols)) if which is None else which:
        idx = [0] + [k + 1 for k in range(len(cols)) if k != j] + [j + 1]
        _, M = eliminate(sub(G, idx), len(idx) - 1)
        r = M[-1][-1]
        tss = G[j + 1][j + 1] - G[0][j + 1] ** 2 / n  # Σ(x − x̄)² = Σx² − (Σx)²/n
        out[j] = None if r == 0 else tss / r
    return out


def vif(cols: list[Col], j: int) -> Fraction | None:
    """Centered VIF of column j (see vifs)."""
    return vifs(cols, [j])[j]


def centered_gram(cols: list[Col]) -> Matrix:
    """Exact covariance-type Gram matrix Σ(x_a − x̄_a)(x_b − x̄_b) of the columns."""
    n = len(cols[0])
    G = gram([ones(n)] + cols)
    k = len(cols)
    return [[G[a + 1][b + 1] - G[0][a + 1] * G[0][b + 1] / n for b in range(k)]
            for a in range(k)]


def gvif(predictors: list[Col], group: list[int]) -> Fraction:
    """Generalized VIF of the predictors in `group` (Fox & Monette, JASA 87, 1992, eq. 4):
    det(C_GG)·det(C_OO)/det(C). C is the centered Gram matrix of the predictors
    (intercept excluded); scaling cancels, so it equals the correlation-matrix form."""
    C = centered_gram(predictors)
    others = [k for k in range(len(predictors)) if k not in group]
    return det(sub(C, group)) * det(sub(C, others)) / det(C)


def min_norm(cols: list[Col], y: Col) -> list[Fraction]:
    """The minimum-norm least-squares solution X⁺y (Golub & Van Loan 4th ed. §5.5.1):
    a basic solution on a maximal independent subset B, with its component in the exact
    null space projected away. The null space is spanned by one vector per column d
    outside B: v_d = 1, v_B = −(X_BᵀX_B)⁻¹X_Bᵀx_d."""
    p = len(cols)
    G = gram(cols + [y])
    B, _ = eliminate(G, p)
    GB = sub(G, B)
    beta = [Fraction(0)] * p
    for i, v in zip(B, solve(GB, [G[b][p] for b in B]), strict=True):
        beta[i] = v
    N = []
    for d in range(p):
        if d in B:
            continue
        v = [Fraction(0)] * p
        v[d] = Fraction(1)
        for i, c in zip(B, solve(GB, [G[b][d] for b in B]), strict=True):
            v[i] = -c
        N.append(v)
    if not N:
        return beta
    # β − N (NᵀN)⁻¹ Nᵀ β: the orthogonal projection of β onto the row space of X.
    coef = solve(gram(N), [dot(v, beta) for v in N])
    return [b - sum((c * v[i] for c, v in zip(coef, N, strict=True)), Fraction(0))
            for i, b in enumerate(beta)]
