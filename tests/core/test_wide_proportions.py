"""Wide designs' index tables: proportions of the shown dimensions only, from their own
singular vectors, against numpy.linalg.svd of the unit-length columns (Belsley, Kuh &
Welsch 1980, eqs. 3.10-3.12), in any column order and under column scaling."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rankscope.core import conditioning as cnd
from rankscope.core import diagnose

P = cnd.WIDE_DIMENSIONS + 10


def planted(seed: int) -> tuple[np.ndarray, list[str]]:
    """Random columns (an intercept first) with three near-dependencies of distinct
    strengths and one exact one."""
    rng = np.random.default_rng(seed)
    n = 3 * P
    X = rng.normal(size=(n, P))
    X[:, 0] = 1.0
    X[:, 5] = X[:, 6] + X[:, 7] + 1e-5 * rng.normal(size=n)
    X[:, 10] = 2.0 * X[:, 11] - X[:, 12] + 1e-3 * rng.normal(size=n)
    X[:, 20] = X[:, 21] + 3e-2 * rng.normal(size=n)
    X[:, 30] = X[:, 31] - X[:, 32]
    return X, [f"c{j:03d}" for j in range(P)]


def reference(X: np.ndarray, names: list[str], basis: list[str]
              ) -> tuple[np.ndarray, np.ndarray, list[int]]:
    """Indices (ascending) and proportions (rows: dimensions; columns: basis columns in
    the design's order) of the unit-length basis columns, from numpy's SVD."""
    B = [j for j, c in enumerate(names) if c in set(basis)]
    Z = X[:, B] / np.linalg.norm(X[:, B], axis=0)
    _, d, Vt = np.linalg.svd(Z, full_matrices=False)
    phi = Vt.T**2 / d**2
    return d[0] / d, (phi / phi.sum(axis=1, keepdims=True)).T, B


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 10_000), scale_seed=st.integers(0, 10_000))
def test_shown_dimensions_match_the_full_svd_in_any_order_and_scale(seed: int,
                                                                   scale_seed: int) -> None:
    X, names = planted(seed)
    rng = np.random.default_rng(scale_seed)
    order = rng.permutation(P)
    X, names = X[:, order] * 10.0 ** rng.uniform(-6, 6, P), [names[j] for j in order]
    d = diagnose(X, names)
    idx, props, B = reference(X, names, d.basis)
    k = len(B)
    assert d.rank == P - 1 and k == P - 1
    given_rows = [r for r in range(k) if d.variance_proportions[r] is not None]
    # the lean path was taken: a few rows, and every one of index 10 or more among them
    assert 3 <= len(given_rows) < k // 4
    assert all(r in given_rows for r in range(k) if idx[r] >= cnd.PROPORTION_INDEX)
    assert np.allclose(d.condition_indices[:k], idx, rtol=1e-8)
    for r in given_rows:
        got = [d.variance_proportions[r][names[j]] for j in B]
        assert np.allclose(got, props[r], atol=1e-8), r
    # the flagged near-dependencies are the reference's: index above 30, two or more
    # proportions above 0.5 (the common-practice marks)
    want = sorted(sorted(names[B[j]] for j in np.flatnonzero(props[r] > 0.5))
                  for r in range(k) if idx[r] > 30 and np.count_nonzero(props[r] > 0.5) >= 2)
    got_near = sorted(sorted(n["columns"]) for n in d.near_dependencies if not n["exact"])
    assert got_near == want


def test_every_proportion_on_request_and_below_the_wide_mark() -> None:
    X, names = planted(3)
    full = diagnose(X, names, all_proportions=True)
    assert all(row is not None for row in full.variance_proportions)
    idx, props, B = reference(X, names, full.basis)
    got = np.array([[row[names[j]] for j in B] for row in full.variance_proportions[:len(B)]])
    assert np.allclose(got, props, atol=1e-8)
    narrow = diagnose(X[:, :50], names[:50])
    assert all(row is not None for row in narrow.variance_proportions)
    assert narrow.singular_values["raw"] is not None


def test_the_subset_iteration_refuses_a_spectrum_without_a_gap() -> None:
    # Singular values evenly spaced: no gap near the wanted ones, so the caller must take
    # the full SVD (reference: the construction R = diag(d), whose SVD is known exactly).
    d = np.linspace(1.0, 0.5, P)
    assert cnd.shown_dimensions(d, 1.5) is None
    assert cnd.shown_dimensions(d, 10.0) == 0  # no index reaches 10: nothing to show
    assert cnd.smallest_right_vectors(np.diag(d), d, 5) is None
    # With a gap, the vectors are the unit vectors of the smallest entries.
    d2 = np.concatenate([np.linspace(1.0, 0.5, P - 2), [1e-4, 1e-6]])
    m = cnd.shown_dimensions(d2, 10.0)
    assert m == 2
    V = cnd.smallest_right_vectors(np.diag(d2), d2, m)
    assert V is not None
    assert np.allclose(np.abs(V), np.eye(P)[:, P - 2:], atol=1e-12)


def test_a_deferred_hint_changes_nothing_but_the_time(monkeypatch) -> None:
    """The hinted basis. SVD runs beside the rank decision's; right, wrong or absent, the
    diagnosis is the same to the last bit (the same LAPACK calls on the same arrays)."""
    from rankscope.core import diagnosis
    from rankscope.core.diagnosis import diagnose_factor
    from rankscope.core.factor import factorize

    X, names = planted(7)
    F = factorize(X, names)
    plain = diagnose_factor(F).to_dict()
    dependent = [r["column"] for r in plain["dependencies"]]
    right = diagnose_factor(F, deferred_hint=dependent)
    wrong = diagnose_factor(F, deferred_hint=["c031"])
    assert plain["rank"] == P - 1 and "c031" in plain["basis"]
    # Without a hint, the columns of the small pivots serve as one (here the right one).
    assert [names[j] for j in diagnosis._small_pivots(F, None)] == dependent
    right, wrong = right.to_dict(), wrong.to_dict()
    assert right == plain
    assert wrong == plain
    monkeypatch.setattr(diagnosis, "_guessed_basis", lambda *a: None)
    assert diagnose_factor(factorize(X, names)).to_dict() == plain  # no side SVD at all


def test_extreme_values_started_before_the_rank_change_nothing_but_the_time(monkeypatch
                                                                              ) -> None:
    """A wide design that is perhaps of full rank starts its raw and centred (σ_max, σ_min)
    on the side threads before the rank decision: full rank or not, the diagnosis is the
    one computed without them, to the last bit (the same calls on the same arrays)."""
    from rankscope.core import diagnosis
    from rankscope.core.factor import factorize

    rng = np.random.default_rng(3)
    X = rng.normal(size=(3 * P, P)) + rng.uniform(-20, 20, P)
    X[:, 0] = 1.0
    X[:, 9] = X[:, 8] + 1e-6 * rng.normal(size=3 * P)
    names = [f"c{j:03d}" for j in range(P)]
    deficient, _ = planted(11)
    assert not diagnosis._small_pivots(factorize(X, names), None)
    # An exact dependency leaves a zero pivot, which rules the side threads out: taken
    # anyway here, as a dependency the pivots do not show would take them.
    monkeypatch.setattr(diagnosis, "_small_pivots", lambda F, tol: [])
    started_ends = []
    real_ends = diagnosis._side_ends

    def spy(*a):
        started_ends.append(True)
        return real_ends(*a)

    monkeypatch.setattr(diagnosis, "_side_ends", spy)
    for M in (X, deficient):
        started = diagnosis.diagnose_factor(factorize(M, names)).to_dict()
        with monkeypatch.context() as m:
            m.setattr(diagnosis, "_side_ends", lambda *a: None)
            inline = diagnosis.diagnose_factor(factorize(M, names)).to_dict()
        assert started == inline
        assert started["rank"] == (P if M is X else P - 1)
    assert len(started_ends) == 2  # both designs took the side threads


@settings(max_examples=4, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 10_000))
def test_condition_numbers_of_a_wide_design_without_its_spectra(seed: int) -> None:
    """A wide design of full rank gets its raw and centred condition numbers from the
    extreme singular values alone (Lanczos); reference: numpy.linalg.svd of the raw columns
    and of the centred unit-length non-constant ones (BKW 1980 §3.3 for the scalings).
    The near pair is a difference of two columns, a direction a start of ones would miss."""
    rng = np.random.default_rng(seed)
    n = 3 * P
    X = rng.normal(size=(n, P)) * 10.0 ** rng.uniform(-3, 3, P) + rng.uniform(-50, 50, P)
    X[:, 0] = 1.0
    X[:, 9] = X[:, 8] + 1e-4 * rng.normal(size=n) * np.std(X[:, 8])
    names = [f"c{j:03d}" for j in range(P)]
    lean = diagnose(X, names)
    full = diagnose(X, names, spectra=True)
    assert lean.rank == P
    assert lean.singular_values["raw"] is None and lean.singular_values["centered"] is None
    assert full.singular_values["raw"] is not None
    s = np.linalg.svd(X, compute_uv=False)
    C = X[:, 1:] - X[:, 1:].mean(axis=0)
    C /= np.linalg.norm(C, axis=0)
    c = np.linalg.svd(C, compute_uv=False)
    # Weyl's inequality: rounding of size p·eps·σ_max moves σ_min by as much, so two
    # backward-stable routes agree on κ to about p·eps·κ (Golub & Van Loan §8.6.1).
    for got, spectrum, other in ((lean.condition_number["raw"], s, full.condition_number["raw"]),
                                 (lean.condition_number["centered"], c,
                                  full.condition_number["centered"])):
        kappa = spectrum[0] / spectrum[-1]
        rel = max(1e-10, 4 * P * np.finfo(float).eps * kappa)
        assert got == pytest.approx(kappa, rel=rel)
        assert got == pytest.approx(other, rel=rel)
