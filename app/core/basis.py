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


def _diagonal(A: np.ndarray) -> np.ndarray:
    """|r_kk| of the unpivoted Householder QR of A (LAPACK geqrf): r_kk is the length of
    column k left after projecting it off columns 0..k-1."""
    R = np.linalg.qr(A, mode="r")
    d = np.zeros(A.shape[1])
    m = min(R.shape)
    d[:m] = np.abs(np.diag(R)[:m])
    return d


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

    The remaining length of column k after the accepted ones is the diagonal entry r_kk of
    an unpivoted QR, so the scan runs in LAPACK: one QR of the candidates, and one more
    after each deferral (the columns after a deferred one must be measured without it).
    """
    A = np.asarray(A, dtype=np.float64)
    m = A.shape[0]
    basis: list[int] = []
    dependent: list[int] = []
    pending = list(order)
    while pending:
        room = m - len(basis)
        if room <= 0:
            dependent.extend(pending)
            break
        d = _diagonal(A[:, basis + pending])[len(basis):]
        small = [i for i in range(min(len(pending), room)) if d[i] <= tol]
        cut = small[0] if small else min(len(pending), room)
        basis.extend(pending[:cut])
        if small:
            dependent.append(pending[cut])
            pending = pending[cut + 1 :]
        else:
            dependent.extend(pending[cut:])
            pending = []
    k = len(basis)
    cols = basis + dependent
    M = A[:, cols] if rhs is None else np.column_stack([A[:, cols], rhs])
    R = np.linalg.qr(M, mode="r")
    full = np.zeros((max(m, M.shape[1]), M.shape[1]))
    full[: R.shape[0]] = R
    signs = np.where(np.diag(full[:k, :k]) < 0, -1.0, 1.0)
    R11 = np.triu(full[:k, :k]) * signs[:, None]
    d = len(dependent)
    R12 = full[:k, k : k + d] * signs[:, None]
    remainder = np.linalg.norm(full[k:, k : k + d], axis=0) if d else np.zeros(0)
    qty = np.zeros(m)
    if rhs is not None:
        qty[:k] = full[:k, -1] * signs
        # Only the length of what y keeps beyond the basis is used (the residual sum of
        # squares), so it is stored in one entry.
        if k < m:
            qty[k] = float(np.linalg.norm(full[k:, -1]))
    return Basis(basis, dependent, R11, R12, remainder, qty)
