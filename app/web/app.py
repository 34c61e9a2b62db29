"""The FastAPI application: wiring of the session store, the workbench, access, the live feed,
the routes and the assets. Builds the app object only; serving lives in server.py.
"""

from __future__ import annotations

import secrets
import shutil
import tempfile
import weakref

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, Response
from fastapi.staticfiles import StaticFiles

from app.store import SessionNotFound, Store
from app.tables.errors import InputError
from app.web import api, assets, downloads, pages, sessions
from app.web.access import AccessGate
from app.web.live import Hub
from app.web.render import STATIC, render
from app.web.stored import StoredSessions
from app.web.workbench import UnknownSession, Workbench

GONE = ("There is no session at this address: it may have been deleted, or the link may be "
        "incomplete.")


def _wants_json(request: Request) -> bool:
    return request.url.path.startswith("/api/") or "application/json" in request.headers.get(
        "accept", "")


def _throwaway_store(app: FastAPI) -> Store:
    """A store in a new temporary folder, removed when the app is (tests, trials)."""
    folder = tempfile.mkdtemp(prefix="rankscope-")
    store = Store(folder)

    def remove(store: Store = store, folder: str = folder) -> None:
        store.close()
        shutil.rmtree(folder, ignore_errors=True)

    weakref.finalize(app, remove)
    return store


def create_app(store: Store | None = None, *, share: bool = False,
               public_url: str | None = None,
               bench: type[Workbench] = Workbench) -> FastAPI:
    """A new app on the given session store (default: a throwaway one).

    share: every request needs a token (the owner key, or a session's edit or view
    token); without it, requests without a token are the local owner's.
    public_url: the address others reach this server by, used in share links (default:
    the address of the request asking for them).
    app.state.owner_key opens the start page and every session when sharing.
    bench: the Workbench class (a ReducedBench when serving a dataset reduced on Dask).
    """
    app = FastAPI(title="rankscope", docs_url=None, redoc_url=None, openapi_url=None)
    db = store if store is not None else _throwaway_store(app)
    app.state.sessions = StoredSessions(db)
    app.state.bench = bench(app.state.sessions)
    app.state.live = Hub(app.state.sessions.stamp)
    app.state.share = share
    app.state.public_url = public_url
    app.state.owner_key = secrets.token_urlsafe(32)
    app.add_middleware(AccessGate, access=app.state.sessions.access, share=share,
                       owner_key=app.state.owner_key)
    app.mount("/static", StaticFiles(directory=str(STATIC)), name="static")
    app.include_router(assets.router)
    app.include_router(pages.router)
    app.include_router(api.router)
    app.include_router(sessions.router)
    app.include_router(downloads.router)

    @app.exception_handler(InputError)
    async def input_error(request: Request, exc: InputError) -> Response:
        # A user mistake: say what it was, with a 4xx, on a page or as JSON.
        if _wants_json(request):
            return JSONResponse({"error": exc.message}, status_code=400)
        return pages.message_page(exc.message, 400)

    @app.exception_handler(RequestValidationError)
    async def bad_request(request: Request, exc: RequestValidationError) -> Response:
        # FastAPI's own check of the request shape (e.g. an upload without a file).
        parts = ["/".join(str(x) for x in e.get("loc", ())) + ": " + e.get("msg", "")
                 for e in exc.errors()]
        text = InputError("the request is not what this address expects", "; ".join(parts),
                          "Use the page's controls").message
        return JSONResponse({"error": text}, status_code=400)

    async def no_session(request: Request, exc: Exception) -> Response:
        if _wants_json(request):
            return JSONResponse({"error": GONE}, status_code=404)
        return pages.message_page(GONE, 404)

    app.add_exception_handler(UnknownSession, no_session)
    app.add_exception_handler(SessionNotFound, no_session)
    return app


__all__ = ["create_app", "render"]
