"""Routes of a file being streamed into its factor: the progress page, its JSON status and the
cancel button. They read and signal app.state.reduction only; no linear algebra here.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse

from rankscope.web.rendering.render import render

router = APIRouter()


def _status(request: Request) -> dict[str, Any]:
    return request.app.state.reduction.status()


@router.get("/reducing", response_class=HTMLResponse)
def progress_page(request: Request) -> HTMLResponse:
    return HTMLResponse(render("reducing.html", status=_status(request)))


@router.get("/api/reducing")
def progress_json(request: Request) -> dict[str, Any]:
    return _status(request)


@router.post("/api/reducing/cancel")
def cancel_json(request: Request) -> dict[str, Any]:
    request.app.state.reduction.cancel()
    return _status(request)


@router.post("/reducing/cancel")
def cancel_form(request: Request) -> RedirectResponse:
    # The Cancel button without scripts: stop, then show the progress page again.
    request.app.state.reduction.cancel()
    return RedirectResponse("/reducing", status_code=303)
