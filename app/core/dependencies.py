"""Exact linear dependencies among columns, written as equations in column names.

Derived from the basis choice on the factor; no I/O, no display beyond strings.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import solve_triangular

from app.core.basis import Basis
from app.core.numbers import short_number

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


def equation_text(column: str, combination: dict[str, float]) -> str:
    """'temp_f = 32·(intercept) + 1.8·temp_c' style text; 1 and −1 are left implicit."""
    terms: list[str] = []
    for name, c in combination.items():
        s = short_number(abs(c))
        body = name if s == "1" else f"{s}·{name}"
        neg = c < 0
        if not terms:
            terms.append(("−" if neg else "") + body)
        else:
            terms.append(("− " if neg else "+ ") + body)
    return f"{column} = " + (" ".join(terms) if terms else "0")


def relations(
    A: np.ndarray, basis: Basis, columns: list[str], scales: np.ndarray
) -> list[Relation]:
    """One relation per dependent column, on as few basis columns as the factor allows.

    A: (m, p) factor of the unit-length columns (AᵀA = XeᵀXe). scales: (p,) column lengths.
    In unit-length units the relation is Xe_d ≈ Xe_B·c with c = R11⁻¹·R12[:, d]; on the
    raw scale x_d = Σ c_b·(s_d/s_b)·x_b. Coefficients at rounding level are dropped and
    the relation is refitted on its support by least squares on A's columns.
    """
    if not basis.dependent:
        return []
    C = solve_triangular(basis.R11, basis.R12)
    out: list[Relation] = []
    for i, d in enumerate(basis.dependent):
        c = C[:, i]
        cmax = float(np.max(np.abs(c))) if c.size else 0.0
        support = [basis.basis[k] for k in range(len(c)) if abs(c[k]) > SUPPORT_REL * cmax]
        support.sort()
        coef, residual = _refit(A, support, d)
        full_res = float(basis.remainder[i])
        if residual > max(10 * full_res, 1e-14):
            # Dropping the small terms changed the relation: keep every basis column.
            support = sorted(basis.basis)
            coef, residual = _refit(A, support, d)
        raw = {columns[b]: float(coef[k] * scales[d] / scales[b]) for k, b in enumerate(support)}
        raw = {k: v for k, v in raw.items() if v != 0.0}
        shown = {k: short_number(v) for k, v in raw.items()}
        out.append(
            Relation(
                column=columns[d],
                combination=raw,
                shown=shown,
                equation=equation_text(columns[d], raw),
                residual=residual,
            )
        )
    return out


def _refit(A: np.ndarray, support: list[int], d: int) -> tuple[np.ndarray, float]:
    """Least-squares coefficients of A[:, d] on A[:, support] and the relative residual."""
    if not support:
        return np.zeros(0), float(np.linalg.norm(A[:, d]))
    B = A[:, support]
    coef, *_ = np.linalg.lstsq(B, A[:, d], rcond=None)
    res = float(np.linalg.norm(A[:, d] - B @ coef) / max(np.linalg.norm(A[:, d]), 1e-300))
    return coef, res


def data_residual(X: np.ndarray, rel: Relation, columns: list[str]) -> float:
    """||x_d − Σ c_b x_b|| / ||x_d|| computed on the rows themselves (float64)."""
    idx = {c: j for j, c in enumerate(columns)}
    d = X[:, idx[rel.column]]
    fit = np.zeros_like(d)
    for name, c in rel.combination.items():
        fit += c * X[:, idx[name]]
    return float(np.linalg.norm(d - fit) / max(np.linalg.norm(d), 1e-300))


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
