"""JSON routes: upload, versioned changes to the design, undo and redo, pinned fits, raw results.

Each route hands work to the Analyst and returns its result; no linear algebra here.
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable
from typing import Annotated, Any, TypeVar

from fastapi import APIRouter, Body, File, Request, UploadFile
from fastapi.responses import JSONResponse

from rankscope.design.names import quoted
from rankscope.report.figures import all_figures, correlation_heatmap
from rankscope.store import Applied, Conflict, SessionNotFound
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes
from rankscope.web.access.bodies import safe_text, sound_text
from rankscope.web.access.gate import COOKIE_SECONDS, can_edit, cookie_name
from rankscope.web.access.limits import Limits
from rankscope.web.analyst import Analyst, UnknownSession, settings_of
from rankscope.web.budget import AnalysisTooSlow
from rankscope.web.faults import fault_of, internal_error
from rankscope.web.live.feed import Hub
from rankscope.web.rendering.render import current_html
from rankscope.web.rendering.views import plain
from rankscope.web.state import CHANGE_KINDS, Change, Session

# Every route is a plain `def`: FastAPI runs it in its thread pool, so a long refit never
# blocks the event loop that serves other requests.
router = APIRouter(prefix="/api")
log = logging.getLogger("rankscope.web")
T = TypeVar("T")

EXAMPLE = ('Send {"kind": "step", "payload": {"step": "drop", "column": "x"}, '
           '"base_version": 3, "change_id": "a-new-id"}')


def analyst_of(request: Request) -> Analyst:
    return request.app.state.analyst


def live_of(request: Request) -> Hub:
    return request.app.state.live


def guarded(what: str, fn: Callable[..., T], *args: Any) -> T:
    """Run fn; a failure the readers, recipe or core did not word still becomes a message
    (and the session is unchanged, as the Analyst stores only what succeeded). A fault of
    the server itself (a full disk, say) is passed on: it is answered 507/503 (faults.py),
    not blamed on the user's file or step."""
    try:
        return fn(*args)
    except (InputError, UnknownSession, SessionNotFound, AnalysisTooSlow):
        raise
    except Exception as exc:  # noqa: BLE001 - never a 500 for a user's file or step
        if fault_of(exc) is not None:
            raise
        ref, _ = internal_error()
        log.exception("%s failed (reference %s)", what, ref)
        raise InputError(f"{what} could not be done: rankscope failed on it (reference {ref} "
                         "in the server's log)", "",
                         "Nothing in the session was changed. Try another way (another "
                         "step, or fewer at once); please report this with the file and the "
                         "reference") from exc


def state_of(request: Request, session: Session) -> dict[str, Any]:
    """What a page needs after a change: the fresh workspace and where the history is."""
    analyst = analyst_of(request)
    out: dict[str, Any] = {
        "version": session.version,
        "revision": session.revision,
        "position": session.position,
        "history_length": len(session.history),
    }
    if request.query_params.get("html") != "0":  # scripts may skip the page fragment
        out["html"] = current_html(analyst, session, can_edit(request))
    try:
        analysis = analyst.current(session)
    except InputError:
        return out
    return {**out, "rank": analysis.diagnosis["rank"], "columns": analysis.columns,
            "seconds": round(analysis.seconds, 4)}


def server_timing(**seconds: float) -> str:
    """A Server-Timing header (W3C Server Timing) from named spans in seconds: what the
    page benchmark and the browser's developer tools show of the server's share."""
    return ", ".join(f"{name};dur={1000 * value:.1f}" for name, value in seconds.items())


def answer(request: Request, session_id: str, outcome: Applied | Conflict,
           status: int = 200, started: float | None = None, **extra: Any) -> JSONResponse:
    """The reply to a versioned change: the session as it now is, and what became of the
    change. A Conflict is 409 (RFC 9110 §15.5.10) with its message: nothing was saved and
    the page shows the state that the change no longer fits. started: when the route began
    (perf_counter), for the Server-Timing header: the change (its analysis and the store)
    and the page fragment with the rest of the answer."""
    made = time.perf_counter()
    session = analyst_of(request).session(session_id)
    body = {**state_of(request, session), **extra}
    if isinstance(outcome, Conflict):
        response = JSONResponse({**body, "error": outcome.message, "conflict": True},
                                status_code=409)
    else:
        if not outcome.repeated:
            live_of(request).notify(session_id)
        response = JSONResponse({**body, "saved_as": outcome.version,
                                 "rebased": outcome.rebased, "repeated": outcome.repeated},
                                status_code=status)
    if started is not None:
        response.headers["Server-Timing"] = server_timing(
            change=made - started, page=time.perf_counter() - made)
    return response


def versioning(body: Any) -> tuple[int | None, str | None]:
    """The base version and change id a request carries (both optional: without them the
    change is made on the current version and a retry would be a new change)."""
    if not isinstance(body, dict):
        return None, None
    sound_text(body)
    return body.get("base_version"), body.get("change_id")


@router.post("/upload")
def upload(request: Request, file: Annotated[UploadFile, File()]) -> JSONResponse:
    """Read an uploaded table into a new session; answers with the overview's address and
    leaves the session's edit key in a cookie for the uploader."""
    name = safe_text(file.filename or "upload")  # the client's bytes, perhaps not UTF-8
    limits: Limits = request.app.state.limits
    data = file.file.read(limits.max_upload_bytes + 1)
    if len(data) > limits.max_upload_bytes:
        raise InputError(f"the file is larger than this server's limit of "
                         f"{limits.upload_text()}", quoted(name),
                         "Use a smaller file, start the server with a higher --max-upload-mb, "
                         "or diagnose it with `rankscope check FILE --stream`")
    table = guarded(f"reading {quoted(name)}", lambda: read_bytes(data, name,
                                                                  **limits.reading()))
    session, made = analyst_of(request).start(data, name, table)
    sid = session.session_id
    response = JSONResponse({"session": sid, "url": f"/s/{sid}", "rows": table.n_rows,
                             "columns": table.columns, "notes": table.notes}, status_code=201)
    response.set_cookie(cookie_name(sid), made.edit_token, max_age=COOKIE_SECONDS,
                        httponly=True, samesite="lax")
    return response


@router.post("/s/{session_id}/changes")
def add_change(request: Request, session_id: str,
               body: Annotated[Any, Body()] = None) -> JSONResponse:
    """Body: {"kind": "step" | "keep" | "ridge", "payload": {...}, "base_version": n,
    "change_id": "..."}. Saved, saved on top of newer changes, or refused (400 when wrong
    on its own base, 409 when the session moved on and it no longer fits)."""
    if not isinstance(body, dict) or body.get("kind") not in CHANGE_KINDS \
            or not isinstance(body.get("payload"), dict):
        raise InputError("a change needs a kind (step, keep or ridge) and a payload object",
                         "request body", EXAMPLE)
    started = time.perf_counter()
    base, change_id = versioning(body)
    outcome = guarded("this change", analyst_of(request).apply, session_id,
                      Change(body["kind"], body["payload"]), base, change_id)
    return answer(request, session_id, outcome, started=started)


@router.post("/s/{session_id}/undo")
def undo(request: Request, session_id: str, body: Annotated[Any, Body()] = None
         ) -> JSONResponse:
    started = time.perf_counter()
    base, change_id = versioning(body)
    outcome = guarded("undo", analyst_of(request).move, session_id, -1, base, change_id)
    return answer(request, session_id, outcome, started=started)


@router.post("/s/{session_id}/redo")
def redo(request: Request, session_id: str, body: Annotated[Any, Body()] = None
         ) -> JSONResponse:
    started = time.perf_counter()
    base, change_id = versioning(body)
    outcome = guarded("redo", analyst_of(request).move, session_id, 1, base, change_id)
    return answer(request, session_id, outcome, started=started)


@router.post("/s/{session_id}/pins")
def pin(request: Request, session_id: str, body: Annotated[Any, Body()] = None) -> JSONResponse:
    """Pin the current fit. Body (optional): {"label": "..."}."""
    label = sound_text(body).get("label") if isinstance(body, dict) else None
    analyst = analyst_of(request)
    pinned = guarded("pinning", analyst.pin, session_id, str(label or ""))
    live_of(request).notify(session_id)
    return JSONResponse({**state_of(request, analyst.session(session_id)), "pin": pinned.pin_id},
                        status_code=201)


@router.delete("/s/{session_id}/pins/{pin_id}")
def unpin(request: Request, session_id: str, pin_id: int) -> JSONResponse:
    analyst = analyst_of(request)
    analyst.unpin(session_id, pin_id)
    live_of(request).notify(session_id)
    return JSONResponse(state_of(request, analyst.session(session_id)))


@router.get("/s/{session_id}/diagnosis")
def diagnosis(request: Request, session_id: str) -> JSONResponse:
    """The current Diagnosis as the core's plain JSON."""
    analyst = analyst_of(request)
    return JSONResponse(plain(analyst.current(analyst.session(session_id)).diagnosis))


@router.get("/s/{session_id}/figures")
def figures(request: Request, session_id: str) -> JSONResponse:
    analyst = analyst_of(request)
    return JSONResponse(plain(all_figures(analyst.current(analyst.session(session_id)).diagnosis)))


@router.get("/s/{session_id}/spearman")
def spearman_figure(request: Request, session_id: str) -> JSONResponse:
    """The Spearman heatmap of the current state; when the refit was made on the factor
    alone, the correlations are computed from the rows now, and the note says so."""
    analyst = analyst_of(request)
    session = analyst.session(session_id)
    diag, note = guarded("Spearman correlations", analyst.spearman, session)
    return JSONResponse(plain({"figure": correlation_heatmap(diag, "spearman"), "note": note}))


@router.get("/s/{session_id}/history")
def history(request: Request, session_id: str) -> JSONResponse:
    """The history with the undo pointer, the recipe the changes in force add up to, and
    every accepted change as saved (version, change id, base version)."""
    session = analyst_of(request).session(session_id)
    settings = settings_of(session.in_force)  # no analysis needed to say what is in force
    return JSONResponse({
        "version": session.version,
        "position": session.position,
        "changes": [c.to_dict() for c in session.history],
        "recipe": settings.recipe.steps,
        "keep": list(settings.keep),
        "ridge_penalty": settings.ridge,
        "entries": request.app.state.sessions.entries(session_id),
    })
