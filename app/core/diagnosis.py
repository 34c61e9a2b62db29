"""The Diagnosis: every result the views show, gathered from one factorization.

Plain, JSON-serializable fields only; the CLI, web pages and reports all read this.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields

import numpy as np
from threadpoolctl import threadpool_limits

from app.core import conditioning as cnd
from app.core.basis import choose_basis
from app.core.correlation import cluster_order, pearson_from_factor, spearman
from app.core.dependencies import data_residual, null_vectors, relations
from app.core.factor import Factorization, factorize
from app.core.fit import fit_least_squares
from app.core.inflation import gvif, vif_from_factor
from app.core.numbers import finite_or_none
from app.core.ridge import DEFAULT_GRID, ridge_path

TOLERANCE_RULE = "σ_max(Xe)·max(n, p)·eps (Golub & Van Loan §5.4.1; as numpy.linalg.matrix_rank)"


@dataclass
class Diagnosis:
    """All diagnostics of one design, as plain types. See README 'JSON contract'."""

    n_rows: int
    columns: list[str]
    response: str | None
    rank: int
    rank_svd: int
    rank_qr: int
    full_rank: bool
    rank_tolerance: float
    tolerance_rule: str
    rank_note: str | None
    basis: list[str]
    condition_number: dict[str, float | None]
    singular_values: dict[str, list[float]]
    centered_columns: list[str]
    dependencies: list[dict]
    null_space: list[dict[str, float]]
    condition_indices: list[float | None]
    variance_proportions: list[dict[str, float]]
    index_exact: list[bool]
    near_dependencies: list[dict]
    thresholds: dict[str, float]
    vif: dict[str, float | None]
    tolerance: dict[str, float]
    vif_centered: bool
    gvif: dict[str, dict]
    correlations: dict
    fit: dict | None
    ridge: dict | None
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        """A copy as nested dicts and lists: what dataclasses.asdict gives for these plain
        fields, without its deepcopy of every number (most of a refit's time on the factor)."""
        return {f.name: _copied(getattr(self, f.name)) for f in fields(self)}


def _copied(value: object) -> object:
    if isinstance(value, dict):
        return {k: _copied(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_copied(v) for v in value]
    if isinstance(value, tuple):
        return tuple(_copied(v) for v in value)
    return value  # numbers, strings, None, bools: immutable


def diagnose(
    X: np.ndarray,
    columns: list[str],
    y: np.ndarray | None = None,
    *,
    response: str | None = None,
    weights: np.ndarray | None = None,
    groups: dict[str, list[str]] | None = None,
    keep: list[str] | None = None,
    tol: float | None = None,
    ridge_penalty: float | None = None,
    ridge_grid: np.ndarray | None = None,
    index_threshold: float = cnd.INDEX_THRESHOLD,
    proportion_threshold: float = cnd.PROPORTION_THRESHOLD,
    rank_correlation: bool = True,
) -> Diagnosis:
    """Factor X (n, p) [and y (n,)] once and derive every diagnostic. See diagnose_factor."""
    F = factorize(X, columns, y, weights)
    return diagnose_factor(
        F, response=response, groups=groups, keep=keep, tol=tol, ridge_penalty=ridge_penalty,
        ridge_grid=ridge_grid, index_threshold=index_threshold,
        proportion_threshold=proportion_threshold, rank_correlation=rank_correlation,
    )


#: Above this many rows, Spearman correlations are computed on evenly spaced rows.
SPEARMAN_ROWS = 50_000


def spearman_rows(n: int, total: int) -> np.ndarray | None:
    """Evenly spaced row indices when the table is larger than SPEARMAN_ROWS, else None."""
    if total <= SPEARMAN_ROWS:
        return None
    return np.linspace(0, total - 1, SPEARMAN_ROWS).astype(int)


def priority_order(columns: list[str], keep: list[str] | None) -> list[int]:
    """Basis priority: the caller's keep list first, then the other columns in order."""
    keep = [c for c in (keep or []) if c in columns]
    first = [columns.index(c) for c in dict.fromkeys(keep)]
    return first + [j for j in range(len(columns)) if j not in first]


# Everything in diagnose_factor works on (p, p) matrices: BLAS threads only add contention
# there (measured: a 100×100 SVD 50× slower with 2 threads on a busy 2-core machine).
@threadpool_limits.wrap(limits=1, user_api="blas")
def diagnose_factor(
    F: Factorization,
    *,
    response: str | None = None,
    groups: dict[str, list[str]] | None = None,
    keep: list[str] | None = None,
    tol: float | None = None,
    ridge_penalty: float | None = None,
    ridge_grid: np.ndarray | None = None,
    index_threshold: float = cnd.INDEX_THRESHOLD,
    proportion_threshold: float = cnd.PROPORTION_THRESHOLD,
    rank_correlation: bool = True,
) -> Diagnosis:
    """Every diagnostic from one Factorization.

    tol: absolute rank tolerance on the singular values of the unit-length X (Xe);
    default σ_max·max(n, p)·eps. keep: columns to keep in the basis when columns are
    exactly dependent (the others are written in terms of them).
    """
    names = F.columns
    p = F.p
    notes = list(F.notes)
    R_eq = F.R_x
    sv_eq = F.svd_eq[1]
    tol_used = float(tol) if tol is not None else cnd.default_tolerance(
        sv_eq[0] if sv_eq.size else 0.0, F.n, p)
    rank_svd = int(np.sum(sv_eq > tol_used))
    basis = choose_basis(R_eq, priority_order(names, keep), tol_used, rhs=F.R_xy[:p, p])
    rank_qr = len(basis.basis)
    rank_note = None
    if rank_qr != rank_svd:
        rank_note = (
            f"The SVD gives rank {rank_svd} and the QR basis choice gives {rank_qr} at the "
            f"same tolerance {tol_used:.3g}: the smallest singular values lie close to the "
            "tolerance, so the rank is not sharply defined; the relations below come from QR."
        )
    for j in F.zero_columns:
        notes.append(f"Column {names[j]} is all zeros.")
    rels = relations(R_eq, basis, names, F.scales)
    rel_dicts = []
    for r in rels:
        d = r.to_dict()
        if F.X is not None:
            d["residual_rows"] = data_residual(F.X, r, names)
        rel_dicts.append(d)

    # Condition numbers of raw, unit-length, and centered-and-scaled X.
    sv_raw = F.svd_raw[1]
    cen = F.centered[:, :p]
    cen_len = np.linalg.norm(cen, axis=0)
    # A column whose centered length is at rounding level relative to its raw length is
    # constant (the intercept, or a column that never varies).
    nonconst = [j for j in range(p) if cen_len[j] > np.sqrt(p + 1) * tol_used * F.scales[j]
                and cen_len[j] > 0]
    Zc = cnd.unit_columns(cen, nonconst)
    sv_c = cnd.singular_values(Zc)
    tol_c = cnd.default_tolerance(sv_c[0] if sv_c.size else 0.0, F.n, len(nonconst))
    cond = {
        # Raw scale: no tolerance of its own; infinite exactly when X is rank deficient.
        "raw": finite_or_none(cnd.condition_number(sv_raw, 0.0 if rank_svd == p else np.inf)),
        "equilibrated": finite_or_none(cnd.condition_number(sv_eq, tol_used)),
        "centered": finite_or_none(cnd.condition_number(sv_c, tol_c)) if sv_c.size else None,
    }

    table = cnd.index_table(R_eq, tol_used, index_threshold, proportion_threshold,
                            svd=F.svd_eq)
    props = [dict(zip(names, row, strict=True)) for row in table.proportions.tolist()]
    near = [
        {
            "index": finite_or_none(table.indices[k]),
            "columns": [names[j] for j in cols],
            "proportions": {names[j]: float(table.proportions[k, j]) for j in cols},
            "exact": table.exact[k],
        }
        for k, cols in table.flagged
    ]

    # VIF: centered when the model holds a constant, else uncentered (unit length).
    vif_centered = F.constant_in_span
    space = cen if vif_centered else R_eq
    cand = nonconst if vif_centered else list(range(p))
    label = [names[j] for j in cand]
    Zall = Zc if vif_centered else cnd.unit_columns(space, cand)
    # Exact dependencies in the space the VIF lives in: those of X, plus any that centering
    # creates (every level of a categorical without an explicit intercept sums to the
    # constant). Their columns have infinite VIF; the rest come from the basis columns.
    rank_of = {j: i for i, j in enumerate(priority_order(names, keep))}
    inner_order = sorted(range(len(cand)), key=lambda i: rank_of[cand[i]])
    inner_tol = (tol_c if vif_centered else tol_used) if cand else 0.0
    inner = choose_basis(Zall, inner_order, inner_tol)
    involved: set[str] = set()
    for r in relations(Zall, inner, label, np.ones(len(cand))):
        involved.add(r.column)
        involved.update(r.combination)
    const_cols = [names[j] for j in range(p) if j not in nonconst]
    span_cols = [cand[i] for i in sorted(inner.basis)]
    Zs = cnd.unit_columns(space, span_cols)
    vals = vif_from_factor(Zs) if span_cols else np.zeros(0)
    by_col = {names[j]: float(vals[i]) for i, j in enumerate(span_cols)}
    vif: dict[str, float | None] = {
        c: None if (c in involved or c not in by_col) else by_col[c] for c in label
    }
    tolerance = {c: (0.0 if v is None else 1.0 / v) for c, v in vif.items()}

    gv: dict[str, dict] = {}
    for gname, gcols in (groups or {}).items():
        members = [c for c in gcols if c in names]
        if not members:
            continue
        idx = [span_cols.index(names.index(c)) for c in members
               if names.index(c) in span_cols]
        bad = any(c in involved for c in members) or len(idx) != len(members)
        val = None if bad or not vif_centered else gvif(Zs, idx)
        dfg = len(members)
        gv[gname] = {
            "columns": members,
            "df": dfg,
            "gvif": finite_or_none(val) if val is not None else None,
            "gvif_scaled": None if val is None else float(val ** (1.0 / (2 * dfg))),
        }

    pear = pearson_from_factor(Zc)
    spear = None
    if rank_correlation and F.X is not None and nonconst:
        rows = spearman_rows(F.n, F.X.shape[0])
        spear = spearman(F.X[rows][:, nonconst] if rows is not None else F.X[:, nonconst])
        if rows is not None:
            notes.append(f"Spearman correlations use {len(rows):,} evenly spaced rows of "
                         f"{F.X.shape[0]:,} (ranking every row costs more than the rest).")
    corr = {
        "columns": [names[j] for j in nonconst],
        "pearson": pear.tolist(),
        "spearman": None if spear is None else spear.tolist(),
        "order": cluster_order(pear),
    }

    fit = None
    if F.has_response:
        fit = fit_least_squares(F, basis, rels, rank_qr).to_dict()

    ridge = None
    if F.has_response and (ridge_penalty is not None or ridge_grid is not None):
        grid = np.asarray(ridge_grid if ridge_grid is not None else DEFAULT_GRID, dtype=float)
        if ridge_penalty is not None and not np.any(np.isclose(grid, ridge_penalty)):
            grid = np.sort(np.append(grid, ridge_penalty))
        path = ridge_path(F, nonconst, grid)
        ridge = path.to_dict()
        if ridge_penalty is not None:
            i = int(np.argmin(np.abs(np.asarray(path.penalties) - ridge_penalty)))
            ridge["chosen"] = path.at(i)

    for c in const_cols:
        if c != "(intercept)":
            notes.append(f"Column {c} is constant: it carries no variation of its own.")

    return Diagnosis(
        n_rows=F.n,
        columns=list(names),
        response=response,
        rank=rank_svd,
        rank_svd=rank_svd,
        rank_qr=rank_qr,
        full_rank=rank_svd == p and rank_qr == p,
        rank_tolerance=tol_used,
        tolerance_rule=TOLERANCE_RULE if tol is None else "given by the caller",
        rank_note=rank_note,
        basis=[names[j] for j in basis.basis],
        condition_number=cond,
        singular_values={
            "raw": sv_raw.tolist(),
            "equilibrated": sv_eq.tolist(),
            "centered": sv_c.tolist(),
        },
        centered_columns=[names[j] for j in nonconst],
        dependencies=rel_dicts,
        null_space=null_vectors(rels, names),
        condition_indices=[finite_or_none(x) for x in table.indices],
        variance_proportions=props,
        index_exact=table.exact,
        near_dependencies=near,
        thresholds={"condition_index": index_threshold, "proportion": proportion_threshold},
        vif=vif,
        tolerance=tolerance,
        vif_centered=vif_centered,
        gvif=gv,
        correlations=corr,
        fit=fit,
        ridge=ridge,
        notes=notes,
    )
