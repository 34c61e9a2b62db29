"""Pearson and Spearman correlation matrices of the columns, and a clustered order.

Pearson comes from the centered factor; Spearman needs the rows (ranks).
"""

from __future__ import annotations

import numpy as np
from scipy.cluster.hierarchy import leaves_list, linkage, optimal_leaf_ordering
from scipy.spatial.distance import squareform
from scipy.stats import rankdata


def pearson_from_factor(Z: np.ndarray) -> np.ndarray:
    """ZᵀZ for unit-length centered columns Z: the Pearson correlation matrix.

    This product is for display only, never for a solve.
    """
    C = Z.T @ Z
    np.fill_diagonal(C, 1.0)
    return np.clip(C, -1.0, 1.0)


def spearman(X: np.ndarray) -> np.ndarray:
    """Spearman's rank correlation: Pearson correlation of the mid-ranks of each column."""
    Rk = np.apply_along_axis(rankdata, 0, X)
    Rk = Rk - Rk.mean(axis=0)
    nrm = np.linalg.norm(Rk, axis=0)
    Rk = Rk / np.where(nrm > 0, nrm, 1.0)
    C = Rk.T @ Rk
    np.fill_diagonal(C, 1.0)
    return np.clip(C, -1.0, 1.0)


def cluster_order(C: np.ndarray) -> list[int]:
    """Display order grouping strongly correlated columns: average-linkage hierarchical
    clustering on the distance 1 − |r|, leaves put in optimal order (Bar-Joseph et al.,
    Bioinformatics 17, 2001, as in scipy.cluster.hierarchy.optimal_leaf_ordering).
    """
    k = C.shape[0]
    if k < 3:
        return list(range(k))
    D = 1.0 - np.abs(C)
    D = (D + D.T) / 2
    np.fill_diagonal(D, 0.0)
    cond = squareform(np.clip(D, 0.0, None), checks=False)
    Z = linkage(cond, method="average")
    Z = optimal_leaf_ordering(Z, cond)
    return [int(i) for i in leaves_list(Z)]
