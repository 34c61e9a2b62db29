"""The Diagnosis: every result the views show, gathered from one factorization.

Plain, JSON-serializable fields only; the CLI, web pages and reports all read this.
"""

from __future__ import annotations

import threading
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field, fields

import numpy as np
from threadpoolctl import threadpool_limits

from rankscope.core import conditioning as cnd
from rankscope.core.basis import Basis, basis_factor
from rankscope.core.correlation import cluster_order, pearson_from_factor, spearman
from rankscope.core.dependencies import data_residual, null_vectors, relations
from rankscope.core.factor import Factorization, factorize
from rankscope.core.fit import fit_least_squares
from rankscope.core.inflation import gvif, vif_from_factor
from rankscope.core.influence import leave_one_out
from rankscope.core.numbers import finite_or_none
from rankscope.core.rank import (
    EPS,
    decide,
    default_tolerance,
    null_by_inverse_iteration,
)
from rankscope.core.ridge import DEFAULT_GRID, ridge_path
from rankscope.core.structured import r_factor

TOLERANCE_RULE = "σ_max(Xe)·max(n, p)·eps (Golub & Van Loan §5.4.1; as numpy.linalg.matrix_rank)"


@dataclass
class Diagnosis:
    """All diagnostics of one design, as plain types. See docs/json.md."""

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
    singular_values: dict[str, list[float] | None]
    centered_columns: list[str]
    dependencies: list[dict]
    null_space: list[dict[str, float]]
    condition_indices: list[float | None]
    variance_proportions: list[dict[str, float] | None]
    index_exact: list[bool]
    exact_dimensions: list[dict]
    near_dependencies: list[dict]
    thresholds: dict[str, float]
    vif: dict[str, float | None]
    tolerance: dict[str, float]
    se_inflation: dict[str, float | None]
    vif_centered: bool
    vif_absent: dict[str, str]
    gvif: dict[str, dict]
    correlations: dict
    fit: dict | None
    ridge: dict | None
    influence: dict | None = None
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        """A copy as nested dicts and lists: what dataclasses.asdict gives for these plain
        fields, without its deepcopy of every number (most of a refit's time on the factor)."""
        return {f.name: _copied(getattr(self, f.name)) for f in fields(self)}

    def plain(self) -> dict:
        """The same dict as to_dict, sharing this Diagnosis' lists instead of copying them:
        for a caller that keeps only the dict (copying p² numbers one by one costs more than
        the diagnosis of a wide design on its factor)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


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
    influence: bool = False,
    order: bool = True,
    all_proportions: bool = False,
    spectra: bool = False,
) -> Diagnosis:
    """Factor X (n, p) [and y (n,)] once and derive every diagnostic. See diagnose_factor."""
    F = factorize(X, columns, y, weights)
    return diagnose_factor(
        F, response=response, groups=groups, keep=keep, tol=tol, ridge_penalty=ridge_penalty,
        ridge_grid=ridge_grid, index_threshold=index_threshold,
        proportion_threshold=proportion_threshold, rank_correlation=rank_correlation,
        influence=influence, order=order, all_proportions=all_proportions, spectra=spectra,
    )


#: Above this many rows, Spearman correlations are computed on evenly spaced rows.
SPEARMAN_ROWS = 50_000


def spearman_rows(n: int, total: int) -> np.ndarray | None:
    """Evenly spaced row indices when the table is larger than SPEARMAN_ROWS, else None."""
    if total <= SPEARMAN_ROWS:
        return None
    return np.linspace(0, total - 1, SPEARMAN_ROWS).astype(int)


#: A relation counts as verified on the rows when its residual there (relative to the size
#: of its terms) is within this factor of the rank tolerance: the rows and the factor then
#: agree to the rounding of the stored numbers.
VERIFY_FACTOR = 100.0


def _constant_carrier(F: Factorization, basis: list[int], order: list[int]) -> int | None:
    """The lowest-priority basis column through which the constant enters the span.

    Solves Xe_B·a = u (u the unit constant) on the factor; the carriers are the columns
    with a non-negligible a_j (above sqrt(eps) of the largest, in unit-length units).
    """
    A = F.T_eq[:, [1 + j for j in basis]]
    a, *_ = np.linalg.lstsq(A, F.T_eq[:, 0], rcond=None)
    big = float(np.max(np.abs(a))) if a.size else 0.0
    carriers = {j for j, v in zip(basis, a, strict=True) if abs(v) > np.sqrt(EPS) * big}
    for j in reversed(order):
        if j in carriers:
            return j
    return None


def _ratio(ends: tuple[float, float] | None) -> float:
    """σ_max/σ_min from extreme_singular_values' pair; infinite without one (the design
    is then deficient on that scale, by the one rank decision)."""
    return ends[0] / ends[1] if ends is not None else float("inf")


def priority_order(columns: list[str], keep: list[str] | None) -> list[int]:
    """Basis priority: the caller's keep list first, then the other columns in order."""
    keep = [c for c in (keep or []) if c in columns]
    first = [columns.index(c) for c in dict.fromkeys(keep)]
    return first + [j for j in range(len(columns)) if j not in first]


#: Columns from which the raw and centred spectra are computed beside the rank decision's
#: SVD, on a thread of their own: each spectrum costs about (8/3)·p³ flops, a second at
#: 1,000 columns, and below a few hundred columns a thread costs more than it saves.
SIDE_SPECTRA_COLUMNS = 400


_SIDE: list[ThreadPoolExecutor] = []
_SIDE_GUARD = threading.Lock()


def _side_pool() -> ThreadPoolExecutor:
    """One pool of two for the process: as many as the analyses that may run at once by
    default."""
    with _SIDE_GUARD:
        if not _SIDE:
            _SIDE.append(ThreadPoolExecutor(2, thread_name_prefix="rankscope-spectra"))
    return _SIDE[0]


def _raw_factor(F: Factorization) -> np.ndarray:
    """A triangular factor of the raw X (R_x's columns in x_order, times their lengths)."""
    return F.R_x_triangular * np.asarray(F.scales)[F.x_order]


def _side_ends(F: Factorization, Zc: np.ndarray, centred: bool
               ) -> tuple[Future, Future | None]:
    """The raw and centred (σ_max, σ_min) of a wide design that is perhaps of full rank,
    started on the side threads before its rank is decided (they are used only if it is
    full rank; otherwise they finish unread): the Lanczos iterations then overlap the rank
    decision's SVD instead of following the index table (0.2 s at 1,000 columns). The same
    calls on the same arguments as without them, so the same numbers."""
    raw = _raw_factor(F)  # made here: R_x_triangular is cached on F, shared with the SVD
    pool = _side_pool()
    return (pool.submit(cnd.extreme_singular_values, raw),
            pool.submit(lambda: cnd.extreme_singular_values(r_factor(Zc))) if centred
            else None)


def _side_spectra(F: Factorization, Zc: np.ndarray) -> tuple[Future, Future]:
    """The raw and centred singular values, each on a thread of its own: with the rank
    decision's SVD that is three on two cores, about half again one SVD's time instead of
    twice it while the side thread took both in turn."""
    F.R_xy_raw  # noqa: B018 - the shared QR is made here, before two threads could ask for it
    pool = _side_pool()
    return (pool.submit(lambda: F.singular_values_raw),
            pool.submit(lambda: cnd.singular_values(Zc)))


Guess = tuple[tuple[list[int], list[int]], Future]


def _guessed_basis(F: Factorization, hint: list[str], order: list[int]) -> Guess | None:
    """The singular values of the basis factor that rank.decide would make if the dependent
    columns were the hinted ones (those a caller's previous diagnosis wrote through the
    others: after dropping or adding one column they usually stay the same), computed on
    the side thread while the rank decision's own SVD runs: the same call on the same
    arguments, so the same numbers when the guess is right. Returns ((basis in QR order,
    dependent), future of the values), or None."""
    names = F.columns
    outside = set(hint)
    basis = [j for j in order if names[j] not in outside]
    if not basis or len(basis) == len(order):
        return None
    consts = F.constant_columns
    first = [j for j in basis if j in consts]
    qr_order = first + [j for j in basis if j not in first]
    dependent = [j for j in order if names[j] in outside]
    A, rhs = F.R_x, F.R_xy[:F.p, F.p]
    return (qr_order, dependent), _side_pool().submit(
        lambda: cnd.singular_values(basis_factor(A, qr_order, dependent, rhs).R11))


#: Columns from which the rank decision takes the singular values of Xe without vectors
#: when the design may be rank deficient, and its null space by inverse iteration: the
#: vectors of a full SVD cost about as much again as the values (measured: 5.7 s against
#: 2.8 s at 2,000 columns on one busy core), and a deficient design needs its basis
#: columns' SVD besides. Narrower designs take the full SVD as before (a few ms).
VALUES_FIRST_COLUMNS = 200

Svd = tuple[np.ndarray | None, np.ndarray, np.ndarray | None]


def _small_pivots(F: Factorization, tol: float | None) -> list[int]:
    """The columns (of X) whose pivot in the triangular factor is at or below the lowest
    tolerance the SVD could set: each is, to that tolerance, a combination of the columns
    reduced before it. Any such pivot makes X certainly rank deficient (σ_min ≤ min |r_jj|:
    the eigenvalues of a triangular matrix are its diagonal); none says only "perhaps of
    full rank"."""
    if F.p == 0:
        return []
    R = F.R_x_triangular
    # ‖R‖_F/√p ≤ σ_max: the default tolerance is at least this; a caller's is itself.
    lowest = (float(tol) if tol is not None
              else float(np.linalg.norm(R)) * max(F.n, F.p) * EPS / np.sqrt(F.p))
    small = np.flatnonzero(np.abs(np.diagonal(R)) <= lowest)
    return [F.x_order[int(i)] for i in small]


def rank_spectrum(F: Factorization, tol: float | None
                  ) -> tuple[Svd, np.ndarray | None, float]:
    """The singular values of Xe for the rank decision, with the vectors only where they
    are needed, and the tolerance.

    Returns (svd, null, tol): svd is (U, d, Vt) of Xe when computed in full (a narrow
    design, whose index table then reuses it), else (None, d, None) with `null` the
    null-space basis: empty for a design of full rank, else found by inverse iteration
    (rank.decide uses it in place of the vectors). Either way d and the rank come from an
    SVD; which SVD is only a question of cost (rank.null_by_inverse_iteration).
    """
    p = F.p

    def tolerance(d: np.ndarray) -> float:
        return float(tol) if tol is not None else default_tolerance(
            d[0] if d.size else 0.0, F.n, p)

    def full() -> tuple[Svd, None, float]:
        svd = F.svd_eq
        return svd, None, tolerance(svd[1])

    if p < VALUES_FIRST_COLUMNS:
        return full()
    d = F.singular_values_eq
    tol_used = tolerance(d)
    rank = int(np.sum(d > tol_used)) if d.size else 0
    if rank == p:  # the index table takes the vectors it shows from the basis factor
        return (None, d, None), np.zeros((p, 0)), tol_used
    found = null_by_inverse_iteration(F.R_x_triangular, d, rank, tol_used)
    if found is None:
        return full()
    null = np.zeros_like(found)
    null[F.x_order] = found  # R's columns are X's in x_order
    return (None, d, None), null, tol_used


def basis_index_table(basis: Basis, A: np.ndarray, svd: Svd, every: bool,
                      index_threshold: float, proportion_threshold: float,
                      guess: Guess | None = None) -> cnd.IndexTable:
    """The index table of the basis columns of A (the unit-length factor), columns in
    ascending order. A wide basis (cnd.WIDE_DIMENSIONS columns or more) gets the
    proportions of its dimensions of index cnd.PROPORTION_INDEX or more only (every:
    all of them), from the singular values of its R11 and the vectors of those dimensions;
    the others take the full SVD, reused from the rank decision when the basis is every
    column. guess: _guessed_basis' future, whose values serve when its basis is this one."""
    in_basis = sorted(basis.basis)
    if len(in_basis) == A.shape[1] and svd[2] is not None:
        return cnd.index_table(A[:, in_basis], 0.0, index_threshold, proportion_threshold,
                               svd=svd)
    k = len(in_basis)
    if not every and k >= cnd.WIDE_DIMENSIONS:
        R11 = basis.R11
        if k == A.shape[1]:
            d = svd[1]
        elif guess is not None and guess[0] == (basis.basis, basis.dependent):
            d = guess[1].result()
        else:
            d = cnd.singular_values(R11)
        m = cnd.shown_dimensions(d, min(cnd.PROPORTION_INDEX, index_threshold))
        t = None if m is None else cnd.subset_index_table(
            R11, d, lambda: basis.R11_inverse, m, index_threshold, proportion_threshold)
        if t is not None:  # R11's columns are in QR order: put them in ascending order
            at = {j: i for i, j in enumerate(basis.basis)}
            perm = [at[j] for j in in_basis]
            place = {i: q for q, i in enumerate(perm)}
            return cnd.IndexTable(t.indices, t.proportions[:, perm],
                                  [(r, sorted(place[i] for i in cols)) for r, cols in t.flagged],
                                  t.exact, t.first)
    return cnd.index_table(A[:, in_basis], 0.0, index_threshold, proportion_threshold,
                           svd=basis_svd(basis, in_basis))


def basis_svd(basis: Basis, columns: list[int]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """SVD of the unit-length basis columns (in the given order) from the basis factor's
    R11: the same singular values and right vectors as Xe's basis columns, an SVD of
    k × k instead of p × k."""
    at = {j: i for i, j in enumerate(basis.basis)}
    M = basis.R11[:, [at[j] for j in columns]]
    if M.size == 0:
        return np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0))
    return np.linalg.svd(M, full_matrices=False)


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
    correlations: bool = True,
    influence: bool = False,
    order: bool = True,
    all_proportions: bool = False,
    spectra: bool = False,
    deferred_hint: list[str] | None = None,
) -> Diagnosis:
    """Every diagnostic from one Factorization.

    influence: also the exact leave-one-out condition number and flagged condition indices
    for every row (needs the rows; O(n·p²), about one more pass over them).
    correlations: False leaves the correlation matrices empty (a preview needs none).
    rank_correlation, order: the extras (correlation.EXTRAS), each null when not asked:
    Spearman's matrix (needs the rows) and the clustered display order.
    all_proportions, spectra: the extras of a wide design (cnd.WIDE_DIMENSIONS columns or
    more), which gets by default the proportions of its dimensions of index
    cnd.PROPORTION_INDEX or more only (the other rows None) and the raw and centred
    singular values only where a condition number needs them (else None). Narrower
    designs always get both in full. deferred_hint: the dependent columns (those on the
    left of an equation) of a previous diagnosis of a nearly equal design (without one,
    the columns whose pivots in the triangular factor are below any tolerance); a wide
    deficient design then computes its basis' singular values beside its own SVD (the
    results are the same with or without it, right or wrong).

    tol: absolute rank tolerance on the singular values of the unit-length X (Xe);
    default σ_max·max(n, p)·eps. keep: columns to keep in the basis when columns are
    exactly dependent (the others are written in terms of them).
    """
    names = F.columns
    p = F.p
    notes = list(F.notes)
    R_eq = F.R_x
    # The three spectra (unit-length, raw, centred) share nothing but the factor: a wide
    # design takes the raw and centred ones on a second core while the first computes the
    # SVD the rank decision needs. Each stays one single-threaded LAPACK call, as below.
    cen = F.centered[:, :p]
    consts = F.constant_columns
    nonconst = [j for j in range(p) if j not in consts and j not in F.zero_columns]
    Zc = cnd.unit_columns(cen, nonconst)
    # A wide design lists its raw and centred spectra only when asked: its condition
    # numbers on those scales need the extreme singular values only (see below).
    lists = spectra or p < cnd.WIDE_DIMENSIONS
    side = _side_spectra(F, Zc) if lists and p >= SIDE_SPECTRA_COLUMNS else None
    order_of_basis = priority_order(names, keep)
    wide = not lists and p >= VALUES_FIRST_COLUMNS
    small = _small_pivots(F, tol) if wide else []
    perhaps_full = wide and not small
    # Without a caller's hint, the columns with the small pivots: in the usual column
    # order they are the ones the rank decision writes through the others.
    hint = deferred_hint or [names[j] for j in small]
    guess = (_guessed_basis(F, hint, order_of_basis)
             if hint and wide and not all_proportions and not perhaps_full else None)
    ends = _side_ends(F, Zc, bool(nonconst)) if perhaps_full else None
    svd, null, tol_used = rank_spectrum(F, tol)
    sv_eq = svd[1]
    decision = decide(R_eq, svd, order_of_basis, tol_used, consts,
                      rhs=F.R_xy[:p, p], null=null)
    basis = decision.basis
    rank = decision.rank
    for j in F.zero_columns:
        notes.append(f"Column {names[j]} is all zeros.")
    rels = relations(R_eq, basis, names, F.scales, tol_used, consts)
    rel_dicts = []
    for r in rels:
        d = r.to_dict()
        if F.X is not None:
            d["residual_rows"] = data_residual(F.X, r, names)
            d["verified"] = bool(d["residual_rows"] <= VERIFY_FACTOR * max(tol_used, EPS))
        rel_dicts.append(d)
    involved: set[str] = set()
    for r in rels:
        involved.add(r.column)
        involved.update(r.combination)

    # Index table of the basis design (an exact dimension would swamp every share), then
    # one exact row per relation with the columns of its equation.
    in_basis = sorted(basis.basis)
    table = basis_index_table(basis, R_eq, svd, all_proportions, index_threshold,
                              proportion_threshold, guess)
    shares = np.zeros((table.proportions.shape[0], p))
    shares[:, in_basis] = table.proportions
    props: list[dict[str, float] | None] = [None] * table.first
    props += [dict(zip(names, row, strict=True)) for row in shares.tolist()]
    indices: list[float | None] = [finite_or_none(x) for x in table.indices]
    exact_rows = [False] * len(in_basis)
    near = [
        {
            "index": finite_or_none(table.indices[k]),
            "columns": [names[in_basis[j]] for j in cols],
            "proportions": {names[in_basis[j]]: float(table.proportions[k - table.first, j])
                            for j in cols},
            "exact": False,
        }
        for k, cols in table.flagged
    ]
    exact_dims = []
    for r in rels:
        members = [c for c in names if c == r.column or c in r.combination]
        props.append({c: (1.0 if c in members else 0.0) for c in names})
        indices.append(None)
        exact_rows.append(True)
        exact_dims.append({"columns": members, "equation": r.equation})
        near.append({"index": None, "columns": members,
                     "proportions": dict.fromkeys(members, 1.0), "exact": True})

    # VIF: on the basis design, centred when the model holds a constant (explicitly or
    # in the span), else uncentred; infinite exactly for the columns of a relation.
    vif_centered = F.constant_in_span
    absent: dict[str, str] = {}
    left_out: set[int] = set()
    explicit = [j for j in basis.basis if j in consts]
    if explicit:
        left_out.add(explicit[0])
        absent[names[explicit[0]]] = "the constant has no VIF"
    elif vif_centered and basis.basis:
        carrier = _constant_carrier(F, basis.basis, priority_order(names, keep))
        if carrier is not None:
            left_out.add(carrier)
            if names[carrier] not in involved:
                absent[names[carrier]] = (
                    "carries the constant (in the span without an intercept column): the "
                    "VIFs are those of the design with this column replaced by the constant")
    space_cols = sorted(j for j in basis.basis if j not in left_out and j not in consts)
    Zs = cnd.unit_columns(cen if vif_centered else R_eq, space_cols)
    vals = vif_from_factor(Zs) if space_cols else np.zeros(0)
    by_col = {names[j]: float(vals[i]) for i, j in enumerate(space_cols)}
    at = {c: j for j, c in enumerate(names)}  # names are unique: list.index is O(p) a call
    vif: dict[str, float | None] = {
        c: None if c in involved else by_col[c]
        for c in names if (c in involved or c in by_col) and at[c] not in explicit[:1]
    }
    tolerance = {c: (0.0 if v is None else 1.0 / v) for c, v in vif.items()}
    # √VIF: the standard error is that many times what uncorrelated columns would give
    # (var(b_j) = σ²·VIF_j/‖x_j − x̄_j‖², Belsley, Kuh & Welsch 1980, §2.1).
    se_inflation = {c: (None if v is None else float(np.sqrt(v))) for c, v in vif.items()}

    gv: dict[str, dict] = {}
    in_space = {j: i for i, j in enumerate(space_cols)}
    for gname, gcols in (groups or {}).items():
        members = [c for c in gcols if c in at]
        if not members:
            continue
        idx = [in_space[at[c]] for c in members if at[c] in in_space]
        bad = any(c in involved for c in members) or not idx
        val = None if bad or not vif_centered else gvif(Zs, idx)
        dfg = len([c for c in members if at[c] not in left_out]) or len(members)
        gv[gname] = {
            "columns": members,
            "df": dfg,
            "gvif": finite_or_none(val) if val is not None else None,
            "gvif_scaled": None if val is None else float(val ** (1.0 / (2 * dfg))),
        }

    pear = pearson_from_factor(Zc) if correlations else np.zeros((0, 0))
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
        "order": cluster_order(pear) if correlations and order else None,
    }

    fit = None
    if F.has_response:
        # The index table's largest index is σ_max/σ_min of the basis columns: no second SVD.
        top = float(np.max(table.indices)) if len(table.indices) else None
        fit = fit_least_squares(F, basis, rels, cond_basis=top).to_dict()

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

    loo = None
    if influence and F.X is not None and in_basis:
        loo = leave_one_out(F.X, F.scales, in_basis, [k for k, _ in table.flagged],
                            factor=R_eq, row_weights=None if F.weights is None
                            else np.sqrt(F.weights))
        for dim, (_, cols) in zip(loo["dimensions"], table.flagged, strict=True):
            dim["columns"] = [names[in_basis[j]] for j in cols]

    # Centring removes the constant's direction from the span: the centred non-constant
    # columns have rank rank(X) − 1 when the constant is in the span (explicitly or not),
    # rank(X) otherwise; below their number they are deficient (the one rank decision).
    cen_rank = rank - (1 if F.constant_in_span else 0)
    cen_deficient = cen_rank < len(nonconst)
    # Condition numbers of raw, unit-length, and centered-and-scaled X. The side thread's
    # spectra are awaited last: the basis columns' SVD and the rest overlap with them.
    sv_raw: np.ndarray | None
    sv_c: np.ndarray | None
    sv_raw: np.ndarray | None = None
    sv_c: np.ndarray | None = None
    ends_raw = ends_c = None  # (σ_max, σ_min) without the spectrum
    if side is not None:
        sv_raw, sv_c = side[0].result(), side[1].result()
    elif lists:
        sv_raw, sv_c = F.singular_values_raw, cnd.singular_values(Zc)
    else:
        # Infinite by the rule below when deficient; else the extreme values, or the
        # spectrum where their iteration gives up.
        if rank == p:
            ends_raw = (ends[0].result() if ends is not None
                        else cnd.extreme_singular_values(_raw_factor(F)))
            sv_raw = F.singular_values_raw if ends_raw is None else None
        if not cen_deficient and nonconst:
            ends_c = (ends[1].result() if ends is not None and ends[1] is not None
                      else cnd.extreme_singular_values(r_factor(Zc)))
            sv_c = cnd.singular_values(Zc) if ends_c is None else None
    cond = {
        # Raw scale: no tolerance of its own; infinite exactly when X is rank deficient.
        "raw": (finite_or_none(cnd.condition_number(sv_raw, 0.0 if rank == p else np.inf))
                if sv_raw is not None else finite_or_none(_ratio(ends_raw))),
        "equilibrated": finite_or_none(cnd.condition_number(sv_eq, tol_used)),
        "centered": (finite_or_none(cnd.condition_number(sv_c, np.inf if cen_deficient
                                                          else 0.0))
                     if sv_c is not None and sv_c.size
                     else None if not nonconst else finite_or_none(_ratio(ends_c))),
    }

    for c in [names[j] for j in consts]:
        if c != "(intercept)":
            notes.append(f"Column {c} is constant: it carries no variation of its own.")

    return Diagnosis(
        n_rows=F.n,
        columns=list(names),
        response=response,
        rank=rank,
        rank_svd=rank,
        rank_qr=len(basis.basis),
        full_rank=rank == p,
        rank_tolerance=tol_used,
        tolerance_rule=TOLERANCE_RULE if tol is None else "given by the caller",
        rank_note=None,
        basis=[names[j] for j in priority_order(names, keep) if j in set(basis.basis)],
        condition_number=cond,
        singular_values={
            "raw": None if sv_raw is None else sv_raw.tolist(),
            "equilibrated": sv_eq.tolist(),
            "centered": None if sv_c is None else sv_c.tolist(),
        },
        centered_columns=[names[j] for j in nonconst],
        dependencies=rel_dicts,
        null_space=null_vectors(rels, names),
        condition_indices=indices,
        variance_proportions=props,
        index_exact=exact_rows,
        exact_dimensions=exact_dims,
        near_dependencies=near,
        thresholds={"condition_index": index_threshold, "proportion": proportion_threshold},
        vif=vif,
        tolerance=tolerance,
        se_inflation=se_inflation,
        vif_centered=vif_centered,
        vif_absent=absent,
        gvif=gv,
        correlations=corr,
        fit=fit,
        ridge=ridge,
        influence=loo,
        notes=notes,
    )
