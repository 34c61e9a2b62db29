"""An app for a dataset reduced to its factor (Dask or streamed), shared by both engines: the
store and analyst that hold reduced sessions, and the start of one. Serves nothing itself.
"""

from __future__ import annotations

import os

from fastapi import FastAPI

from app.store import Store, default_root
from app.store.records import Created
from app.web.app import create_app
from app.web.reduced import Reduced
from app.web.reduced_analyst import ReducedAnalyst, reduced_check
from app.web.state import Session


def create_reduced_app(data_dir: str | os.PathLike | None = None, *, share: bool = False,
                       public_url: str | None = None) -> FastAPI:
    """An app (see create_app) with sessions kept in data_dir (default ~/.rankscope) whose
    analyst can hold reduced sessions. The caller closes the store (app.state.sessions.db)."""
    store = Store(data_dir if data_dir is not None else default_root(), check=reduced_check)
    return create_app(store, share=share, public_url=public_url, analyst=ReducedAnalyst)


def start_reduced(app: FastAPI, reduced: Reduced) -> tuple[Session, Created]:
    """A new session of the app on a ready factor and what its reduction learned."""
    analyst: ReducedAnalyst = app.state.analyst
    return analyst.start_reduced(reduced)
