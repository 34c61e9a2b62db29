"""Remedy previews: a candidate design change evaluated on the factor without applying it.

A change is linear in the columns (hide some, add combinations, reorder the basis), so it is
made on the small factor (Workspace); no rows are read, no I/O, no recipe vocabulary here.
"""

from __future__ import annotations

import os
import threading
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np
from threadpoolctl import threadpool_limits

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


# The change is made on (p, p) matrices, where BLAS threads only add contention (as in
# diagnose_factor); one thread also gives the same numbers whichever thread runs a preview.
@threadpool_limits.wrap(limits=1, user_api="blas")
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


#: Columns from which previews run side by side, one per thread. Measured on the 2-core
#: machine: at 1,000 columns three previews took 0.63-0.77 s against 0.84-1.13 s in turn
#: (each is then mostly LAPACK on (p, p) matrices, which lets go of the GIL); at 250 and 500
#: columns no faster, the Python between the LAPACK calls taking turns on the GIL.
SIDE_BY_SIDE_COLUMNS = 800

_POOL: list[ThreadPoolExecutor] = []
_POOL_GUARD = threading.Lock()


def _forget_pool() -> None:
    _POOL.clear()  # a forked child has none of the parent's threads: it starts its own pool


os.register_at_fork(after_in_child=_forget_pool)


def _pool() -> ThreadPoolExecutor:
    """One pool for the process, a thread per core. A preview submits nothing to it, so no
    preview waits for a thread of its own pool."""
    with _POOL_GUARD:
        if not _POOL:
            _POOL.append(ThreadPoolExecutor(max(2, os.cpu_count() or 1),
                                            thread_name_prefix="rankscope-previews"))
    return _POOL[0]


def previews(F: Factorization, changes: list[Change], before: Diagnosis, *,
             keep: list[str] | None = None, tol: float | None = None) -> list[Preview]:
    """preview() of each change, in order, the same numbers either way: side by side on all
    cores for a design of SIDE_BY_SIDE_COLUMNS columns or more. BLAS is held to one thread
    for the whole batch (set once, before the threads start, so that no preview's own
    setting is undone by another's while it runs). The threads share only F's triangular
    factor, which each copies before changing it."""
    if len(changes) < 2 or F.p < SIDE_BY_SIDE_COLUMNS:
        return [preview(F, c, before, keep=keep, tol=tol) for c in changes]
    with threadpool_limits(limits=1, user_api="blas"):
        tasks = [_pool().submit(preview, F, c, before, keep=keep, tol=tol) for c in changes]
        return [t.result() for t in tasks]


__all__ = ["CONSTANT", "Change", "Preview", "changed_factor", "preview", "previews",
           "summarize"]
