"""Replaying steps on a table: the step dispatcher and the two passes that build a Design.

Pure computation on in-memory tables; no reading or writing of files.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from rankscope.design.apply_columns import apply_single
from rankscope.design.apply_groups import apply_combine, apply_product
from rankscope.design.apply_kind import apply_kind
from rankscope.design.apply_roles import (
    apply_drop,
    apply_indicators,
    apply_intercept,
    apply_missing,
    apply_response,
    apply_restore,
)
from rankscope.design.assemble import Plan, assemble, keep_rows, make_plan
from rankscope.design.design import Design
from rankscope.design.names import quoted
from rankscope.design.steps import SINGLE_COLUMN
from rankscope.design.working import Col, WorkingColumns
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

Apply = Callable[[WorkingColumns, dict[str, Any]], list[Col]]

APPLY: dict[str, Apply] = {
    "response": apply_response,
    "intercept": apply_intercept,
    "drop": apply_drop,
    "restore": apply_restore,
    "indicators": apply_indicators,
    "missing": apply_missing,
    "kind": apply_kind,
    "product": apply_product,
    "combine": apply_combine,
    **{name: apply_single for name in SINGLE_COLUMN},
}


def run_steps(
    table: Table, steps: Sequence[dict[str, Any]], rows: np.ndarray, strict: bool
) -> WorkingColumns:
    """Apply the steps in order to the given rows; errors name the step that failed."""
    working = WorkingColumns.from_table(table, rows, strict)
    for position, step in enumerate(steps, start=1):
        try:
            # Overflow and 0/0 are caught by explicit checks that name the row; no warnings.
            with np.errstate(all="ignore"):
                working.made.append(APPLY[step["step"]](working, step))
        except InputError as e:
            where = f"recipe step {position} ({step['step']})"
            raise InputError(e.what, f"{where}, {e.where}" if e.where else where, e.todo) from e
    return working


@dataclass
class Trace:
    """A build with what the script writer needs: the final working and plan, the kept rows."""

    design: Design
    working: WorkingColumns
    plan: Plan
    kept: np.ndarray


def _deletion_note(total: int, used: int, dropped_by: dict[str, int]) -> str:
    counts = ", ".join(f"{quoted(c)} {k}" for c, k in dropped_by.items())
    several = " (a row missing several columns counts under the first in table order)"
    return (
        f"Deleted {total - used} of {total} rows with a missing value: {counts}"
        f"{several if len(dropped_by) > 1 else ''}."
    )


def trace_design(table: Table, steps: Sequence[dict[str, Any]]) -> Trace:
    """Build the design, computing every statistic on the rows the design keeps.

    Pass 1 runs on all rows to learn which table columns the design uses; rows missing any
    of them are deleted; pass 2 reruns the steps on the kept rows, so that, say, a centered
    column has mean 0 in X. Steps only propagate missing values, so pass 2 deletes nothing.
    """
    n = table.n_rows
    if n == 0:
        raise InputError("the table has no rows", table.source, "Check the file")
    missing = {str(c): table.missing(c) for c in table.columns}
    order = [str(c) for c in table.columns]
    working = run_steps(table, steps, np.arange(n), strict=True)
    plan = make_plan(working, missing, order)
    kept, dropped_by = keep_rows(plan, missing, n)
    used = int(kept.sum())
    notes: list[str] = []
    if used == 0:
        worst = max(dropped_by, key=dropped_by.__getitem__)
        raise InputError(
            "no rows are left after deleting rows with a missing value",
            table.source,
            f"Most are missing {quoted(worst)}; leave it out with "
            f'{{"step": "missing", "column": "{worst}", "policy": "drop_column"}}',
        )
    if used < n:
        working = run_steps(table, steps, np.flatnonzero(kept), strict=False)
        plan = make_plan(working, missing, order)
        notes.append(_deletion_note(n, used, dropped_by))
    matrix = assemble(working, plan)
    design = Design(
        X=matrix.X,
        columns=matrix.columns,
        y=matrix.y,
        response=plan.response.name if plan.response is not None else None,
        groups=matrix.groups,
        references=matrix.references,
        rows_total=n,
        rows_used=used,
        dropped_by=dropped_by,
        notes=notes + working.notes + matrix.notes,
    )
    return Trace(design, working, plan, kept)
