"""Least-squares fit from the factor: basic and minimum-norm solutions, inference,
estimability. Never solves with XᵀX; no I/O, no display.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import qr, solve_triangular

from rankscope.core.basis import Basis, basis_factor
from rankscope.core.dependencies import Relation
from rankscope.core.factor import EPS, Factorization, column_norms
from rankscope.core.numbers import finite_or_none, short_number

#: Refinement runs when the rows are kept and either the problem is small (n·k below
#: this many entries) or the basis' condition number exceeds REFINE_COND. QR alone gives
#: a relative error of about cond²·eps·|r|/(|X||b|) + cond·eps (Golub & Van Loan 4th ed.
#: §5.3.7), below 1e-10 for cond ≤ 1e5 on ordinary data; above that, refinement pays off.
REFINE_CELLS = 2_000_000
REFINE_COND = 1e5
REFINE_STEPS = 8


@dataclass(frozen=True)
class Fit:
    """Ordinary (or weighted) least squares on the basis columns.

    coefficients etc.: column name -> value; None for aliased columns (basic solution).
    min_norm: the minimum-length solution over all columns (what an SVD-based solver
        returns silently when columns are aliased), raw units.
    alias_structure: for basis columns whose estimate absorbs aliased ones, what the
        estimate really estimates, as {column: coefficient} over the true coefficients.
    """

    coefficients: dict[str, float | None]
    std_errors: dict[str, float | None]
    t_values: dict[str, float | None]
    p_values: dict[str, float | None]
    residual_std: float | None
    rss: float
    df_model: int
    df_residual: int
    n: int
    r_squared: float | None
    adj_r_squared: float | None
    r_squared_centered: bool
    f_statistic: float | None
    f_p_value: float | None
    aliased: list[str]
    min_norm: dict[str, float]
    alias_structure: list[dict]
    refinement_steps: int
    weighted: bool

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def _gradient(F: Factorization, B: list[int], b: np.ndarray) -> tuple[np.ndarray, float]:
    """X_Bᵀ·W·(y − X_B·b) and the weighted residual sum of squares, accumulated in
    extended precision (numpy.longdouble) over row blocks so memory stays bounded."""
    X, y, w = F.X, F.y, F.weights
    assert X is not None and y is not None
    g = np.zeros(len(B), dtype=np.longdouble)
    rss = np.longdouble(0)
    step = 8192  # rows per extended-precision block: about 16·8192·k bytes at a time
    for s in range(0, X.shape[0], step):
        Xb = X[s : s + step][:, B].astype(np.longdouble)
        r = y[s : s + step].astype(np.longdouble) - Xb @ b
        wr = r if w is None else r * w[s : s + step].astype(np.longdouble)
        g += Xb.T @ wr
        rss += r @ wr
    return g, float(rss)


def _refine(
    F: Factorization, B: list[int], R11: np.ndarray, b: np.ndarray
) -> tuple[np.ndarray, float, int]:
    """Iterative refinement by the corrected seminormal equations with residuals in
    extended precision: δ = R⁻¹R⁻ᵀ·(X_Bᵀ r) (Björck, Numerical Methods for Least
    Squares Problems, SIAM 1996, §2.9.4 and §6.6). R comes from the QR factor, the
    Gram matrix is never formed; the fixed point is X_Bᵀr = 0 to extended precision.
    Stops when the correction is below eps·|b| or stops shrinking.
    """
    s = F.scales[B]
    bl = b.astype(np.longdouble)
    g, rss = _gradient(F, B, bl)
    steps, last = 0, np.inf
    for _ in range(REFINE_STEPS):
        ge = np.asarray(g / s.astype(np.longdouble), dtype=np.float64)
        de = solve_triangular(R11, solve_triangular(R11, ge, trans="T"))
        delta = de / s
        size = float(np.linalg.norm(de))
        if not np.isfinite(size) or size >= last:
            break
        bl = bl + delta.astype(np.longdouble)
        steps += 1
        g, rss = _gradient(F, B, bl)
        last = size
        if size <= EPS * float(np.linalg.norm(b * s)):
            break
    return np.asarray(bl, dtype=np.float64), rss, steps


def min_norm_solution(F: Factorization, null: np.ndarray) -> np.ndarray:
    """argmin ||β|| over the least-squares solutions, original units.

    Every least-squares solution is a particular one plus a null vector, and the shortest
    is the one orthogonal to the null space: β = (I − Q·Qᵀ)·β_0 with Q an orthonormal basis
    of the null space (a complete orthogonal decomposition in the original units, Golub &
    Van Loan 4th ed. §5.5.2; Björck 1996, §1.3.4). β_0 is the basic solution on the columns
    that the raw null vectors weigh least (QR with column pivoting on Nᵀ picks the others
    as dependent): those carry the solution with small coefficients, so the projection
    subtracts no large numbers, even with raw scales of 1e-8 beside 1e8.
    null: (p, d) null vectors of X in original units (null_matrix).
    """
    p = F.p
    if null.shape[1] == 0:
        return np.zeros(p)
    Wn = null / column_norms(null)
    _, _, piv = qr(Wn.T, mode="economic", pivoting=True)
    dependent = sorted(int(j) for j in piv[: null.shape[1]])
    first = [j for j in F.constant_columns if j not in dependent]
    basis = first + [j for j in range(p) if j not in dependent and j not in first]
    fb = basis_factor(F.R_x, basis, dependent, rhs=F.R_xy[:p, p])
    k = len(basis)
    beta = np.zeros(p)
    if k:
        beta[basis] = solve_triangular(fb.R11, fb.qty[:k]) / F.scales[basis]
    Q, _ = np.linalg.qr(Wn)
    return beta - Q @ (Q.T @ beta)


def null_matrix(names: list[str], relations: list[Relation]) -> np.ndarray:
    """(p, d) null vectors of X, one per relation: 1 on its column, −c_b on its basis columns."""
    idx = {c: j for j, c in enumerate(names)}
    W = np.zeros((len(names), len(relations)))
    for i, r in enumerate(relations):
        W[idx[r.column], i] = 1.0
        for c, v in r.combination.items():
            W[idx[c], i] = -v
    return W


def fit_least_squares(F: Factorization, basis: Basis, relations: list[Relation],
                      cond_basis: float | None = None) -> Fit:
    """Coefficients, standard errors, t and p values, R², F, from the basis factor.

    basis: chosen on the unit-length factor with y's coordinates carried along (qty).
    cond_basis: the condition number of the unit-length basis columns when the caller has
    it (the largest condition index of the index table: the same singular values as R11),
    else it is computed here, for the choice to refine on the rows.
    Standard errors: s·||row j of R11⁻¹|| / scale_j (Seber & Lee, Linear Regression
    Analysis, 2nd ed., §11.4); s² = RSS/(n − k).
    """
    # The t and F tails' module loads with the first fit: a check without a response never
    # needs it (scipy.special's import is about a tenth of a small `check`).
    from scipy import special

    names = F.columns
    B = basis.basis
    k = len(B)
    R = F.R_xy
    p = F.p
    c_e = solve_triangular(basis.R11, basis.qty[:k]) if k else np.zeros(0)
    b = c_e / F.scales[B] if k else c_e
    rss = float(R[p, p] ** 2 + np.sum(basis.qty[k:] ** 2))
    steps = 0
    if k and F.X is not None and F.y is not None:
        if cond_basis is None:
            d = np.linalg.svd(basis.R11, compute_uv=False)
            cond_basis = float(d[0] / d[-1]) if d[-1] > 0 else np.inf
        if F.n * k <= REFINE_CELLS or cond_basis > REFINE_COND:
            b, rss, steps = _refine(F, B, basis.R11, b)
    df_res = F.n - k
    centered = F.constant_in_span
    tss = float(np.sum(F.centered[:, -1] ** 2) if centered else np.sum(F.T[:, -1] ** 2))
    s = float(np.sqrt(rss / df_res)) if df_res > 0 else None
    Rinv = basis.R11_inverse
    se = (np.sqrt((Rinv**2).sum(axis=1)) / F.scales[B] * s) if (k and s is not None) else None
    coef: dict[str, float | None] = {c: None for c in names}
    ses: dict[str, float | None] = {c: None for c in names}
    tv: dict[str, float | None] = {c: None for c in names}
    pv: dict[str, float | None] = {c: None for c in names}
    tvals = pvals = None
    if se is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            tvals = np.where(se > 0, b / np.where(se > 0, se, 1.0), np.nan)
        # Student t survival function as scipy.stats.t.sf computes it (special.stdtr), without
        # importing scipy.stats (about a second of a small `check`).
        pvals = 2 * special.stdtr(df_res, -np.abs(tvals))
    for i, j in enumerate(B):
        coef[names[j]] = float(b[i])
        if se is not None and tvals is not None and pvals is not None:
            ses[names[j]] = float(se[i])
            if se[i] > 0:
                tv[names[j]] = float(tvals[i])
                pv[names[j]] = float(pvals[i])
    df_model = k - (1 if centered else 0)
    r2 = 1.0 - rss / tss if tss > 0 else None
    adj = None
    if r2 is not None and df_res > 0:
        adj = 1.0 - (1.0 - r2) * (F.n - (1 if centered else 0)) / df_res
    fstat = fp = None
    if df_model > 0 and df_res > 0 and tss > 0:
        fstat = finite_or_none(((tss - rss) / df_model) / (rss / df_res)) if rss > 0 else None
        if fstat is not None:
            fp = float(special.fdtrc(df_model, df_res, fstat))  # = scipy.stats.f.sf
    mn = min_norm_solution(F, null_matrix(names, relations)) if relations else np.zeros(p)
    if not relations:
        mn[B] = b
    return Fit(
        coefficients=coef,
        std_errors=ses,
        t_values=tv,
        p_values=pv,
        residual_std=s,
        rss=rss,
        df_model=df_model,
        df_residual=df_res,
        n=F.n,
        r_squared=r2,
        adj_r_squared=adj,
        r_squared_centered=centered,
        f_statistic=fstat,
        f_p_value=fp,
        aliased=[names[j] for j in basis.dependent],
        min_norm={c: float(v) for c, v in zip(names, mn, strict=True)},
        alias_structure=alias_structure(relations),
        refinement_steps=steps,
        weighted=F.weights is not None,
    )


def alias_structure(relations: list[Relation]) -> list[dict]:
    """What each basis estimate estimates when columns are aliased.

    With x_d = Σ c_b x_b, Xβ = X_B(β_B + C·β_D), so the basic estimate of β_b is
    unbiased for β_b + Σ_d c_bd·β_d (Searle, Linear Models, 1971, §5.2).
    """
    acc: dict[str, dict[str, float]] = {}
    for r in relations:
        for b, c in r.combination.items():
            acc.setdefault(b, {b: 1.0})[r.column] = c
    out = []
    for b, combo in acc.items():
        terms = [f"β[{b}]"]
        for d, c in combo.items():
            if d == b:
                continue
            sign = "−" if c < 0 else "+"
            mag = short_number(abs(c))
            terms.append(f"{sign} " + (f"β[{d}]" if mag == "1" else f"{mag}·β[{d}]"))
        out.append({"column": b, "estimates": combo, "text": " ".join(terms)})
    return out


def is_estimable(
    a: dict[str, float], null_space: list[dict[str, float]], tol: float = 1e-9
) -> bool:
    """Σ a_j·β_j is estimable iff a is orthogonal to every null vector of X
    (Searle 1971 §5.4). tol: relative to |a|·|v|."""
    for v in null_space:
        dot = sum(a.get(k, 0.0) * c for k, c in v.items())
        na = np.sqrt(sum(x * x for x in a.values()))
        nv = np.sqrt(sum(x * x for x in v.values()))
        if abs(dot) > tol * max(na * nv, 1e-300):
            return False
    return True
