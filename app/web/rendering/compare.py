"""Side-by-side comparison of two fits: coefficient changes and standard-error factors.

Reads fit dicts from the core and lines them up for display; no fitting, no rendering.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class FitRef:
    """A fit as shown in the comparison: where it came from, and its parts."""

    ref: str  # "current", "previous" or "pin:N"
    label: str
    fit: dict[str, Any]
    rank: int
    columns: list[str]


@dataclass(frozen=True)
class CompareRow:
    """One column across fits A and B.

    status: both | only_a | only_b | aliased_a | aliased_b | aliased_both.
    se_factor: SE in B divided by SE in A (below 1: B's estimate is more precise).
    """

    column: str
    coef_a: float | None
    coef_b: float | None
    change: float | None
    se_a: float | None
    se_b: float | None
    se_factor: float | None
    status: str

    @property
    def se_trend(self) -> str:
        """same | better | worse, judged on the 3-digit factor that is shown."""
        f = self.se_factor
        if f is None or f"{f:.3g}" == "1":
            return "same"
        return "better" if f < 1.0 else "worse"

    @property
    def se_words(self) -> str:
        f = self.se_factor
        if f is None:
            return ""
        trend = self.se_trend
        if trend == "same":
            return "about the same (×1.00)"
        if trend == "better":
            return f"shrank to {f:.3g}× (÷{1 / f:.3g})" if f > 0 else "shrank to 0"
        return f"grew {f:.3g}×"


def _status(col: str, in_a: set[str], in_b: set[str], aliased_a: set[str],
            aliased_b: set[str]) -> str:
    if col not in in_a:
        return "only_b"
    if col not in in_b:
        return "only_a"
    al_a, al_b = col in aliased_a, col in aliased_b
    if al_a and al_b:
        return "aliased_both"
    if al_a:
        return "aliased_a"
    if al_b:
        return "aliased_b"
    return "both"


def compare_fits(a: FitRef, b: FitRef) -> list[CompareRow]:
    """Rows for every column of either fit: B's order first, then A's leftovers."""
    order = list(dict.fromkeys([*b.columns, *a.columns]))
    # Sets, not the lists: a wide design has a thousand columns, each looked up here.
    sets = (set(a.columns), set(b.columns), set(a.fit.get("aliased", [])),
            set(b.fit.get("aliased", [])))
    rows = []
    for col in order:
        ca = a.fit["coefficients"].get(col)
        cb = b.fit["coefficients"].get(col)
        sa = a.fit["std_errors"].get(col)
        sb = b.fit["std_errors"].get(col)
        change = cb - ca if (ca is not None and cb is not None) else None
        factor = sb / sa if (sa is not None and sb is not None and sa > 0) else None
        rows.append(CompareRow(col, ca, cb, change, sa, sb, factor, _status(col, *sets)))
    return rows


def summary_pairs(a: FitRef, b: FitRef) -> list[tuple[str, Any, Any]]:
    """Whole-fit numbers side by side: (label, value in A, value in B)."""
    fa, fb = a.fit, b.fit
    return [
        ("Rank", a.rank, b.rank),
        ("Columns", len(a.columns), len(b.columns)),
        ("Rows used", fa.get("n"), fb.get("n")),
        ("R²", fa.get("r_squared"), fb.get("r_squared")),
        ("Adjusted R²", fa.get("adj_r_squared"), fb.get("adj_r_squared")),
        ("Residual SD", fa.get("residual_std"), fb.get("residual_std")),
        ("Aliased columns", len(fa.get("aliased", [])), len(fb.get("aliased", []))),
    ]


def most_changed(rows: list[CompareRow], limit: int) -> list[CompareRow]:
    """The `limit` rows that changed most: a column in one fit only or aliased in one first,
    then by how far the standard error moved (the factor's distance from 1 on a log scale),
    then by the size of the coefficient's change; ties keep B's order."""
    def moved(r: CompareRow) -> tuple[int, float, float]:
        f = r.se_factor
        spread = abs(math.log(f)) if f is not None and f > 0 else 0.0
        return (0 if r.status not in ("both", "aliased_both") else 1, -spread,
                -abs(r.change or 0.0))

    return sorted(rows, key=moved)[:limit]
