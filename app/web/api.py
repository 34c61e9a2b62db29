"""JSON routes: upload, changes to the design, undo and redo, pinned fits, raw results.

Each route hands work to the Workbench and returns its result; no linear algebra here.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from typing import Annotated, Any, TypeVar

from fastapi import APIRouter, Body, File, Request, UploadFile
from fastapi.responses import JSONResponse

from app.design.names import quoted
from app.report.figures import all_figures
from app.tables.errors import InputError
from app.tables.read import read_bytes
from app.web.pages import bench_of
from app.web.render import workspace_html
from app.web.state import CHANGE_KINDS, Change
from app.web.views import plain
from app.web.workbench import Analysis, UnknownSession, Workbench

# Every route is a plain `def`: FastAPI runs it in its thread pool, so a long refit never
# blocks the event loop that serves other requests.
router = APIRouter(prefix="/api")
log = logging.getLogger("rankscope.web")
T = TypeVar("T")

#: Uploads above this size are refused before reading: the table is held in memory.
MAX_UPLOAD_BYTES = 1 << 30
EXAMPLE = 'Send {"kind": "step", "payload": {"step": "drop", "column": "x"}}'


def _guarded(what: str, fn: Callable[..., T], *args: Any) -> T:
    """Run fn; a failure the readers, recipe or core did not word still becomes a message
    (and the session is unchanged, as the Workbench stores only what succeeded)."""
    try:
        return fn(*args)
    except (InputError, UnknownSession):
        raise
    except Exception as exc:  # noqa: BLE001 - never a 500 for a user's file or step
        log.exception("%s failed", what)
        raise InputError(f"{what} failed ({type(exc).__name__}: {exc})", "",
                         "Nothing in the session was changed; please report this with the "
                         "file") from exc


def _state(bench: Workbench, session_id: str, analysis: Analysis) -> dict[str, Any]:
    session = bench.session(session_id)
    return {
        "html": workspace_html(bench, session, analysis),
        "position": session.position,
        "history_length": len(session.history),
        "rank": analysis.diagnosis["rank"],
        "columns": analysis.columns,
        "seconds": round(analysis.seconds, 4),
    }


@router.post("/upload")
def upload(request: Request, file: Annotated[UploadFile, File()]) -> JSONResponse:
    """Read an uploaded table into a new session; answers with the overview's address."""
    name = file.filename or "upload"
    data = file.file.read(MAX_UPLOAD_BYTES + 1)
    if len(data) > MAX_UPLOAD_BYTES:
        raise InputError(f"the file is larger than {MAX_UPLOAD_BYTES >> 20} MiB", quoted(name),
                         "Use the command line for tables this large")
    table = _guarded(f"reading {quoted(name)}", read_bytes, data, name)
    session = bench_of(request).start(table)
    return JSONResponse({"session": session.session_id, "url": f"/s/{session.session_id}",
                         "rows": table.n_rows, "columns": table.columns, "notes": table.notes},
                        status_code=201)


@router.post("/s/{session_id}/changes")
def add_change(request: Request, session_id: str,
               body: Annotated[Any, Body()] = None) -> JSONResponse:
    """Body: {"kind": "step" | "keep" | "ridge", "payload": {...}}. On success the change
    joins the history; on failure the session is left exactly as it was."""
    if not isinstance(body, dict) or body.get("kind") not in CHANGE_KINDS \
            or not isinstance(body.get("payload"), dict):
        raise InputError("a change needs a kind (step, keep or ridge) and a payload object",
                         "request body", EXAMPLE)
    bench = bench_of(request)
    change = Change(body["kind"], body["payload"])
    analysis = _guarded("this change", bench.apply, session_id, change)
    return JSONResponse(_state(bench, session_id, analysis))


@router.post("/s/{session_id}/undo")
def undo(request: Request, session_id: str) -> JSONResponse:
    bench = bench_of(request)
    return JSONResponse(_state(bench, session_id, _guarded("undo", bench.move, session_id, -1)))


@router.post("/s/{session_id}/redo")
def redo(request: Request, session_id: str) -> JSONResponse:
    bench = bench_of(request)
    return JSONResponse(_state(bench, session_id, _guarded("redo", bench.move, session_id, 1)))


@router.post("/s/{session_id}/pins")
def pin(request: Request, session_id: str, body: Annotated[Any, Body()] = None) -> JSONResponse:
    """Pin the current fit. Body (optional): {"label": "..."}."""
    label = body.get("label") if isinstance(body, dict) else None
    bench = bench_of(request)
    pinned = _guarded("pinning", bench.pin, session_id, str(label or ""))
    analysis = bench.current(bench.session(session_id))
    return JSONResponse({**_state(bench, session_id, analysis), "pin": pinned.pin_id},
                        status_code=201)


@router.delete("/s/{session_id}/pins/{pin_id}")
def unpin(request: Request, session_id: str, pin_id: int) -> JSONResponse:
    bench = bench_of(request)
    bench.unpin(session_id, pin_id)
    return JSONResponse(_state(bench, session_id, bench.current(bench.session(session_id))))


@router.get("/s/{session_id}/diagnosis")
def diagnosis(request: Request, session_id: str) -> JSONResponse:
    """The current Diagnosis as the core's plain JSON."""
    bench = bench_of(request)
    return JSONResponse(plain(bench.current(bench.session(session_id)).diagnosis))


@router.get("/s/{session_id}/figures")
def figures(request: Request, session_id: str) -> JSONResponse:
    bench = bench_of(request)
    return JSONResponse(plain(all_figures(bench.current(bench.session(session_id)).diagnosis)))


@router.get("/s/{session_id}/history")
def history(request: Request, session_id: str) -> JSONResponse:
    """The history with the undo pointer, and the recipe the changes in force add up to."""
    bench = bench_of(request)
    session = bench.session(session_id)
    analysis = bench.current(session)
    return JSONResponse({
        "position": session.position,
        "changes": [c.to_dict() for c in session.history],
        "recipe": analysis.settings.recipe.steps,
        "keep": list(analysis.settings.keep),
        "ridge_penalty": analysis.settings.ridge,
    })
