"""Random tables for the edit-engine tests: numeric columns, a categorical, optional gaps.

Test data only; nothing here is compared against.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from rankscope.tables.table import Table

LEVELS = ("p", "q", "r", "s")


def random_table(seed: int, n: int, gaps: bool = False) -> Table:
    """Columns a..d (d close to a mix of a and b), g (categorical), on (boolean), y; m with
    gaps if asked."""
    rng = np.random.default_rng(seed)
    spread = rng.uniform(0.5, 20, size=4)
    shift = rng.uniform(-30, 30, size=4)
    X = rng.normal(size=(n, 4)) * spread + shift
    X[:, 3] = 0.6 * X[:, 0] - 0.3 * X[:, 1] + 0.2 * spread[3] * rng.normal(size=n)
    g = np.array(LEVELS)[np.arange(n) % len(LEVELS)]
    rng.shuffle(g)
    y = X @ rng.normal(size=4) + rng.normal(size=n)
    data: dict[str, object] = {c: X[:, i] for i, c in enumerate("abcd")}
    data["g"] = pd.Categorical(g)
    data["on"] = pd.array(rng.random(n) < 0.4, dtype="boolean")
    data["y"] = y
    kinds = {c: "numeric" for c in "abcdy"} | {"g": "categorical", "on": "boolean"}
    if gaps:
        m = rng.normal(size=n) * 3
        m[rng.choice(n, size=max(1, n // 10), replace=False)] = np.nan
        data["m"] = m
        kinds["m"] = "numeric"
    return Table(pd.DataFrame(data), kinds, "random.csv")
