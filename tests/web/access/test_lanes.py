"""The app serves its sync routes on a few worker threads: the limit is set on the event loop
that runs the app, for every app create_app builds.

Reference: anyio's own default thread limiter, read inside the loop.
"""

from __future__ import annotations

from anyio.to_thread import current_default_thread_limiter
from fastapi.testclient import TestClient
from starlette.applications import Starlette
from starlette.requests import Request
from starlette.responses import JSONResponse
from starlette.routing import Route

from rankscope.web.access.lanes import REQUEST_THREADS, RequestThreads
from rankscope.web.app import create_app


async def tokens(request: Request) -> JSONResponse:
    return JSONResponse({"tokens": current_default_thread_limiter().total_tokens})


def test_the_loop_serving_requests_has_the_set_number_of_threads() -> None:
    app = RequestThreads(Starlette(routes=[Route("/", tokens)]), threads=3)
    with TestClient(app) as client:
        assert client.get("/").json() == {"tokens": 3}


def test_create_app_uses_request_threads() -> None:
    app = create_app()
    assert any(m.cls is RequestThreads for m in app.user_middleware)
    with TestClient(app, base_url="http://127.0.0.1") as client:
        assert client.get("/static/rankscope.css").status_code == 200
    # Fewer than anyio's default of 40, which is what the middleware is for.
    assert 2 <= REQUEST_THREADS < 40
