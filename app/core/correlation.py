"""Pearson and Spearman correlation matrices of the columns, and a clustered order.

Pearson comes from the centered factor; Spearman needs the rows (ranks). scipy.stats and
scipy.cluster load only when Spearman or the order is asked for (a second of a small check).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

#: The extras a caller asks for by name (`check --with`, `inspect(extras=...)`): Spearman's
#: rank correlations (ranks every row), the clustered display order of the columns, and
#: for a wide design every dimension's proportions and the raw and centred spectra
#: (rankscope.core.diagnosis.diagnose_factor: all_proportions, spectra).
EXTRAS = ("spearman", "order", "proportions", "spectra")


def pearson_from_factor(Z: np.ndarray) -> np.ndarray:
    """ZᵀZ for unit-length centered columns Z: the Pearson correlation matrix.

    This product is for display only, never for a solve.
    """
    C = Z.T @ Z
    np.fill_diagonal(C, 1.0)
    return np.clip(C, -1.0, 1.0)


def spearman(X: np.ndarray) -> np.ndarray:
    """Spearman's rank correlation: Pearson correlation of the mid-ranks of each column."""
    from scipy.stats import rankdata

    Rk = rankdata(X, axis=0)  # mid-ranks per column, as scipy.stats.spearmanr ranks
    Rk = Rk - Rk.mean(axis=0)
    nrm = np.linalg.norm(Rk, axis=0)
    Rk = Rk / np.where(nrm > 0, nrm, 1.0)
    C = Rk.T @ Rk
    np.fill_diagonal(C, 1.0)
    return np.clip(C, -1.0, 1.0)


#: Digits the correlations are rounded to before ordering: the order is a display choice,
#: and a design change that leaves the correlations alone (centering, a unit change) then
#: finds the order already made instead of clustering again.
ORDER_DIGITS = 10
#: Most columns whose leaves are put in optimal order. Optimal leaf ordering costs O(k³)
#: (Bar-Joseph et al. 2001; measured 2.8 s at 1,000 columns and 80 s at 2,000 on one core),
#: the average-linkage tree itself O(k²) (nearest-neighbour chain, Müllner, arXiv:1109.2378,
#: 2011): above this many columns the tree's own leaf order is shown, which keeps every
#: cluster contiguous all the same.
OPTIMAL_ORDER_LIMIT = 300


def cluster_order(C: np.ndarray) -> list[int]:
    """Display order grouping strongly correlated columns: average-linkage hierarchical
    clustering on the distance 1 − |r|, leaves put in optimal order (Bar-Joseph et al.,
    Bioinformatics 17, 2001, as in scipy.cluster.hierarchy.optimal_leaf_ordering) for at
    most OPTIMAL_ORDER_LIMIT columns, in the tree's own order above.

    C: (k, k) correlation matrix, rounded to ORDER_DIGITS decimals first.
    """
    C = np.round(np.asarray(C, dtype=np.float64), ORDER_DIGITS)
    return list(_order(C.shape[0], C.tobytes()))


@lru_cache(maxsize=32)
def _order(k: int, data: bytes) -> tuple[int, ...]:
    if k < 3:
        return tuple(range(k))
    from scipy.cluster.hierarchy import leaves_list, linkage, optimal_leaf_ordering
    from scipy.spatial.distance import squareform

    C = np.frombuffer(data, dtype=np.float64).reshape(k, k)
    D = 1.0 - np.abs(C)
    D = (D + D.T) / 2
    np.fill_diagonal(D, 0.0)
    cond = squareform(np.clip(D, 0.0, None), checks=False)
    Z = linkage(cond, method="average")
    if k <= OPTIMAL_ORDER_LIMIT:
        Z = optimal_leaf_ordering(Z, cond)
    return tuple(int(i) for i in leaves_list(Z))
