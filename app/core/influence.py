"""The rows behind ill-conditioning: exact leave-one-out condition numbers and indices.

Needs the rows (n, p) and the basis from the rank decision; arrays in, plain dicts out.
"""

from __future__ import annotations

import numpy as np

#: Most rational steps for each secular-equation root (a few are typical); a step that
#: would leave the bracket bisects instead, so the root is always bracketed.
STEPS = 60
#: Rows listed per measure (all n values are kept in `without`).
TOP = 10
#: Rows handled together: the (rows, r) work arrays then stay cache-sized.
BLOCK = 4096
EPS = float(np.finfo(np.float64).eps)
#: A step this small (relative) ends the iteration for that row; see _root.
SETTLED = 1e-8


def _root(lam: np.ndarray, Z2: np.ndarray, k: int) -> np.ndarray:
    """The k-th largest eigenvalue of G − x·xᵀ for every row of a block at once.

    lam: (r,) eigenvalues of G, descending; Z2: (m, r) squared coordinates z = Vᵀx. The new
    eigenvalues interlace the old ones, λ_{k+1} ≤ μ_k ≤ λ_k, and μ_k is the one root there of
    the secular equation f(μ) = 1 − Σ_j z_j²/(λ_j − μ) = 0, decreasing in μ on that interval
    (Golub, SIAM Review 15, 1973, §5; Bunch, Nielsen & Sorensen, Numer. Math. 31, 1978).
    A rational step inside the bracket, bisecting whenever a step would leave it.
    """
    m, r = Z2.shape
    hi = np.full(m, lam[k])
    if k + 1 < r:
        lo = np.full(m, lam[k + 1])
    else:  # below the smallest: f(λ_r − |z|²) ≥ 0 and μ ≥ 0 (G − xxᵀ is a Gram matrix)
        lo = np.maximum(lam[k] - Z2.sum(axis=1), 0.0)
    # First-order start: λ_k minus the row's weight on that direction, inside the bracket.
    mu = lam[k] - Z2[:, k]
    mu = np.where((mu > lo) & (mu < hi), mu, 0.5 * (lo + hi))
    active = np.ones(m, dtype=bool)
    gap = lam[k] - lam[k + 1] if k + 1 < r else np.inf
    right, left = slice(0, k + 1), slice(k + 1, r)
    for _ in range(STEPS):
        idx = np.flatnonzero(active)
        if not idx.size:
            break
        u = mu[idx]
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            t = 1.0 / (lam[None, :] - u[:, None])
            zt = Z2[idx] * t
            psi, dpsi = zt[:, right].sum(axis=1), (zt[:, right] * t[:, right]).sum(axis=1)
            phi, dphi = zt[:, left].sum(axis=1), (zt[:, left] * t[:, left]).sum(axis=1)
            f = 1.0 - psi - phi
            # Each side of the root replaced by one pole with the same value and slope
            # (psi ≈ A + B/(λ_k − μ), phi ≈ C + D/(λ_{k+1} − μ)): the root of that model is
            # a quadratic's, and the iteration converges fast even next to the poles
            # (Bunch, Nielsen & Sorensen 1978, §3; the approach of LAPACK dlaed4).
            d1 = lam[k] - u
            B = dpsi * d1 * d1
            E = 1.0 - (psi - dpsi * d1)
            if k + 1 < r:
                d2 = lam[k + 1] - u
                D = dphi * d2 * d2
                E = E - (phi - dphi * d2)
                b = E * gap + B + D
                disc = np.sqrt(np.maximum(b * b - 4.0 * E * B * gap, 0.0))
                tau = 2.0 * B * gap / (b + disc)  # the root of Eτ² − bτ + B·gap next to λ_k
            else:
                tau = B / E
            new = lam[k] - tau
        ok = np.isfinite(f)
        go_right = f > 0  # f decreases: positive left of the root
        lo[idx] = np.where(ok & go_right, u, lo[idx])
        hi[idx] = np.where(ok & ~go_right, u, hi[idx])
        # u is the root when f is at rounding level (relative to the sizes of its terms) or
        # the model's step no longer moves it (before the bracket test: u is now an end).
        at_root = (f == 0) | (np.abs(f) <= 64 * EPS * (1.0 + np.abs(zt).sum(axis=1))) | (
            np.abs(new - u) <= 2 * EPS * np.abs(u))
        bad = ~np.isfinite(new) | (new <= lo[idx]) | (new >= hi[idx])
        new = np.where(bad, 0.5 * (lo[idx] + hi[idx]), new)
        new = np.where(at_root, u, new)
        mu[idx] = new
        # The model's error shrinks with the square of its step (it matches f's value and
        # slope): a step below SETTLED·μ leaves about SETTLED² of μ, past float64.
        settled = ~bad & (np.abs(new - u) <= SETTLED * np.abs(u))
        done = at_root | settled | (hi[idx] - lo[idx] <= 4 * EPS * hi[idx])
        active[idx[done]] = False
    return mu


def _top(values: np.ndarray, full: float) -> list[dict]:
    """The rows whose removal moves the measure most (relative change), largest first."""
    change = np.abs(values - full) / full if full > 0 else np.zeros_like(values)
    order = np.argsort(-change, kind="stable")[:TOP]
    return [{"row": int(i), "without": float(values[i]), "change": float(change[i])}
            for i in order]


def _factor(X: np.ndarray, B: np.ndarray, sb: np.ndarray,
            sw: np.ndarray | None) -> np.ndarray:
    """(r, r) triangular factor of the (weighted) X[:, B]/sb by blocks (same singular
    values and V)."""
    from rankscope.core.reduce import reduce_blocks

    def blocks():
        for s in range(0, X.shape[0], BLOCK):
            b = X[s : s + BLOCK][:, B] / sb
            if sw is not None:
                b *= sw[s : s + BLOCK, None]
            yield np.asfortranarray(b)

    return reduce_blocks(blocks(), len(B))


#: Rows up to which every row's value is kept (`without`); beyond, only the top rows, so
#: the JSON stays small.
ALL_ROWS = 20_000


def leave_one_out(X: np.ndarray, scales: np.ndarray, basis: list[int],
                  dimensions: list[int], factor: np.ndarray | None = None,
                  row_weights: np.ndarray | None = None) -> dict:
    """Condition number of the basis design, and the condition index of each given
    dimension, with each row left out in turn: O(n·r²) for all n rows.

    X: (n, p) the rows used (weights folded in by the caller). scales: (p,) full-data column
    lengths, kept fixed so that only the row's own contribution moves (the measure is that
    of the design with the full data's equilibration). basis: the r basis columns.
    dimensions: positions k (descending singular values of the basis design, 0-based) of
    the flagged near-dependencies.
    factor: (m, p) any matrix with the Gram matrix of X/scales (the core's R_x), which
    spares a pass over the rows. row_weights: (n,) sqrt of the row weights, or None.
    Returns {"condition_number": {"full", "without" (n,) or None past ALL_ROWS, "top"},
    "dimensions": [{"k", "index", "without", "top"}]} with plain lists; rows are 0-based
    positions among the rows used.
    """
    B = np.asarray(basis)
    sb = scales[B]
    R = factor[:, B] if factor is not None else _factor(X, B, sb, row_weights)
    _, d, Vt = np.linalg.svd(R, full_matrices=False)
    lam = d * d
    r = len(basis)
    n = X.shape[0]
    want = sorted({0, r - 1, *dimensions})
    mu = {k: np.empty(n) for k in want}
    for s0 in range(0, n, BLOCK):
        rows = X[s0 : s0 + BLOCK][:, B] / sb
        if row_weights is not None:
            rows *= row_weights[s0 : s0 + BLOCK, None]
        Z2 = (rows @ Vt.T) ** 2
        for k in want:
            mu[k][s0 : s0 + BLOCK] = _root(lam, Z2, k)
    mu_max, mu_min = mu[0], mu[r - 1]
    with np.errstate(divide="ignore"):
        kappa = np.sqrt(mu_max / mu_min)
    full = float(d[0] / d[-1]) if d[-1] > 0 else float("inf")
    keep_all = n <= ALL_ROWS
    out = {"condition_number": {"full": full, "without": kappa.tolist() if keep_all else None,
                                "top": _top(kappa, full)},
           "dimensions": []}
    for k in dimensions:
        with np.errstate(divide="ignore"):
            eta = np.sqrt(mu_max / mu[k])
        eta_full = float(d[0] / d[k])
        out["dimensions"].append({"k": int(k), "index": eta_full,
                                  "without": eta.tolist() if keep_all else None,
                                  "top": _top(eta, eta_full)})
    return out
