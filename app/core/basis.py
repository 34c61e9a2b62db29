"""Choice of basis columns: QR with column deferral in a caller-given priority order.

Works on the small (p, p) factor only; no names beyond indices, no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Basis:
    """Outcome of the basis choice on a (m, p) factor A (columns of unit length).

    basis: column indices kept, in the order they were accepted.
    dependent: column indices deferred (their remaining length fell to tol or below).
    R11: (k, k) upper triangular factor of A[:, basis].
    R12: (k, d) coordinates of the dependent columns on the basis directions.
    remainder: (d,) length of each dependent column left after projecting off the basis.
    qty: (m,) the right-hand side (if any) carried through the same reflections.
    """

    basis: list[int]
    dependent: list[int]
    R11: np.ndarray
    R12: np.ndarray
    remainder: np.ndarray
    qty: np.ndarray


def _reflector(x: np.ndarray) -> tuple[np.ndarray, float, float]:
    """Householder vector v, beta and alpha with (I - beta v vᵀ) x = alpha e1.

    Golub & Van Loan, Matrix Computations, 4th ed., Algorithm 5.1.1 (sign chosen to
    avoid cancellation).
    """
    alpha = -np.copysign(np.linalg.norm(x), x[0])
    v = x.copy()
    v[0] -= alpha
    vv = float(v @ v)
    beta = 0.0 if vv == 0.0 else 2.0 / vv
    return v, beta, float(alpha)


def choose_basis(
    A: np.ndarray, order: list[int], tol: float, rhs: np.ndarray | None = None
) -> Basis:
    """Householder QR of A taking columns in `order`, deferring any whose remaining
    length is at most `tol`.

    This is QR with column deferral (a restricted form of column pivoting, Golub &
    Van Loan 4th ed. §5.4.2): the order is the caller's priority, so earlier columns
    stay in the basis and later ones are expressed through them. A deferred column's
    remaining length only shrinks as more basis columns are accepted, so every
    deferred column ends within tol of the span of the basis.
    A: (m, p). order: a permutation of range(p). tol: absolute length threshold.
    """
    W = np.array(A, dtype=np.float64, copy=True)
    m, _ = W.shape
    qty = np.zeros(m) if rhs is None else np.array(rhs, dtype=np.float64, copy=True)
    basis: list[int] = []
    dependent: list[int] = []
    k = 0
    for j in order:
        if k >= m:
            dependent.append(j)
            continue
        col = W[k:, j]
        if np.linalg.norm(col) <= tol:
            dependent.append(j)
            continue
        v, beta, alpha = _reflector(col)
        if beta:
            W[k:, :] -= beta * np.outer(v, v @ W[k:, :])
            qty[k:] -= beta * v * float(v @ qty[k:])
        W[k, j] = alpha
        W[k + 1 :, j] = 0.0
        basis.append(j)
        k += 1
    R11 = np.triu(W[:k][:, basis])
    # Fix signs so the diagonal is positive (unique factor; flips qty consistently).
    signs = np.where(np.diag(R11) < 0, -1.0, 1.0)
    R11 = R11 * signs[:, None]
    R12 = W[:k][:, dependent] * signs[:, None]
    qty[:k] *= signs
    remainder = np.linalg.norm(W[k:][:, dependent], axis=0) if dependent else np.zeros(0)
    return Basis(basis, dependent, R11, R12, remainder, qty)
