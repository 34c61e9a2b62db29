"""Shared helpers for the exact battery and the rank properties: column orders, reading a
Diagnosis, and numpy's rank rule on the unit-length X (an outside reference)."""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable

import numpy as np
import pytest

from rankscope.core import Diagnosis, diagnose
from rankscope.core import diagnosis as diagnosis_module

INT = "(intercept)"
EPS = float(np.finfo(np.float64).eps)


@pytest.fixture(scope="module", params=["full SVD", "values first"])
def rank_path(request: pytest.FixtureRequest):
    """Runs a module twice: the narrow designs' rank decision (one full SVD) and the wide
    designs' (singular values without vectors, null space by inverse iteration, index table
    from the basis factor), which the battery's small designs would not reach otherwise."""
    old = diagnosis_module.VALUES_FIRST_COLUMNS
    if request.param == "values first":
        diagnosis_module.VALUES_FIRST_COLUMNS = 0
    yield request.param
    diagnosis_module.VALUES_FIRST_COLUMNS = old


def orders(names: list[str], *, intercept_too: bool, limit: int, seed: int) -> list[list[str]]:
    """Column orders to try: every permutation of the non-intercept columns (intercept
    first), or of all columns when intercept_too; a seeded sample of `limit` (always with
    the given order and its reverse) when there are more."""
    fixed = [] if intercept_too else [c for c in names if c == INT]
    rest = [c for c in names if c not in fixed]
    if math.factorial(len(rest)) <= limit:
        return [fixed + list(p) for p in itertools.permutations(rest)]
    rng = np.random.default_rng(seed)
    out = [rest, rest[::-1]]
    while len(out) < limit:
        p = [rest[i] for i in rng.permutation(len(rest))]
        if p not in out:
            out.append(p)
    return [fixed + p for p in out]


def run(cols: dict[str, np.ndarray], order: list[str], y: np.ndarray | None,
        **kw: object) -> Diagnosis:
    """diagnose() on the columns in the given order."""
    X = np.column_stack([cols[c] for c in order])
    return diagnose(X, list(order), y, response="y", **kw)  # type: ignore[arg-type]


def over_orders(all_orders: list[list[str]], check: Callable[[list[str]], None]) -> None:
    """Run check on every order; fail once, saying how many orders failed and how."""
    failures: list[str] = []
    for o in all_orders:
        try:
            check(o)
        except Exception as e:  # collected and reported below
            failures.append(f"order {o}: {type(e).__name__}: {e}")
    assert not failures, (
        f"{len(failures)} of {len(all_orders)} column orders fail; first ones:\n"
        + "\n".join(failures[:3])
    )


def support(dep: dict) -> set[str]:
    """The columns a named dependency involves: its left side and its combination."""
    return {dep["column"], *dep["combination"]}


def involved(d: Diagnosis) -> set[str]:
    """Every column in the support of some named dependency."""
    out: set[str] = set()
    for dep in d.dependencies:
        out |= support(dep)
    return out


def unit_length(X: np.ndarray) -> np.ndarray:
    """X with each non-zero column scaled to unit length; the length is computed on the
    column divided by its largest entry so that 1e-200 entries do not underflow."""
    m = np.max(np.abs(X), axis=0)
    m = np.where(m > 0, m, 1.0)
    nrm = np.linalg.norm(X / m, axis=0) * m
    return X / np.where(nrm > 0, nrm, 1.0)


def numpy_rank(X: np.ndarray, tol: float | None = None) -> int:
    """numpy.linalg.matrix_rank of the unit-length X: σ > σ_max·max(n, p)·eps by default
    (outside reference for the rank rule)."""
    return int(np.linalg.matrix_rank(unit_length(X), tol=tol))


def rel_err(got: float | None, want: float) -> float:
    """|got − want| / |want|, infinite when got is missing."""
    if got is None:
        return math.inf
    return abs(got - want) / abs(want)


def check_rank_counts(d: Diagnosis) -> None:
    """Contract: rank = |basis| = p − (number of dependencies), one rank from SVD and QR."""
    assert d.rank == len(d.basis) == len(d.columns) - len(d.dependencies), (
        d.rank, d.basis, [x["equation"] for x in d.dependencies])
    assert d.rank_svd == d.rank_qr == d.rank, (d.rank_svd, d.rank_qr, d.rank)


def check_dependency_fields(d: Diagnosis) -> None:
    """Contract: each dependency carries its fields and is verified on the kept rows."""
    for dep in d.dependencies:
        for key in ("column", "combination", "shown", "equation", "residual",
                    "residual_rows", "verified"):
            assert key in dep, (key, dep)
        assert dep["verified"] is True, dep


def check_vif_none_iff_involved(d: Diagnosis) -> None:
    """Contract: a VIF is None (∞) exactly for the columns in some dependency's support."""
    inv = involved(d)
    wrong = {c: v for c, v in d.vif.items() if (v is None) != (c in inv)}
    assert not wrong, f"VIF None/finite disagrees with dependency support: {wrong}, {inv}"
