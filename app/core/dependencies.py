"""Exact linear dependencies among columns, written as equations in column names.

Derived from the basis choice on the factor; no I/O, no display beyond strings.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import solve_triangular
from scipy.linalg.blas import dnrm2  # scaled: no underflow for 1e-200, no overflow

from rankscope.core.basis import Basis
from rankscope.core.numbers import short_number

EPS = float(np.finfo(np.float64).eps)

#: A basis column stays in a relation when its coefficient (in unit-length units) is
#: above this fraction of the largest one. Exact zeros come back as rounding noise of
#: about cond·eps; sqrt(eps) ≈ 1.5e-8 separates the two for cond below ~1e7.
SUPPORT_REL = 1.5e-8


@dataclass(frozen=True)
class Relation:
    """column = Σ combination[name]·name, up to `residual` (relative to the column's length)."""

    column: str
    combination: dict[str, float]
    shown: dict[str, str]
    equation: str
    residual: float

    def to_dict(self) -> dict:
        return {
            "column": self.column,
            "combination": self.combination,
            "shown": self.shown,
            "equation": self.equation,
            "residual": self.residual,
        }


def equation_text(column: str, combination: dict[str, float],
                  shown: dict[str, str] | None = None) -> str:
    """'temp_f = 32·(intercept) + 1.8·temp_c' style text; 1 and −1 are left implicit.

    shown: the coefficients as text (signed); default their short form."""
    terms: list[str] = []
    for name, c in combination.items():
        s = shown[name].lstrip("−-") if shown and name in shown else short_number(abs(c))
        body = name if s == "1" else f"{s}·{name}"
        neg = c < 0
        if not terms:
            terms.append(("−" if neg else "") + body)
        else:
            terms.append(("− " if neg else "+ ") + body)
    return f"{column} = " + (" ".join(terms) if terms else "0")


#: Levels tried, largest first, when pruning a relation to its support: a basis column is
#: left out when its coefficient (unit-length units) is below the level times the largest.
SUPPORT_LEVELS = (SUPPORT_REL, 1e-11, 1e-14, 0.0)


def relations(
    A: np.ndarray,
    basis: Basis,
    columns: list[str],
    scales: np.ndarray,
    tol: float,
    constants: list[int] = (),  # type: ignore[assignment]
) -> list[Relation]:
    """One relation per dependent column, each on its minimal support.

    A: (m, p) factor of the unit-length columns (AᵀA = XeᵀXe). scales: (p,) column lengths.
    tol: the rank tolerance (unit-length units). In unit-length units the relation is
    Xe_d ≈ Xe_B·c with c = R11⁻¹·R12[:, d]; on the raw scale x_d = Σ c_b·(s_d/s_b)·x_b.
    Since the basis columns are independent, c is unique and its support is minimal once
    the coefficients that are rounding noise are removed: terms below a level are dropped
    and the relation refitted on the rest, keeping the first level whose residual stays
    within the rank tolerance (or twice the full residual).
    """
    if not basis.dependent:
        return []
    C = solve_triangular(basis.R11, basis.R12)
    out: list[Relation] = []
    for i, d in enumerate(basis.dependent):
        c = C[:, i]
        cmax = float(np.max(np.abs(c))) if c.size else 0.0
        full_res = float(basis.remainder[i])
        allowed = max(2.0 * full_res, tol, 8.0 * EPS)
        for level in SUPPORT_LEVELS:
            support = [basis.basis[k] for k in range(len(c)) if abs(c[k]) > level * cmax]
            coef, residual = _refit(A, support, d, constants)
            if residual <= allowed:
                break
        raw = {columns[b]: float(coef[k] * scales[d] / scales[b]) for k, b in enumerate(support)}
        raw = {k: v for k, v in raw.items() if v != 0.0}
        out.append(_relation(columns[d], raw, max(residual, tol), scales, columns, residual))
    return out


def _relation(column: str, raw: dict[str, float], residual: float, scales: np.ndarray,
              columns: list[str], exact_residual: float) -> Relation:
    """A Relation whose shown coefficients are the shortest that keep its residual.

    residual: what the relation may leave (relative to s_d), at least the rank tolerance,
    since a relation is exact up to that. Changing c_b by δ moves the residual by at most
    |δ|·s_b, so the terms share that much plus the rounding of their terms
    (4·eps·(s_d + Σ|c_b|·s_b)).
    """
    idx = {c: j for j, c in enumerate(columns)}
    s_d = float(scales[idx[column]])
    size = s_d + sum(abs(v) * float(scales[idx[b]]) for b, v in raw.items())
    budget = max(residual * s_d, 4.0 * EPS * size) / max(len(raw), 1)
    shown = {}
    for b, v in raw.items():
        rel = budget / max(abs(v) * float(scales[idx[b]]), 1e-300)
        shown[b] = short_number(v, rel)
    return Relation(
        column=column, combination=raw, shown=shown,
        equation=equation_text(column, raw, shown), residual=exact_residual,
    )


def _refit(A: np.ndarray, support: list[int], d: int, constants=()) -> tuple[np.ndarray, float]:
    """Least-squares coefficients of A[:, d] on A[:, support] and the relative residual.

    Householder QR with the constant columns first (see basis.basis_factor): the
    intercept's coefficient then comes out as mean(x_d) − Σ c_b·mean(x_b), free of the
    cancellation an offset would cause in an orthogonal solve on the raw columns.
    """
    if not support:
        return np.zeros(0), float(np.linalg.norm(A[:, d]))
    first = [k for k, b in enumerate(support) if b in constants]
    perm = first + [k for k in range(len(support)) if k not in first]
    B = A[:, [support[k] for k in perm]]
    Q, R = np.linalg.qr(B)
    qb = Q.T @ A[:, d]
    diag = np.abs(np.diag(R))
    if np.any(diag <= 0):
        coef_p, *_ = np.linalg.lstsq(B, A[:, d], rcond=None)
    else:
        coef_p = solve_triangular(R, qb)
    coef = np.empty(len(support))
    coef[perm] = coef_p
    res = float(np.linalg.norm(A[:, d] - B @ coef_p) / max(np.linalg.norm(A[:, d]), 1e-300))
    return coef, res


def data_residual(X: np.ndarray, rel: Relation, columns: list[str]) -> float:
    """||x_d − Σ c_b x_b|| / (||x_d|| + Σ|c_b|·||x_b||), on the rows themselves.

    Relative to the size of the terms, as a backward error (Higham 2nd ed., §1.10): a
    relation that holds up to the rounding of the stored numbers measures a few eps
    whatever the offsets. Float64 is enough: the rounding of the sum is itself a few eps
    of that size.
    """
    idx = {c: j for j, c in enumerate(columns)}
    x_d = X[:, idx[rel.column]]
    r = x_d.copy()
    size = float(dnrm2(x_d))
    for name, c in rel.combination.items():
        x = X[:, idx[name]]
        r -= c * x
        size += abs(c) * float(dnrm2(x))
    return float(dnrm2(r) / size) if size > 0 else 0.0


def null_vectors(rels: list[Relation], columns: list[str]) -> list[dict[str, float]]:
    """Vectors v with X·v = 0, one per relation: v[d] = 1, v[b] = −c_b.

    Σ a_j·β_j is estimable exactly when a is orthogonal to each of them
    (Searle, Linear Models, 1971, §5.4: estimable functions lie in the row space of X).
    """
    out = []
    for r in rels:
        v = {name: -c for name, c in r.combination.items()}
        v[r.column] = 1.0
        out.append({c: v[c] for c in columns if c in v})
    return out
