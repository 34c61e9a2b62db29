"""Remedy previews: a candidate design change evaluated on the factor without applying it.

A change is linear in the columns (hide some, add combinations, reorder the basis), so it is
made on the small factor (Workspace); no rows are read, no I/O, no recipe vocabulary here.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from rankscope.core.diagnosis import Diagnosis, diagnose_factor
from rankscope.core.factor import Factorization
from rankscope.core.workspace import CONSTANT, Workspace


@dataclass(frozen=True)
class Change:
    """A design change as linear column operations.

    hide: design columns taken out. add: (name, {column: coefficient}) new columns, each a
    combination of held columns (CONSTANT allowed), placed where the first hidden one was.
    keep: a new basis priority (None: unchanged).
    """

    hide: tuple[str, ...] = ()
    add: tuple[tuple[str, dict[str, float]], ...] = ()
    keep: tuple[str, ...] | None = None


@dataclass(frozen=True)
class Preview:
    """What the design would show after a change.

    rank, p: rank and number of columns after. largest_vif: (column, VIF or None for ∞),
    None when no column has a VIF. condition_number: raw / equilibrated / centered (None =
    ∞). se_ratio: standard error after over before, for columns estimated both times
    (None without a response). infinite_vif: columns with VIF ∞ after.
    """

    rank: int
    p: int
    largest_vif: tuple[str, float | None] | None
    largest_finite_vif: tuple[str, float] | None
    condition_number: dict[str, float | None]
    se_ratio: dict[str, float] | None
    infinite_vif: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {
            "rank": self.rank, "columns": self.p,
            "largest_vif": None if self.largest_vif is None else {
                "column": self.largest_vif[0], "vif": self.largest_vif[1]},
            "largest_finite_vif": None if self.largest_finite_vif is None else {
                "column": self.largest_finite_vif[0], "vif": self.largest_finite_vif[1]},
            "condition_number": dict(self.condition_number),
            "se_ratio": None if self.se_ratio is None else dict(self.se_ratio),
            "infinite_vif": list(self.infinite_vif),
        }


def changed_factor(F: Factorization, change: Change) -> Factorization:
    """The factor of the design after `change`, from F's factor alone (O(p³), no rows)."""
    ws = Workspace.from_factorization(F, response="y" if F.has_response else None)
    hidden = list(change.hide)
    for name, combo in change.add:
        ws = ws.add(name, combo, replaces=tuple(c for c in hidden if c in ws.visible))
        hidden = [c for c in hidden if c in ws.visible]
    for c in hidden:
        ws = ws.hide(c)
    return ws.factorization()


def largest_vif(d: Diagnosis) -> tuple[str, float | None] | None:
    """The column with the largest VIF (∞ first, then by value; ties by column order)."""
    if not d.vif:
        return None
    infinite = [c for c, v in d.vif.items() if v is None]
    if infinite:
        return infinite[0], None
    col = max(d.vif, key=lambda c: d.vif[c])  # type: ignore[arg-type,return-value]
    return col, d.vif[col]


def summarize(d: Diagnosis, before: Diagnosis | None) -> Preview:
    """The preview figures of a diagnosis, with standard-error ratios against `before`."""
    ratio = None
    if d.fit is not None and before is not None and before.fit is not None:
        a, b = before.fit["std_errors"], d.fit["std_errors"]
        ratio = {c: float(b[c] / a[c]) for c in d.columns
                 if a.get(c) and b.get(c) is not None and np.isfinite(a[c])}
    finite = {c: v for c, v in d.vif.items() if v is not None}
    top = max(finite, key=lambda c: finite[c]) if finite else None
    return Preview(
        rank=d.rank, p=len(d.columns), largest_vif=largest_vif(d),
        largest_finite_vif=None if top is None else (top, finite[top]),
        condition_number=dict(d.condition_number), se_ratio=ratio,
        infinite_vif=[c for c, v in d.vif.items() if v is None],
    )


def preview(F: Factorization, change: Change, before: Diagnosis, *,
            keep: list[str] | None = None, tol: float | None = None) -> Preview:
    """Rank, largest VIF, the three condition numbers and the standard-error ratios the
    design would have after `change`, computed on the factor alone.

    Equal to the analysis of the changed design (the same diagnose_factor on the same
    factor the rows would give, up to rounding): one code path, so they cannot disagree.
    """
    Fc = changed_factor(F, change)
    order = list(change.keep) if change.keep is not None else keep
    order = [c for c in (order or []) if c in Fc.columns] or None
    d = diagnose_factor(Fc, keep=order, tol=tol, rank_correlation=False, correlations=False)
    return summarize(d, before)


__all__ = ["CONSTANT", "Change", "Preview", "changed_factor", "preview", "summarize"]
