"""Analyses of a session reduced on Dask or by streaming its file: the dataset's factor, a keep
list, a ridge penalty and column drops (hidden on the factor). Reads no rows; refuses the rest.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import Any

from app.core.diagnosis import diagnose_factor
from app.core.factor import Factorization
from app.core.workspace import Workspace
from app.design.names import quoted
from app.scale.stream import StreamInfo
from app.tables.errors import InputError
from app.web.workbench_types import Analysis, Settings, WorkingColumn

#: What a refused change says, word for word.
ROWS_NEEDED = ("this session was reduced to its factor and the rows stay in the data; changes "
               "that need the rows are not available")

#: What the page says about everything a factor without rows cannot give.
NO_ROWS_NOTE = ("Reduced without holding the rows: this analysis comes from the dataset's "
                "small factor, not from its rows, so there are no Spearman correlations and "
                "no residuals of the relations on the rows. Keep choices, the ridge penalty "
                "and dropping or restoring a column work; other changes need the rows and are "
                "not available.")

#: The design steps a reduced session can take on its factor alone.
FACTOR_STEPS = ("drop", "restore")


@dataclass(frozen=True)
class Reduced:
    """A dataset reduced once: its factor and what the stream learned about its design.

    folder: the dataset folder (or streamed file) as given. files: how many files it holds.
    engine: how it was reduced, "dask" or "stream".
    """

    F: Factorization
    info: StreamInfo
    folder: str
    files: int
    engine: str = "dask"

    def members(self, column: str) -> list[str]:
        """The design columns a source column shows as (its indicators, or itself)."""
        groups = self.info.groups
        if column in groups:
            return list(groups[column])
        return [column] if column in self.F.columns else []


def refused(what: str = "") -> InputError:
    return InputError(ROWS_NEEDED, what, "Start a session from a file to make this change")


def dropped_columns(reduced: Reduced, steps: list[dict[str, Any]]) -> list[str]:
    """Fold drop/restore steps into the source columns left out, in the order dropped.
    Raises InputError for any other step, or for one the factor cannot answer exactly."""
    out: list[str] = []
    for step in steps:
        kind, col = step.get("step"), step.get("column")
        if kind not in FACTOR_STEPS or not isinstance(col, str):
            raise refused(f"recipe step {kind!r}")
        if kind == "restore":
            if col not in out:
                raise InputError(f"{quoted(col)} is not dropped", "restore",
                                 "Pick one of the dropped columns")
            out.remove(col)
            continue
        if col in out or not reduced.members(col) or col == reduced.info.response:
            raise InputError(f"{quoted(col)} is not a predictor of this design", "drop",
                             "Pick one of the predictors")
        if reduced.info.layout.dropped_by.get(col, 0):
            # Its missing values removed rows; leaving it out would bring them back.
            raise refused(f"dropping {quoted(col)}")
        out.append(col)
    return out


def _factor(reduced: Reduced, dropped: list[str]) -> Factorization:
    if not dropped:
        return reduced.F
    ws = Workspace.from_factorization(reduced.F, reduced.info.response)
    for col in dropped:
        for name in reduced.members(col):
            ws = ws.hide(name)
    return ws.factorization()


def _working(reduced: Reduced, dropped: list[str]) -> list[WorkingColumn]:
    out = []
    for name, kind in reduced.info.kinds.items():
        if name == reduced.info.response:
            role = "response"
        elif not reduced.members(name):
            continue  # not in the design (a date, or never a predictor)
        else:
            role = "dropped" if name in dropped else "predictor"
        out.append(WorkingColumn(name, kind, role, None, None))
    return out


def reduced_analysis(reduced: Reduced, settings: Settings) -> Analysis:
    """The diagnosis of the reduced factor under the settings (keep, ridge, drops)."""
    started = time.perf_counter()
    recipe = list(settings.recipe)
    dropped = dropped_columns(reduced, recipe)
    F = _factor(reduced, dropped)
    gone = {c for col in dropped for c in reduced.members(col)}
    groups = {g: cols for g, cols in reduced.info.groups.items() if g not in dropped}
    diag = diagnose_factor(F, response=reduced.info.response, groups=groups,
                           keep=list(settings.keep) or None, ridge_penalty=settings.ridge)
    lay = reduced.info.layout
    return Analysis(
        settings=settings, columns=[c for c in lay.columns if c not in gone],
        response=lay.response, groups=groups, rows_total=lay.rows_total,
        rows_used=lay.rows_used, notes=[NO_ROWS_NOTE, *lay.notes], diagnosis=diag.to_dict(),
        working=_working(reduced, dropped), seconds=time.perf_counter() - started,
        path="factor",
    )
