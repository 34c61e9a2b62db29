"""Analyses of a session reduced on Dask or by streaming its file: the dataset's factor, a keep
list, a ridge penalty and the recipe steps of reduced_steps. Reads no rows; refuses the rest.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

from app.core.diagnosis import diagnose_factor
from app.core.factor import Factorization
from app.scale.stream import StreamInfo
from app.web.analysis import Analysis, Settings, WorkingColumn
from app.web.reduced_steps import Folded, fold

#: What the page says about everything a factor without rows cannot give.
NO_ROWS_NOTE = ("Reduced without holding the rows: this analysis comes from the dataset's "
                "small factor, not from its rows, so there are no Spearman correlations and "
                "no residuals of the relations on the rows. Keep choices, the ridge penalty, "
                "dropping or restoring a column, the intercept, and the linear steps center, "
                "standardize, unit_length, multiply and combine (sum, mean, difference) work; "
                "other changes need the rows and are not available.")


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


def _working(folded: Folded) -> list[WorkingColumn]:
    """The working columns the controls list: those the factor holds, in recipe order."""
    return [WorkingColumn(e.name, e.kind, e.role, None, None) for e in folded.ledger.entries
            if e.held is not None or e.level_ids]


def reduced_analysis(reduced: Reduced, settings: Settings) -> Analysis:
    """The diagnosis of the reduced factor under the settings (keep, ridge, recipe steps)."""
    started = time.perf_counter()
    folded = fold(reduced, list(settings.recipe))
    design = folded.layout
    diag = diagnose_factor(folded.F, response=design.response, groups=design.groups,
                           keep=list(settings.keep) or None, ridge_penalty=settings.ridge)
    lay = reduced.info.layout
    return Analysis(
        settings=settings, columns=list(design.columns), response=design.response,
        groups=design.groups, rows_total=lay.rows_total, rows_used=lay.rows_used,
        notes=[NO_ROWS_NOTE, *lay.notes], diagnosis=diag.to_dict(), working=_working(folded),
        seconds=time.perf_counter() - started, path="factor",
    )
