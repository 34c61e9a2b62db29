"""Groups of columns that move together and the blocks of a wide view, on random data with
planted groups. References: the planted construction, numpy.corrcoef, and a brute-force
search for the strongest pair between two blocks."""

from __future__ import annotations

import numpy as np
import pytest

from rankscope.core.correlation import cluster_order
from rankscope.core.grouping import (
    GROUP_CORRELATION,
    block_extremes,
    blocks,
    groups_together,
    strongest,
)


def planted(n: int = 400, noise: int = 60, seed: int = 5) -> tuple[np.ndarray, list[set[int]]]:
    """`noise` independent columns with three planted groups mixed in: each group is one
    shared signal plus a little noise of its own (pairwise r near 0.9 or more)."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, noise))
    planted_groups = []
    for size in (4, 3, 2):
        base = rng.normal(size=n)
        cols = [base + 0.25 * rng.normal(size=n) for _ in range(size)]
        start = X.shape[1]
        X = np.column_stack([X, *cols])
        planted_groups.append(set(range(start, start + size)))
    perm = rng.permutation(X.shape[1])
    X = X[:, perm]
    where = {old: new for new, old in enumerate(perm)}
    return X, [{where[c] for c in g} for g in planted_groups]


def test_planted_groups_are_recovered_strongest_first() -> None:
    X, groups = planted()
    C = np.corrcoef(X, rowvar=False)  # reference: numpy.corrcoef
    found = groups_together(C)
    assert [set(g) for g in found] == sorted(
        groups, key=lambda g: -max(abs(C[i, j]) for i in g for j in g if i < j))
    # Independent columns of 400 rows correlate near 0, far below the mark.
    assert GROUP_CORRELATION == 0.5


def test_strongest_pairs_match_a_full_search() -> None:
    X, groups = planted()
    C = np.corrcoef(X, rowvar=False)
    g = sorted(groups[0])
    pairs = strongest(C, g, limit=3)
    every = sorted(((i, j, C[i, j]) for i in g for j in g if i < j), key=lambda t: -abs(t[2]))
    assert [(i, j) for i, j, _ in pairs] == [(i, j) for i, j, _ in every[:3]]
    assert [r for *_, r in pairs] == pytest.approx([r for *_, r in every[:3]])


def test_blocks_cover_the_order_once_with_groups_whole() -> None:
    X, groups = planted(noise=200)
    C = np.corrcoef(X, rowvar=False)
    order = cluster_order(C)
    parts = blocks(order, groups_together(C), most=40, run=40)
    seen = [c for b in parts for c in b.columns]
    assert sorted(seen) == list(range(C.shape[0]))  # every column once
    for g in groups:
        holder = [b for b in parts if set(b.columns) & g]
        assert len(holder) == 1 and set(holder[0].columns) == g and holder[0].group
    assert all(len(b.columns) <= 40 for b in parts)


def test_too_many_blocks_are_merged_to_about_the_most() -> None:
    X, _ = planted(noise=300)
    C = np.corrcoef(X, rowvar=False)
    order = list(range(C.shape[0]))
    parts = blocks(order, [], most=10, run=5)
    assert sorted(c for b in parts for c in b.columns) == order
    assert len(parts) <= 2 * 10
    assert max(len(b.columns) for b in parts) <= -(-C.shape[0] // 10)


def test_block_extremes_are_the_strongest_pair_between_blocks() -> None:
    X, groups = planted()
    C = np.corrcoef(X, rowvar=False)
    parts = blocks(cluster_order(C), groups_together(C), most=12, run=12)
    R, pairs = block_extremes(C, parts)
    for a, pa in enumerate(parts):
        for b, pb in enumerate(parts):
            # reference: every pair between the blocks (within one: two distinct columns)
            cand = [(i, j) for i in pa.columns for j in pb.columns if i != j]
            if not cand:
                assert np.isnan(R[a, b]) and pairs[a][b] is None
                continue
            best = max(abs(C[i, j]) for i, j in cand)
            assert abs(R[a, b]) == pytest.approx(best)
            i, j = pairs[a][b]
            assert C[i, j] == pytest.approx(R[a, b])
