"""Routes of a wide design's page: full tables a page at a time, each complete as CSV, and the
correlations block by block (the summary, and one block's own heatmap), fetched on request.

HTTP only: pages and figures come from rendering/paging.py and rendering/wide.py.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse, StreamingResponse

from rankscope.report.export import download_name
from rankscope.tables.errors import InputError
from rankscope.web.rendering import paging, wide
from rankscope.web.rendering.views import plain
from rankscope.web.routes.api import analyst_of, guarded
from rankscope.web.state import Session

router = APIRouter(prefix="/api")


def _diagnosis(request: Request, session_id: str) -> tuple[Session, dict[str, Any]]:
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    return session, analyst.current(session).diagnosis


@router.get("/s/{session_id}/tables/{name}")
def table(request: Request, session_id: str, name: str, offset: int = 0,
          limit: int = paging.PAGE_ROWS, sort: str | None = None, order: str | None = None,
          q: str = "") -> JSONResponse:
    """One page of a full table (vif, indices, pairs, fit), sorted and filtered here, with
    the session's revision it was made from."""
    session, d = _diagnosis(request, session_id)
    page = guarded(f"the {name} table", paging.table_page, d, name, offset, limit, sort,
                   order, q)
    return JSONResponse(plain({**page, "revision": session.revision}))


@router.get("/s/{session_id}/export/tables/{name}")
def table_download(request: Request, session_id: str, name: str) -> StreamingResponse:
    """A full table as a CSV attachment (see paging.DOWNLOADS)."""
    if name not in paging.DOWNLOADS:
        raise InputError(f"there is no table download called {name!r}", "download",
                         "Use one of: " + ", ".join(paging.DOWNLOADS))
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    # The indices table is complete in the download: a wide design's analysis leaves out
    # the proportions of its dimensions of low index until asked.
    d = (guarded("the full index table", analyst.complete, session) if name == "indices"
         else analyst.current(session).diagnosis)
    file = download_name(session.title or session.table.source, paging.DOWNLOADS[name][0])
    # The name is letters, digits, dots, dashes and underscores only (download_name).
    headers = {"Content-Disposition": f'attachment; filename="{file}"',
               "Cache-Control": "no-store"}
    return StreamingResponse(paging.table_csv(d, name), media_type="text/csv; charset=utf-8",
                             headers=headers)


def _structure(request: Request, session_id: str, method: str
               ) -> tuple[wide.Structure, str | None]:
    if method not in wide.METHODS:
        raise InputError(f"there is no correlation called {method!r}", "method",
                         "Use pearson or spearman")
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    note = None
    if method == "spearman":
        d, note = guarded("Spearman correlations", analyst.spearman, session)
    else:
        d = analyst.current(session).diagnosis
    s = guarded("grouping the columns", wide.structure, d, method)
    if s is None:
        raise InputError(f"there are no {method.capitalize()} correlations to show",
                         "correlations", note or "Two or more non-constant columns are needed")
    return s, note


@router.get("/s/{session_id}/blocks")
def block_summary(request: Request, session_id: str, method: str = "pearson"
                  ) -> JSONResponse:
    """The block-by-block summary heatmap and the blocks it numbers."""
    s, note = _structure(request, session_id, method)
    return JSONResponse(plain({"figure": wide.summary_figure(s),
                               "blocks": wide.block_choices(s), "note": note}))


@router.get("/s/{session_id}/blocks/{number}")
def block(request: Request, session_id: str, number: int, method: str = "pearson"
          ) -> JSONResponse:
    """One block's own heatmap, with its columns' names (number: as on the summary)."""
    s, _ = _structure(request, session_id, method)
    if not 1 <= number <= len(s.parts):
        raise InputError(f"there is no block {number}", "block",
                         f"Choose a block from 1 to {len(s.parts)}")
    cols = s.parts[number - 1].columns
    return JSONResponse(plain({"figure": wide.block_figure(s, number - 1), "number": number,
                               "columns": [s.names[c] for c in cols]}))
