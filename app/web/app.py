"""The FastAPI application: wiring of the session store, the analyst, access, the live feed,
the routes and the assets. Builds the app object only; serving lives in server.py.
"""

from __future__ import annotations

import secrets
import shutil
import tempfile
import weakref
from collections.abc import Collection
from urllib.parse import urlsplit

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, Response
from fastapi.staticfiles import StaticFiles
from starlette.exceptions import HTTPException as StarletteHTTPException

from rankscope.store import SessionNotFound, Store
from rankscope.tables.errors import InputError
from rankscope.web.access.bodies import safe_text
from rankscope.web.access.bodysize import BodyLimit
from rankscope.web.access.gate import AccessGate
from rankscope.web.access.guard import DEFAULT_HOSTS, Guard
from rankscope.web.access.lanes import RequestThreads
from rankscope.web.access.limits import Limits
from rankscope.web.analyst import Analyst, UnknownSession
from rankscope.web.budget import AnalysisTooSlow, Budget
from rankscope.web.faults import Faults
from rankscope.web.live.feed import Hub
from rankscope.web.rendering.render import STATIC, render
from rankscope.web.routes import (
    api,
    assets,
    downloads,
    formulas,
    insight,
    pages,
    sessions,
    tables,
)
from rankscope.web.stored import StoredSessions, session_check

GONE = ("There is no session at this address: it may have been deleted, or the link may be "
        "incomplete.")


#: Starlette's and FastAPI's terse reasons, in words that say what to do.
WORDED = {
    "There was an error parsing the body": (
        "The request body could not be read: it is not valid JSON (or not the form this "
        "address expects). Send a JSON object, as the page's controls do."),
    "Not Found": "There is nothing at this address. Check the link, or start from the "
                 "start page.",
    "Method Not Allowed": "This address does not take this kind of request (method). Use "
                          "the page's controls.",
    "Invalid multipart data.": (
        "The upload could not be read: it is not a well-formed form upload (multipart data). "
        "Upload with the page's button, or send the file as the form field \"file\"."),
}
#: The form parser (python-multipart) allows a part's header line 4,096 bytes; a longer one,
#: almost always a very long file name, is refused before any route sees the file.
LONG_PART_HEADER = (
    "The upload could not be read: a header of the form is longer than 4,096 bytes, which "
    "almost always means the file name is very long. Rename the file to at most 255 "
    "characters and upload it again.")


def _header_too_long(exc: BaseException) -> bool:
    """Whether the form parser refused a part's header for its length (the cause of its
    terse "Invalid multipart data.")."""
    seen: BaseException | None = exc
    for _ in range(6):
        if seen is None:
            return False
        if "maximum header size" in str(seen).lower():
            return True
        seen = seen.__cause__ or seen.__context__
    return False


def _wants_json(request: Request) -> bool:
    return request.url.path.startswith("/api/") or "application/json" in request.headers.get(
        "accept", "")


def _throwaway_store(app: FastAPI) -> Store:
    """A store in a new temporary folder, removed when the app is (tests, trials)."""
    folder = tempfile.mkdtemp(prefix="rankscope-")
    store = Store(folder, check=session_check)

    def remove(store: Store = store, folder: str = folder) -> None:
        store.close()
        shutil.rmtree(folder, ignore_errors=True)

    weakref.finalize(app, remove)
    return store


def create_app(store: Store | None = None, *, share: bool = False,
               public_url: str | None = None,
               analyst: type[Analyst] = Analyst,
               allowed_hosts: Collection[str] | None = None,
               limits: Limits | None = None) -> FastAPI:
    """A new app on the given session store (default: a throwaway one).

    share: every request needs a token (the owner key, or a session's edit or view
    token); without it, requests without a token are the local owner's.
    public_url: the address others reach this server by, used in share links (default:
    the address of the request asking for them).
    app.state.owner_key opens the start page and every session when sharing.
    analyst: the Analyst class (tests give a slower one); it serves every source alike.
    allowed_hosts: the Host header values answered ("name:port", or "name" for any port);
    default: the loopback names and Starlette's "testserver" on any port, and public_url's
    address. server.run sets app.state.allowed_hosts from the address it serves on.
    limits: upload size, table shape and analysis time (default: Limits()), kept in
    app.state.limits.
    """
    app = FastAPI(title="rankscope", docs_url=None, redoc_url=None, openapi_url=None)
    db = store if store is not None else _throwaway_store(app)
    app.state.sessions = StoredSessions(db)
    app.state.analyst = analyst(app.state.sessions)
    app.state.limits = limits = limits or Limits()
    app.state.analyst.budget = Budget(limits.analysis_seconds, limits.workers)
    app.state.live = Hub(app.state.sessions.stamp)
    app.state.share = share
    app.state.public_url = public_url
    app.state.owner_key = secrets.token_urlsafe(32)
    if allowed_hosts is None:
        allowed_hosts = DEFAULT_HOSTS | ({urlsplit(public_url).netloc.lower()} if public_url
                                         else set())
    app.state.allowed_hosts = frozenset(allowed_hosts)
    app.add_middleware(RequestThreads)  # a few requests at a time, in turn (see access/lanes.py)
    app.add_middleware(BodyLimit, limit=limits.max_upload_bytes,
                       limit_text=limits.upload_text())
    app.add_middleware(AccessGate, access=app.state.sessions.access, share=share,
                       owner_key=app.state.owner_key)
    # Added last, so it runs first: a request for another host never reaches a token check.
    # (The state, not the app, in the closure: no cycle keeps a throwaway store alive.)
    state = app.state
    # Inside the guard (its headers go on every answer), around everything else: a full
    # disk or a bug anywhere below is a worded 507/503/500, never a bare one.
    app.add_middleware(Faults, page=lambda text, status: pages.message_page(text, status).body)
    app.add_middleware(Guard, hosts=lambda: state.allowed_hosts)
    app.mount("/static", StaticFiles(directory=str(STATIC)), name="static")
    app.include_router(assets.router)
    app.include_router(pages.router)
    app.include_router(api.router)
    app.include_router(insight.router)
    app.include_router(sessions.router)
    app.include_router(formulas.router)
    app.include_router(downloads.router)
    app.include_router(tables.router)

    @app.exception_handler(InputError)
    async def input_error(request: Request, exc: InputError) -> Response:
        # A user mistake: say what it was, with a 4xx, on a page or as JSON.
        text = safe_text(exc.message)  # it may quote text that is not Unicode
        if _wants_json(request):
            return JSONResponse({"error": text}, status_code=400)
        return pages.message_page(text, 400)

    @app.exception_handler(RequestValidationError)
    async def bad_request(request: Request, exc: RequestValidationError) -> Response:
        # FastAPI's own check of the request shape (e.g. an upload without a file).
        parts = ["/".join(str(x) for x in e.get("loc", ())) + ": " + e.get("msg", "")
                 for e in exc.errors()]
        text = InputError("the request is not what this address expects", "; ".join(parts),
                          "Use the page's controls").message
        return JSONResponse({"error": safe_text(text)}, status_code=400)

    @app.exception_handler(StarletteHTTPException)
    async def http_error(request: Request, exc: StarletteHTTPException) -> Response:
        # Starlette's own refusals (unknown address, wrong method, a body that does not
        # parse) in the same {"error": ...} shape as every other refusal.
        text = WORDED.get(str(exc.detail), str(exc.detail))
        if _header_too_long(exc):
            text = LONG_PART_HEADER
        if _wants_json(request):
            return JSONResponse({"error": text}, status_code=exc.status_code,
                                headers=exc.headers)
        page = pages.message_page(text, exc.status_code)
        page.headers.update(exc.headers or {})
        return page

    @app.exception_handler(AnalysisTooSlow)
    async def too_slow(request: Request, exc: AnalysisTooSlow) -> Response:
        # Not the user's mistake and not a crash: the server is busy (RFC 9110 §15.6.4).
        retry = {"Retry-After": str(max(int(exc.seconds), 1))}
        if _wants_json(request):
            return JSONResponse({"error": exc.message}, status_code=503, headers=retry)
        page = pages.message_page(exc.message, 503)
        page.headers.update(retry)
        return page

    async def no_session(request: Request, exc: Exception) -> Response:
        if _wants_json(request):
            return JSONResponse({"error": GONE}, status_code=404)
        return pages.message_page(GONE, 404)

    app.add_exception_handler(UnknownSession, no_session)
    app.add_exception_handler(SessionNotFound, no_session)
    return app


__all__ = ["create_app", "render"]
