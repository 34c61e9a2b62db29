"""The basis factor: one QR of the chosen basis columns followed by the dependent ones.

Works on the small (p, p) factor only; no names beyond indices, no I/O. Which columns
form the basis is decided in rankscope.core.rank.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from rankscope.core.structured import r_factor


@dataclass(frozen=True)
class Basis:
    """Outcome of the basis choice on a (m, p) factor A (columns of unit length).

    basis: column indices kept, in QR order (constant columns first).
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

    @cached_property
    def R11_inverse(self) -> np.ndarray:
        """(k, k) R11⁻¹, made once for whoever needs it (standard errors, proportions)."""
        from rankscope.core.inflation import triangular_inverse

        return triangular_inverse(self.R11) if self.R11.size else np.zeros((0, 0))


def basis_factor(
    A: np.ndarray, basis: list[int], dependent: list[int], rhs: np.ndarray | None = None
) -> Basis:
    """One Householder QR of A[:, basis + dependent] (and the right-hand side): R11, R12,
    what each dependent column keeps beyond the basis, and the rhs' coordinates.

    A: (m, p) factor of the unit-length columns. Put constant columns first in `basis`:
    the constant's reflection is then the identity on a factor whose constant column is
    e_0, so every later column is reduced in centred form and offsets cost no digits.
    """
    A = np.asarray(A, dtype=np.float64)
    m = A.shape[0]
    k = len(basis)
    cols = basis + dependent
    M = A[:, cols] if rhs is None else np.column_stack([A[:, cols], rhs])
    if M.shape[1] == 0:
        return Basis([], [], np.zeros((0, 0)), np.zeros((0, 0)), np.zeros(0), np.zeros(m))
    R = r_factor(M)  # A is triangular: the basis columns in order leave little to reduce
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
    return Basis(list(basis), list(dependent), R11, R12, remainder, qty)
