"""The workbench of an app serving a dataset reduced on Dask: its session analyses the factor,
other sessions go through the usual rows. Holds factors in memory; no linear algebra here.
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
from app.web.reduced import FACTOR_STEPS, NO_ROWS_NOTE, Reduced, reduced_analysis, refused
from app.web.state import Session, SessionStore
from app.web.workbench import Analysis, Settings, Workbench

#: Ends the file name of a reduced session, so a later run can tell its sessions apart.
MARK = " (reduced on Dask)"


def is_reduced(table: Table) -> bool:
    """True for the row-less table the store keeps for a reduced session."""
    return table.n_rows == 0 and table.source.endswith(MARK)


def reduced_check(table: Table, before: Folded, change: StoredChange) -> None:
    """The store's check (see app.store.check): the recipe's replay for ordinary sessions;
    for a reduced one, only steps its factor can take (the workbench checks the rest on
    the factor before anything is saved)."""
    if not is_reduced(table):
        replay_check(table, before, change)
    elif change.kind == "step" and change.payload.get("step") not in FACTOR_STEPS:
        raise refused(f"recipe step {change.payload.get('step')!r}")


def _schema(reduced: Reduced) -> Table:
    """A table with the dataset's columns and kinds and no rows: what the store keeps."""
    frame = pd.DataFrame({c: pd.Series([], dtype="float64") for c in reduced.info.kinds})
    rows = reduced.info.layout.rows_total
    note = (f"Reduced on Dask from {rows:,} rows in {reduced.files} Parquet file(s) in "
            f"{reduced.folder}; the rows stay there.")
    return Table(frame, dict(reduced.info.kinds), Path(reduced.folder).name + MARK, [note])


class ReducedBench(Workbench):
    """A Workbench that also holds sessions made from a reduced factor (start_reduced)."""

    def __init__(self, store: SessionStore, cache_size: int = 12) -> None:
        super().__init__(store, cache_size)
        self._reduced: dict[str, Reduced] = {}

    def start_reduced(self, reduced: Reduced) -> tuple[Session, Created]:
        """A new session on a reduced dataset; its design is the one the reduction built."""
        table = _schema(reduced)
        manifest = {"dask_dataset": str(Path(reduced.folder).resolve()),
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
        if held is None and is_reduced(session.table):
            raise InputError("this session was reduced on Dask in an earlier run; its factor "
                             "is not kept", session.table.source,
                             "Serve the dataset again with rankscope serve DIR --engine dask")
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
