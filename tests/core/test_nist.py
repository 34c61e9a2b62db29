"""Certified values: NIST StRD linear least squares (tests/data/nist_strd_lls.json).

Each check names its dataset; the accuracy measure is the LRE (see nist.lre).
"""

from __future__ import annotations

import numpy as np
import pytest

from rankscope.core import diagnose
from tests.core.battery import rank_path  # noqa: F401 - a fixture
from tests.core.nist import design, lre, problems

pytestmark = pytest.mark.usefixtures("rank_path")

PROBS = problems()
#: Required digits for the estimates (issue 2); 9 for Wampler3.
BETA_DIGITS = {name: 11.0 for name in PROBS} | {"Wampler3": 9.0}
SD_DIGITS = 8.0


@pytest.mark.parametrize("name", list(PROBS))
def test_certified_estimates_and_sds(name: str) -> None:
    prob = PROBS[name]  # reference: NIST StRD, <name>
    X, cols, y = design(prob)
    d = diagnose(X, cols, y)
    assert d.full_rank and d.rank == len(cols), f"NIST StRD {name} is full rank"
    fit = d.fit
    for c, cert in zip(cols, prob["beta"], strict=True):
        assert lre(fit["coefficients"][c], cert) >= BETA_DIGITS[name], (name, c)
    for c, cert in zip(cols, prob["sd"], strict=True):
        assert lre(fit["std_errors"][c], cert) >= SD_DIGITS, (name, c)
    if "rsd" in prob:
        assert lre(fit["residual_std"], prob["rsd"]) >= SD_DIGITS  # NIST StRD <name>: rsd
    if "r2" in prob:
        assert lre(fit["r_squared"], prob["r2"]) >= SD_DIGITS  # NIST StRD <name>: R²


def lre_table() -> list[tuple[str, float, float]]:
    """(dataset, min LRE of estimates, min LRE of standard deviations): for docs/accuracy.md."""
    rows = []
    for name, prob in PROBS.items():
        X, cols, y = design(prob)
        fit = diagnose(X, cols, y).fit
        b = min(lre(fit["coefficients"][c], v) for c, v in zip(cols, prob["beta"], strict=True))
        s = min(lre(fit["std_errors"][c], v) for c, v in zip(cols, prob["sd"], strict=True))
        rows.append((name, b, s))
    return rows


def test_degree_ten_polynomial_is_fitted_full_rank() -> None:
    # Textbook identity: y = Σ_{k=0..10} x^k is fitted exactly by a degree-10 polynomial,
    # so every coefficient is 1. x = 0, 1, ..., 20 (the grid of the NIST Wampler problems,
    # taken to degree 10) makes the raw Vandermonde matrix very badly conditioned.
    x = np.arange(21.0)
    X = np.column_stack([x**k for k in range(11)])
    y = X.sum(axis=1)
    cols = ["(intercept)"] + [f"x{k}" for k in range(1, 11)]
    d = diagnose(X, cols, y)
    assert d.rank == 11 and d.full_rank, d.rank_note
    assert d.condition_number["raw"] > 1e13  # it is genuinely ill-conditioned
    for c in cols:
        assert lre(d.fit["coefficients"][c], 1.0) >= 6.0, c


if __name__ == "__main__":
    # python -m tests.core.test_nist : prints the LRE table recorded in docs/accuracy.md.
    print("| NIST StRD dataset | min LRE, estimates | min LRE, standard deviations |")
    print("|---|---|---|")
    for name, b, s in lre_table():
        print(f"| {name} | {b:.1f} | {s:.1f} |")
