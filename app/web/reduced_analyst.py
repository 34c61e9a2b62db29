"""The analyst of an app serving a reduced dataset (Dask or streamed): its session analyses
the factor, other sessions the usual rows. Holds factors in memory; no linear algebra here.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pandas as pd

from app.store import replay_check
from app.store.history import Change as StoredChange
from app.store.history import Folded
from app.store.records import Created
from app.tables.errors import InputError
from app.tables.table import Table
from app.web.analyst import Analysis, Analyst, Settings
from app.web.reduced import NO_ROWS_NOTE, Reduced, reduced_analysis
from app.web.reduced_steps import FACTOR_COMBINE, FACTOR_STEPS, refused
from app.web.state import Session, SessionStore

#: Ends the file name of a reduced session, by engine, so a later run can tell them apart.
MARKS = {"dask": " (reduced on Dask)", "stream": " (reduced by streaming)"}
MARK = MARKS["dask"]
#: How to serve a reduced session again, by engine.
AGAIN = {"dask": "rankscope serve DIR --engine dask",
         "stream": "rankscope serve FILE --engine stream"}


def engine_of(table: Table) -> str | None:
    """The engine that reduced the row-less table the store keeps (None: not reduced)."""
    if table.n_rows:
        return None
    return next((e for e, mark in MARKS.items() if table.source.endswith(mark)), None)


def is_reduced(table: Table) -> bool:
    """True for the row-less table the store keeps for a reduced session."""
    return engine_of(table) is not None


def reduced_check(table: Table, before: Folded, change: StoredChange) -> None:
    """The store's check (see app.store.check): the recipe's replay for ordinary sessions;
    for a reduced one, only steps its factor can take (the analyst checks the rest on
    the factor before anything is saved)."""
    if not is_reduced(table):
        replay_check(table, before, change)
    elif change.kind == "step" and change.payload.get("step") not in FACTOR_STEPS:
        raise refused(f"recipe step {change.payload.get('step')!r}")
    elif change.kind == "step" and change.payload.get("step") == "combine" and (
            change.payload.get("method") not in FACTOR_COMBINE):
        raise refused(f"combine by {change.payload.get('method')!r}")


def _schema(reduced: Reduced) -> Table:
    """A table with the dataset's columns and kinds and no rows: what the store keeps."""
    frame = pd.DataFrame({c: pd.Series([], dtype="float64") for c in reduced.info.kinds})
    rows = reduced.info.layout.rows_total
    if reduced.engine == "stream":
        note = (f"Reduced by streaming {rows:,} rows of {reduced.folder} block by block; "
                "the rows stay there.")
    else:
        note = (f"Reduced on Dask from {rows:,} rows in {reduced.files} Parquet file(s) in "
                f"{reduced.folder}; the rows stay there.")
    name = Path(reduced.folder).name + MARKS[reduced.engine]
    return Table(frame, dict(reduced.info.kinds), name, [note])


class ReducedAnalyst(Analyst):
    """A Analyst that also holds sessions made from a reduced factor (start_reduced)."""

    def __init__(self, store: SessionStore, cache_size: int = 12) -> None:
        super().__init__(store, cache_size)
        self._reduced: dict[str, Reduced] = {}

    def start_reduced(self, reduced: Reduced) -> tuple[Session, Created]:
        """A new session on a reduced dataset; its design is the one the reduction built."""
        table = _schema(reduced)
        manifest = {f"{reduced.engine}_dataset": str(Path(reduced.folder).resolve()),
                    "rows": reduced.info.layout.rows_total, "columns": reduced.F.columns,
                    "response": reduced.info.response}
        data = json.dumps(manifest, sort_keys=True).encode()
        session, made = self.store.create(data, table.source, table)
        self._reduced[session.session_id] = reduced
        return session, made

    def reduced_of(self, session: Session) -> Reduced | None:
        """The factor of a reduced session; an InputError when it was reduced in an
        earlier run (only the dataset's schema was kept)."""
        held = self._reduced.get(session.session_id)
        engine = engine_of(session.table) if held is None else None
        if engine is not None:
            raise InputError("this session was reduced in an earlier run; its factor is not "
                             "kept", session.table.source,
                             f"Serve the dataset again with {AGAIN[engine]}")
        return held

    def _analyse(self, session: Session, settings: Settings) -> Analysis:
        held = self.reduced_of(session)
        if held is None:
            return super()._analyse(session, settings)
        return reduced_analysis(held, settings)

    def with_rows(self, session: Session) -> Analysis:
        if self.reduced_of(session) is None:
            return super().with_rows(session)
        return self.current(session)  # the report lists what the factor gives

    def spearman(self, session: Session) -> tuple[dict[str, Any], str | None]:
        if self.reduced_of(session) is None:
            return super().spearman(session)
        return self.current(session).diagnosis, NO_ROWS_NOTE

    def needs_rows(self, session: Session, what: str) -> None:
        if self.reduced_of(session) is not None:
            raise refused(what)
