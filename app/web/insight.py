"""Views opened on request: the previewed remedies and the rows behind the conditioning.

Rebuilds the session's current design from its table (one pass over the rows) and asks the
core and the report code; no linear algebra here, no HTTP.
"""

from __future__ import annotations

from typing import Any

from rankscope.core.diagnosis import diagnose_factor
from rankscope.core.factor import factorize
from rankscope.design.replay import trace_design
from rankscope.report.remedies import Remedies, remedies_of
from rankscope.tables.table import Table
from rankscope.web.analysis import Settings

#: Values shown per listed row: the columns of the measure, at most this many.
ROW_VALUES = 8


def _current(table: Table, settings: Settings, influence: bool = False):
    trace = trace_design(table, list(settings.recipe))
    design = trace.design
    F = factorize(design.X, design.columns, design.y)
    keep = list(settings.keep) or None
    d = diagnose_factor(F, response=design.response, groups=design.groups, keep=keep,
                        rank_correlation=False, correlations=False, influence=influence)
    return trace, design, F, d, keep


def remedies(table: Table, settings: Settings) -> Remedies:
    """The remedies of the current design: those previewed, best first, and the rest."""
    _, design, F, d, keep = _current(table, settings)
    return remedies_of(d, F, design, list(settings.recipe), keep, None)


def influence(table: Table, settings: Settings) -> dict[str, Any] | None:
    """The leave-one-out measures of the current design, each listed row with its line in
    the table and its values in the measure's columns."""
    trace, design, _, d, _ = _current(table, settings, influence=True)
    out = d.influence
    if out is None:
        return None
    used = [int(i) for i in trace.kept.nonzero()[0]] if trace.kept is not None else None
    basis = [c for c in d.columns if c in set(d.basis)]

    def rows_of(top: list[dict], cols: list[str]) -> list[dict]:
        shown = cols[:ROW_VALUES]
        idx = [design.columns.index(c) for c in shown]
        for t in top:
            t["table_row"] = (used[t["row"]] if used is not None else t["row"]) + 1
            t["values"] = {c: float(design.X[t["row"], j]) for c, j in zip(shown, idx,
                                                                          strict=True)}
        return top

    rows_of(out["condition_number"]["top"], [c for c in basis if c != "(intercept)"])
    for dim in out["dimensions"]:
        rows_of(dim["top"], [c for c in dim["columns"] if c != "(intercept)"])
    return out
