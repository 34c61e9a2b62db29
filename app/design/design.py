"""The Design: the numbers the numerical core needs, with names and groups.

Plain data; built by the recipe, consumed by rankscope.core.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

INTERCEPT = "(intercept)"


@dataclass
class Design:
    """A design matrix ready for the core.

    X: (n, p) float64, no missing values. columns: p names, INTERCEPT for the constant.
    y: (n,) float64 or None. response: its column name or None.
    groups: categorical column -> the indicator columns of X that encode it (for GVIF).
    references: categorical column -> its reference level (the one without a column);
        absent when every level has a column.
    rows_total / rows_used: rows in the table and rows kept after listwise deletion.
    dropped_by: column -> number of rows dropped because that column was missing.
    notes: plain sentences about what the recipe did.
    """

    X: np.ndarray
    columns: list[str]
    y: np.ndarray | None = None
    response: str | None = None
    groups: dict[str, list[str]] = field(default_factory=dict)
    references: dict[str, str] = field(default_factory=dict)
    rows_total: int = 0
    rows_used: int = 0
    dropped_by: dict[str, int] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    @property
    def intercept(self) -> bool:
        return INTERCEPT in self.columns
