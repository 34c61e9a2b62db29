"""Equality of two diagnoses to at least 10 significant digits, field by field.

A checking helper only: it says nothing about which side is right.
"""

from __future__ import annotations

import numpy as np

from rankscope.core.diagnosis import Diagnosis

DIGITS = 1e-10  # at least 10 significant digits
EPS = float(np.finfo(np.float64).eps)


def kappa_rel(kappa: float | None) -> float:
    """Relative precision a condition number κ has at all: σ_min moves by up to eps·σ_max
    under rounding (Weyl; Golub & Van Loan 4th ed., Cor. 8.6.2), i.e. κ·eps relative; any
    two correct computations may differ by a small multiple of it."""
    return DIGITS if kappa is None else max(DIGITS, 50 * EPS * kappa)


def close(a, b, rel: float = DIGITS) -> bool:
    if a is None or b is None:
        return a is None and b is None
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    if a.shape != b.shape:
        return False
    scale = max(1.0, float(np.max(np.abs(b)))) if b.size else 1.0
    return bool(np.allclose(a, b, rtol=rel, atol=rel * scale))


def assert_same_gram(T_fast: np.ndarray, T_ref: np.ndarray) -> None:
    """TᵀT (the Gram matrix of [1, X, y]) agrees entry by entry, scaled to unit diagonal."""
    G_fast, G_ref = T_fast.T @ T_fast, T_ref.T @ T_ref
    d = np.sqrt(np.diag(G_ref))
    d[d == 0] = 1.0
    scaled = np.outer(d, d)
    assert np.allclose(G_fast / scaled, G_ref / scaled, rtol=0, atol=DIGITS)


def assert_same(fast: Diagnosis, ref: Diagnosis, units: dict[str, float]) -> None:
    """Rank, dependencies, condition numbers and indices, VIFs, fit: fast equals ref.

    units: per column, ||y|| / ||x_j||, the natural size of its coefficient: a coefficient
    (or standard error) that is zero to rounding, as in an exact fit, is compared to 10
    digits of that size rather than of itself.
    """
    assert fast.columns == ref.columns
    assert fast.n_rows == ref.n_rows
    assert fast.rank == ref.rank
    assert close(fast.singular_values["equilibrated"], ref.singular_values["equilibrated"])
    if ref.rank_note or fast.rank_note:
        # The core itself says the QR basis and the SVD disagree at the tolerance: a
        # remainder sits at rounding level next to it, so which column is deferred is decided
        # by rounding (here the rows' own rounding against the factor's); the basis and
        # everything built on it (relations, VIFs, fit) are then not comparable.
        return
    assert fast.rank_qr == ref.rank_qr
    assert fast.basis == ref.basis
    assert [d["column"] for d in fast.dependencies] == [d["column"] for d in ref.dependencies]
    for d_fast, d_ref in zip(fast.dependencies, ref.dependencies, strict=True):
        assert sorted(d_fast["combination"]) == sorted(d_ref["combination"])
    for key in ("raw", "equilibrated", "centered"):
        kappa = ref.condition_number[key]
        assert close(fast.condition_number[key], kappa, kappa_rel(kappa)), key
    indices = [np.inf if v is None else v for v in ref.condition_indices]
    fast_indices = [np.inf if v is None else v for v in fast.condition_indices]
    finite = [i for i, v in enumerate(indices) if np.isfinite(v) and v < 1e8]
    assert close([fast_indices[i] for i in finite], [indices[i] for i in finite])
    assert fast.vif.keys() == ref.vif.keys()
    for c, v in ref.vif.items():
        assert close(fast.vif[c], v), c
    for g, v in ref.gvif.items():
        assert close(fast.gvif[g]["gvif"], v["gvif"]), g
    assert (fast.fit is None) == (ref.fit is None)
    if ref.fit is not None:
        for c in ref.fit["coefficients"]:
            for key in ("coefficients", "std_errors"):
                a, b = fast.fit[key][c], ref.fit[key][c]
                assert (a is None) == (b is None), (key, c)
                if b is not None:
                    assert abs(a - b) <= DIGITS * (abs(b) + units[c]), (key, c)
        assert close(fast.fit["r_squared"], ref.fit["r_squared"])
