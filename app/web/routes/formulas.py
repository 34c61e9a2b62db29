"""A session started from a formula: the formula's columns become a new session's table and
its response and intercept its first changes; the route behind the columns page's formula box.
HTTP and storing only: app/design/formula.py builds the columns, the Analyst analyses.
"""

from __future__ import annotations

import io
from typing import Annotated, Any

import pyarrow as pa
import pyarrow.parquet as pq
from fastapi import APIRouter, Body, Request
from fastapi.responses import JSONResponse

from rankscope.store.records import Created
from rankscope.store.store import MAX_TITLE
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes
from rankscope.tables.table import Table
from rankscope.web.access.bodies import sound_text
from rankscope.web.access.gate import COOKIE_SECONDS, cookie_name
from rankscope.web.access.limits import Limits
from rankscope.web.analyst import Analyst
from rankscope.web.routes.api import analyst_of, guarded
from rankscope.web.state import Change, Session

router = APIRouter(prefix="/api")


def table_bytes(table: Table) -> bytes:
    """The table as Parquet: a session keeps file bytes and reads them back, and Parquet
    keeps every column's kind."""
    out = io.BytesIO()
    pq.write_table(pa.Table.from_pandas(table.frame, preserve_index=False), out)
    return out.getvalue()


def start_session(bench: Analyst, table: Table, steps: list[dict[str, Any]], title: str,
                  limits: Limits) -> tuple[Session, Created]:
    """A new session on `table` with `steps` as its first changes (each one undoable). The
    table is read back from the bytes the session keeps, under the server's limits."""
    content = table_bytes(table)
    stored = read_bytes(content, "design.parquet", name=title, **limits.reading())
    session, made = bench.start(content, "design.parquet", stored)
    bench.store.rename(made.session_id, title[:MAX_TITLE])
    for step in steps:
        bench.apply(made.session_id, Change("step", step))
    return bench.session(made.session_id), made


@router.post("/s/{session_id}/formula")
def from_formula(request: Request, session_id: str, body: Annotated[Any, Body()] = None
                 ) -> JSONResponse:
    """Body {"formula": "y ~ a + C(g)"}: a new session whose design starts from the formula
    on this session's table (this session stays as it is). Answers with its address and
    leaves its edit key in a cookie, as an upload does."""
    text = sound_text(body).get("formula") if isinstance(body, dict) else None
    if not isinstance(text, str) or not text.strip():
        raise InputError("the formula is empty", "formula", "Write it like y ~ a + b + C(g)")
    from rankscope.design.formula import start

    bench = analyst_of(request)
    session = bench.session(session_id)
    begun = start(session.table, text)  # InputError names the place in the formula
    title = f"{session.title or session.table.source}: {text.strip()}"
    made_session, made = guarded("starting from the formula", start_session, bench,
                                 begun.table, begun.steps, title, request.app.state.limits)
    sid = made_session.session_id
    response = JSONResponse({"session": sid, "url": f"/s/{sid}", "columns":
                             list(begun.table.columns), "notes": begun.notes},
                            status_code=201)
    response.set_cookie(cookie_name(sid), made.edit_token, max_age=COOKIE_SECONDS,
                        httponly=True, samesite="lax")
    return response
