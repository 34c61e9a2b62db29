"""Ridge regression on standardized columns, at one penalty or along a grid (the trace).

Computed from the SVD of the small centered factor; no I/O, no display.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rankscope.core.factor import EPS, Factorization

#: Default grid of penalties, in correlation-scale units (columns of unit length, so
#: XᵀX is the correlation matrix): 0 and 25 values from 1e-4 to 1. Hoerl & Kennard
#: (Technometrics 12, 1970) read the trace over this range; common practice.
DEFAULT_GRID = np.concatenate([[0.0], np.logspace(-4, 0, 25)])


@dataclass(frozen=True)
class RidgePath:
    """Ridge solutions along penalties.

    penalties: (g,) λ values. coefficients: column -> (g,) raw-scale coefficients.
    constant: (g,) the fitted constant on the raw scale (None when not centered).
    effective_df: (g,) Σ d²/(d²+λ). vif: column -> (g,) ridge VIF
        diag((C+λI)⁻¹ C (C+λI)⁻¹) (Marquardt, Technometrics 12, 1970).
    rss: (g,) residual sum of squares on the raw scale.
    centered: whether columns were centered (the model holds a constant).
    """

    penalties: list[float]
    columns: list[str]
    coefficients: dict[str, list[float]]
    constant: list[float] | None
    effective_df: list[float]
    vif: dict[str, list[float]]
    rss: list[float]
    centered: bool

    def to_dict(self) -> dict:
        return dict(self.__dict__)

    def at(self, i: int) -> dict:
        """The solution at the i-th penalty as {column: coefficient} (+ constant)."""
        out = {c: v[i] for c, v in self.coefficients.items()}
        return {"penalty": self.penalties[i], "coefficients": out,
                "constant": None if self.constant is None else self.constant[i],
                "effective_df": self.effective_df[i], "rss": self.rss[i]}


def ridge_path(F: Factorization, cols: list[int], penalties: np.ndarray) -> RidgePath:
    """b(λ) = V·diag(d/(d²+λ))·Uᵀg for the unit-length (centered when the model has a
    constant) columns A = U·D·Vᵀ in factor coordinates (Hoerl & Kennard 1970; Golub &
    Van Loan 4th ed. §6.1.4). β_j = b_j / length_j; constant = ȳ − Σ β_j x̄_j.
    cols: X column indices to penalize (non-constant ones). At λ = 0 singular values
    below max(n, p)·eps·d_max are dropped (minimum-length solution).
    """
    centered = F.constant_in_span
    base = F.centered if centered else F.R_xy_raw
    A = base[:, cols]
    lengths = np.linalg.norm(A, axis=0)
    lengths = np.where(lengths > 0, lengths, 1.0)
    A = A / lengths
    g = base[:, -1]
    U, d, Vt = np.linalg.svd(A, full_matrices=False)
    h = U.T @ g
    cut = (d[0] if d.size else 0.0) * max(F.n, F.p) * EPS
    coefs, consts, edf, vifs, rss = [], [], [], [], []
    for lam in penalties:
        if lam == 0:
            f = np.where(d > cut, 1.0 / np.where(d > cut, d, 1.0), 0.0)
            shrink = (d > cut).astype(float)
        else:
            f = d / (d * d + lam)
            shrink = d * d / (d * d + lam)
        b = Vt.T @ (f * h)
        beta = b / lengths
        coefs.append(beta)
        if centered:
            # An int index even for no columns (an empty float array cannot index).
            consts.append(float(F.means[-1] - F.means[np.asarray(cols, dtype=int)] @ beta))
        edf.append(float(shrink.sum()))
        vifs.append((Vt.T**2) @ (f * f))
        rss.append(float(np.sum((g - A @ b) ** 2)))
    names = [F.columns[j] for j in cols]
    C = np.array(coefs)
    Vf = np.array(vifs)
    return RidgePath(
        penalties=[float(x) for x in penalties],
        columns=names,
        coefficients={c: C[:, i].tolist() for i, c in enumerate(names)},
        constant=consts if centered else None,
        effective_df=edf,
        vif={c: Vf[:, i].tolist() for i, c in enumerate(names)},
        rss=rss,
        centered=centered,
    )
