"""Serving a Parquet dataset reduced on Dask: one reduction, then an app whose first session
analyses that factor. Used by `rankscope serve DIR --engine dask`; serves nothing itself.
"""

from __future__ import annotations

import os
from pathlib import Path

from fastapi import FastAPI

from app.scale.dask_engine import dask_stream, pieces
from app.store.records import Created
from app.tables.errors import InputError
from app.web.reduced import Reduced
from app.web.reduced_app import create_reduced_app, start_reduced
from app.web.state import Session


def reduce_dataset(folder: str | os.PathLike, response: str | None,
                   scheduler: str | None = None) -> Reduced:
    """The dataset's design (default recipe, with `response` as y) reduced once on Dask
    (scheduler: a cluster's address; None starts a local cluster on this computer)."""
    if not response:
        raise InputError("serving a dataset reduced on Dask needs a response column", "",
                         "Name it with --response COL")
    F, info = dask_stream(folder, [{"step": "response", "column": response}], scheduler)
    files = len({p.path for p in pieces(Path(folder))})
    return Reduced(F, info, str(folder), files)


def create_dask_app(folder: str | os.PathLike, response: str | None,
                    scheduler: str | None = None, data_dir: str | os.PathLike | None = None,
                    *, share: bool = False, public_url: str | None = None
                    ) -> tuple[FastAPI, Session, Created]:
    """An app (see create_app) with sessions kept in data_dir (default ~/.rankscope) and
    one new session on the reduced dataset; the reduction runs first, so a bad folder or
    response raises InputError before anything is saved. The caller closes the store
    (app.state.sessions.db)."""
    reduced = reduce_dataset(folder, response, scheduler)
    app = create_reduced_app(data_dir, share=share, public_url=public_url)
    session, made = start_reduced(app, reduced)
    return app, session, made
