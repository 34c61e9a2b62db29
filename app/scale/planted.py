"""Generated design matrices with planted collinearity, for the speed benchmark.

Test data only: random normal columns; no file is read or written.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from rankscope.design.design import INTERCEPT
from rankscope.tables.table import Table

#: What is planted (columns counted from 0; column 0 is the intercept).
PLANTED = "x2 = 2.5·x1 (a multiple), x6 = x3 + x4 + x5 (a sum of three), x8 ≈ x7 (a near pair)"


def planted(n: int, p: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """X (n, p) with an intercept column and the three planted relations, y and the names."""
    if p < 9:
        raise ValueError("the planted relations need at least 9 columns")
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p))
    X[:, 0] = 1.0
    X[:, 2] = 2.5 * X[:, 1]
    X[:, 6] = X[:, 3] + X[:, 4] + X[:, 5]
    X[:, 8] = X[:, 7] + 1e-4 * rng.standard_normal(n)
    y = X @ rng.standard_normal(p) + rng.standard_normal(n)
    return X, y, [INTERCEPT] + [f"x{j}" for j in range(1, p)]


def planted_table(n: int, p: int, seed: int = 0) -> Table:
    """The same matrix as a Table (the intercept left to the recipe) with a response y."""
    X, y, columns = planted(n, p, seed)
    frame = pd.DataFrame(X[:, 1:], columns=columns[1:], copy=False)
    frame["y"] = y
    return Table(frame, {c: "numeric" for c in frame.columns}, "planted")
