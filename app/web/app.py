"""The FastAPI application: wiring of the store, the workbench, the routes and the assets.

Builds the app object only; routes live in pages.py and api.py, serving in server.py.
"""

from __future__ import annotations

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, Response
from fastapi.staticfiles import StaticFiles

from app.tables.errors import InputError
from app.web import api, assets, pages
from app.web.render import STATIC, render
from app.web.state import MemoryStore, SessionStore
from app.web.workbench import UnknownSession, Workbench


def _wants_json(request: Request) -> bool:
    return request.url.path.startswith("/api/") or "application/json" in request.headers.get(
        "accept", "")


def create_app(store: SessionStore | None = None) -> FastAPI:
    """A new app with its own sessions (in memory unless a store is given)."""
    app = FastAPI(title="rankscope", docs_url=None, redoc_url=None, openapi_url=None)
    app.state.bench = Workbench(store or MemoryStore())
    app.mount("/static", StaticFiles(directory=str(STATIC)), name="static")
    app.include_router(assets.router)
    app.include_router(pages.router)
    app.include_router(api.router)

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

    @app.exception_handler(UnknownSession)
    async def unknown_session(request: Request, exc: UnknownSession) -> Response:
        text = ("This inspection is not open on the server (it ends when the server stops). "
                "Upload the file again.")
        if _wants_json(request):
            return JSONResponse({"error": text}, status_code=404)
        return pages.message_page(text, 404)

    return app


__all__ = ["create_app", "render"]
