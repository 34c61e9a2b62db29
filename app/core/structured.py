"""The R factor of a matrix that is nearly upper triangular, reducing only what is not yet.

Pure numpy on small (p, p) factors; no names, no I/O. Same R as LAPACK's QR up to rounding.
"""

from __future__ import annotations

import math

import numpy as np

#: Fewest columns for which the column-by-column reduction is tried: below it one LAPACK call
#: costs less than the Python loop over the columns (about 30 µs a column).
STRUCTURED_MIN_COLUMNS = 200
#: The column-by-column reduction is taken when it touches fewer than this share of the
#: n³ entries a dense QR of n columns works through (numpy's row operations run several
#: times slower per entry than LAPACK's blocked reflectors).
STRUCTURED_SHARE = 1 / 16


def last_rows(M: np.ndarray) -> np.ndarray:
    """Per column, the last row holding a nonzero entry (−1 for an all-zero column)."""
    nz = M != 0
    return np.where(nz.any(axis=0), M.shape[0] - 1 - np.argmax(nz[::-1], axis=0), -1)


def reach(M: np.ndarray) -> np.ndarray:
    """Per column j < min(m, n), the last row a Householder QR of M changes in column j:
    its own last nonzero row, or a lower one filled in by an earlier reflector."""
    k = min(M.shape)
    lows = np.maximum.accumulate(np.maximum(last_rows(M)[:k], np.arange(k)))
    return np.minimum(lows, M.shape[0] - 1)


def r_factor(M: np.ndarray) -> np.ndarray:
    """(n, n) upper triangular R with RᵀR = MᵀM for an (m, n) matrix M: what
    square_factor(numpy.linalg.qr(M, mode="r"), n) gives.

    Column j's Householder reflector acts on rows j..reach[j] only (LAPACK dlarfg's
    convention: r_jj = −sign(m_jj)·‖x‖, no reflection when x has no entry below the
    diagonal), so a triangular matrix with a few columns left out or moved, or an upper
    Hessenberg one, costs O(b·n²) for b entries below the diagonal per column instead of
    a dense QR's O(m·n²) (Golub & Van Loan, Matrix Computations, 4th ed., §5.1-5.2). A
    column with one entry below is reduced by the reflector's own 2×2 matrix
    [[c, s], [s, −c]] (c = m_jj/r_jj, s = m_j+1,j/r_jj: the one symmetric reflection taking
    that pair to (r_jj, 0)), in one product instead of the general update's several calls
    (a Hessenberg 1,000 × 1,000 in about a sixth of the time).
    """
    M = np.asarray(M, dtype=np.float64)
    m, n = M.shape
    k = min(m, n)
    out = np.zeros((n, n))
    if k == 0:
        return out
    low = reach(M)
    touched = float(np.sum((low - np.arange(k) + 1.0) * (n - np.arange(k))))
    if n < STRUCTURED_MIN_COLUMNS or touched > STRUCTURED_SHARE * float(n) ** 3:
        R = np.linalg.qr(M, mode="r")
        out[: min(R.shape[0], n)] = R[:n]
        return out
    A = np.array(M[: int(low.max()) + 1], order="C")  # rows below every reach stay zero
    for j in range(k):
        lo = int(low[j])
        if lo == j:
            continue
        if lo == j + 1:  # one entry below (Hessenberg): the reflector as its 2×2 matrix
            a, b = float(A[j, j]), float(A[j + 1, j])
            if b == 0.0:
                continue
            beta = -math.copysign(math.hypot(a, b), a)
            c, s = a / beta, b / beta
            rows = A[j : j + 2, j + 1 :]
            rows[...] = np.array([[c, s], [s, -c]]) @ rows
            A[j, j], A[j + 1, j] = beta, 0.0
            continue
        x = A[j : lo + 1, j]
        below = float(np.linalg.norm(x[1:]))
        if below == 0.0:
            continue
        alpha = float(x[0])
        beta = -np.copysign(np.hypot(alpha, below), alpha)
        v = x / (alpha - beta)
        v[0] = 1.0
        tau = (beta - alpha) / beta
        block = A[j : lo + 1, j + 1 :]
        block -= np.outer(tau * v, v @ block)
        A[j, j] = beta
        A[j + 1 : lo + 1, j] = 0.0
    out[:k] = np.triu(A[:k])
    return out
