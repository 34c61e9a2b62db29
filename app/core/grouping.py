"""Groups of columns that move together, and the blocks of the clustered order a wide view shows.

Pure functions of a correlation matrix and its display order; no I/O, no display text.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.cluster.hierarchy import fcluster, linkage
from scipy.spatial.distance import squareform

#: Columns move together when the average |r| between the parts a cluster joins is at least
#: this. 0.5 is the "large" correlation of Cohen (Statistical Power Analysis, 1988, §3.2;
#: value from memory): a display choice, common practice, not a test.
GROUP_CORRELATION = 0.5

#: The most blocks a summary heatmap shows: about 40 rows stay readable with their labels
#: in a figure of 700 px (some 17 px a row, the height of one line of small text).
MOST_BLOCKS = 40

#: A run of columns tied to no other is cut into pieces of at most this many, so opening
#: one shows a heatmap whose names can be read.
RUN_LENGTH = 40

#: The most columns one block holds: its own heatmap (opened on request) then has at most
#: 150 × 150 cells, a few hundred kB of figure.
BLOCK_LIMIT = 150


def groups_together(C: np.ndarray, threshold: float = GROUP_CORRELATION) -> list[list[int]]:
    """Groups of two or more columns that move together: average-linkage clustering on the
    distance 1 − |r| (the linkage and distance of correlation.cluster_order; scipy.cluster.
    hierarchy), cut where the average |r| between the joined parts falls below threshold.

    C: (k, k) correlation matrix. Each group lists its columns in ascending index order;
    groups come strongest first (by the largest |r| inside them).
    """
    C = np.asarray(C, dtype=np.float64)
    k = C.shape[0]
    if k < 2:
        return []
    D = 1.0 - np.abs(C)
    D = (D + D.T) / 2
    np.fill_diagonal(D, 0.0)
    Z = linkage(squareform(np.clip(D, 0.0, None), checks=False), method="average")
    # A tiny margin so a pair at exactly |r| = threshold joins (rounding of 1 − |r|).
    labels = fcluster(Z, t=1.0 - threshold + 1e-12, criterion="distance")
    found: dict[int, list[int]] = {}
    for j, lab in enumerate(labels):
        found.setdefault(int(lab), []).append(j)
    groups = [g for g in found.values() if len(g) > 1]
    return sorted(groups, key=lambda g: (-strongest(C, g)[0][2] if len(g) > 1 else 0, g[0]))


def strongest(C: np.ndarray, members: list[int], limit: int = 1) -> list[tuple[int, int, float]]:
    """The `limit` pairs (i, j, r) inside `members` with the largest |r|, largest first."""
    idx = np.asarray(members, dtype=int)
    if idx.size < 2:
        return []
    sub = np.asarray(C, dtype=np.float64)[np.ix_(idx, idx)]
    iu, ju = np.triu_indices(idx.size, k=1)
    vals = sub[iu, ju]
    top = np.argsort(-np.abs(vals), kind="stable")[:limit]
    return [(int(idx[iu[t]]), int(idx[ju[t]]), float(vals[t])) for t in top]


@dataclass(frozen=True)
class Block:
    """A run of the display order: its columns (indices into C) and whether it is one group
    of columns that move together (else a run of columns tied to no other, or several small
    groups side by side when there are too many to show one by one)."""

    columns: list[int]
    group: bool


def _pieces(cols: list[int], size: int) -> list[list[int]]:
    return [cols[i:i + size] for i in range(0, len(cols), size)]


def blocks(order: list[int], groups: list[list[int]], most: int = MOST_BLOCKS,
           run: int = RUN_LENGTH, limit: int = BLOCK_LIMIT) -> list[Block]:
    """The display order cut into at most about `most` blocks: each group one block, where
    its first column comes in the order (its columns in their display order: the clustering
    that made the order puts them side by side), the columns between groups in runs of at
    most `run`; when that makes too many, neighbours are merged up to p / most columns each.
    No block holds more than `limit` columns."""
    rank = {c: i for i, c in enumerate(order)}
    label = {c: g for g, members in enumerate(groups) for c in members}
    natural: list[Block] = []
    pending: list[int] = []

    def close_run() -> None:
        if pending:
            natural.extend(Block(p, False) for p in _pieces(list(pending), run))
            pending.clear()

    done: set[int] = set()
    for c in order:
        g = label.get(c)
        if g is None:
            pending.append(c)
        elif g not in done:
            close_run()
            done.add(g)
            members = sorted(groups[g], key=lambda j: rank.get(j, len(order) + j))
            natural.extend(Block(p, True) for p in _pieces(members, limit))
    close_run()
    if len(natural) <= most:
        return natural
    target = min(max(math.ceil(len(order) / most), 1), limit)
    merged: list[Block] = []
    for b in natural:
        last = merged[-1] if merged else None
        if last is not None and len(last.columns) + len(b.columns) <= target:
            merged[-1] = Block(last.columns + b.columns, False)
        else:
            merged.append(b)
    return merged


def block_extremes(C: np.ndarray, parts: list[Block]) -> tuple[np.ndarray, list[list[tuple]]]:
    """For each pair of blocks, the correlation of largest size between a column of one and
    a column of the other (within a block: between two of its columns), and that pair.

    Returns (R, pairs): R[a, b] the signed r (NaN for a block of one column with itself),
    pairs[a][b] = (i, j) the columns behind it (or None).
    """
    C = np.asarray(C, dtype=np.float64)
    k = len(parts)
    R = np.full((k, k), np.nan)
    pairs: list[list[tuple]] = [[None] * k for _ in range(k)]
    for a in range(k):
        ia = np.asarray(parts[a].columns, dtype=int)
        for b in range(a, k):
            ib = np.asarray(parts[b].columns, dtype=int)
            sub = C[np.ix_(ia, ib)]
            if a == b:
                if ia.size < 2:
                    continue
                sub = sub.copy()
                np.fill_diagonal(sub, 0.0)
            at = np.unravel_index(int(np.argmax(np.abs(sub))), sub.shape)
            R[a, b] = R[b, a] = sub[at]
            pair = (int(ia[at[0]]), int(ib[at[1]]))
            pairs[a][b] = pair
            pairs[b][a] = (pair[1], pair[0])
    return R, pairs
