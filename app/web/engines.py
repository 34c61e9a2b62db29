"""Serving a dataset reduced to its factor (`serve --engine stream|dask`): the one app of
create_app with a session started on the reduced source. No routes or linear algebra here.
"""

from __future__ import annotations

import os
from collections.abc import Callable

from fastapi import FastAPI

from rankscope.scale.reduced import Reduced, reduce_on_dask
from rankscope.scale.reduction import Reduction
from rankscope.scale.stream import BLOCK_ROWS
from rankscope.store import Store, default_root
from rankscope.store.records import Created
from rankscope.web.app import create_app
from rankscope.web.routes import reducing
from rankscope.web.state import Session
from rankscope.web.stored import session_check

#: Called from the reduction's thread once its session exists.
OnDone = Callable[[Session, Created], None]


def open_store(data_dir: str | os.PathLike | None = None, table_memory: int | None = None
               ) -> Store:
    """The session store in data_dir (default ~/.rankscope), with the check every source
    shares (a session without rows takes only the steps its factor can); table_memory:
    bytes of tables it holds in memory (default: see rankscope.store.held)."""
    return Store(data_dir if data_dir is not None else default_root(), check=session_check,
                 table_memory=table_memory)


def create_dask_app(folder: str | os.PathLike, response: str | None,
                    scheduler: str | None = None, data_dir: str | os.PathLike | None = None,
                    *, share: bool = False, public_url: str | None = None
                    ) -> tuple[FastAPI, Session, Created]:
    """An app (see create_app) with sessions kept in data_dir (default ~/.rankscope) and
    one new session on the reduced dataset; the reduction runs first, so a bad folder or
    response raises InputError before anything is saved. The caller closes the store
    (app.state.sessions.db)."""
    reduced = reduce_on_dask(folder, response, scheduler)
    app = create_app(open_store(data_dir), share=share, public_url=public_url)
    session, made = app.state.analyst.start_reduced(reduced)
    return app, session, made


def create_stream_app(path: str | os.PathLike, response: str | None,
                      data_dir: str | os.PathLike | None = None, *, share: bool = False,
                      public_url: str | None = None, block_rows: int = BLOCK_ROWS,
                      on_done: OnDone | None = None) -> FastAPI:
    """An app (see create_app) with the progress routes and the file's reduction started
    (app.state.reduction). A missing file or response column raises InputError before the
    store is opened. The caller cancels the reduction, waits for it, then closes the store
    (app.state.sessions.db)."""
    reduction = Reduction(path, response, block_rows=block_rows)
    app = create_app(open_store(data_dir), share=share, public_url=public_url)
    app.state.reduction = reduction
    app.include_router(reducing.router)

    def begin(reduced: Reduced) -> str:
        session, made = app.state.analyst.start_reduced(reduced)
        if on_done is not None:
            on_done(session, made)
        return session.session_id

    reduction.start(begin)
    return app
