"""Page routes: the start page, a table's overview, the inspection view and its fragments.

Renders core results through rendering/render.py; no linear algebra and no state changes here.
"""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from rankscope.tables import sniff
from rankscope.tables.errors import InputError
from rankscope.web.access.gate import can_edit, role_of
from rankscope.web.analyst import Analyst
from rankscope.web.rendering.overview import summarize
from rankscope.web.rendering.render import (
    compare_context,
    current_html,
    render,
    wide_session,
)

router = APIRouter()


def analyst_of(request: Request) -> Analyst:
    return request.app.state.analyst


def message_page(text: str, status: int) -> HTMLResponse:
    return HTMLResponse(render("message.html", message=text, status=status), status_code=status)


def _page(request: Request, name: str, **context: object) -> HTMLResponse:
    """A session page, with what the session bar needs (role, sharing mode)."""
    return HTMLResponse(render(name, role=role_of(request), can_edit=can_edit(request),
                               sharing=request.app.state.share, **context))


@router.get("/", response_class=HTMLResponse)
def upload_page(request: Request) -> HTMLResponse:
    exts = sorted(e for e in sniff.TEXT_EXTS | sniff.EXCEL_EXTS | sniff.PARQUET_EXTS if e)
    return HTMLResponse(render("upload.html", sessions=request.app.state.sessions.recent(),
                               accept=",".join([*exts, ".gz"]), supported=sniff.SUPPORTED,
                               data_dir=str(request.app.state.sessions.db.root)))


@router.get("/s/{session_id}", response_class=HTMLResponse)
def overview_page(request: Request, session_id: str) -> HTMLResponse:
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    analysis, problem = None, None
    try:
        analysis = analyst.current(session)
    except InputError as e:
        problem = e.message
    used_as = {w.name: w for w in analysis.working} if analysis else {}
    return _page(request, "overview.html", session=session,
                 summaries=summarize(session.table), analysis=analysis, used_as=used_as,
                 problem=problem)


@router.get("/s/{session_id}/inspect", response_class=HTMLResponse)
def inspect_page(request: Request, session_id: str) -> HTMLResponse:
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    return _page(request, "inspect.html", session=session,
                 workspace=current_html(analyst, session, can_edit(request)),
                 lazy_figures=wide_session(analyst, session))


@router.get("/s/{session_id}/workspace", response_class=HTMLResponse)
def workspace_fragment(request: Request, session_id: str) -> HTMLResponse:
    analyst = analyst_of(request)
    return HTMLResponse(current_html(analyst, analyst.session(session_id), can_edit(request)))


@router.get("/s/{session_id}/compare", response_class=HTMLResponse)
def compare_fragment(request: Request, session_id: str, a: str = "previous",
                     b: str = "current") -> HTMLResponse:
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    return HTMLResponse(render("compare.html", cmp=compare_context(analyst, session, a, b)))
