"""Session routes beyond the analysis: the list, rename, delete, share links, the live feed and
recipe import. HTTP only: the store and the Analyst do the work; nothing is computed here."""

from __future__ import annotations

from typing import Annotated, Any

import anyio
from fastapi import APIRouter, Body, File, Form, Request, UploadFile
from fastapi.responses import JSONResponse, Response, StreamingResponse

from rankscope.report.export import MAX_RECIPE_BYTES
from rankscope.web.access import links
from rankscope.web.access.bodies import sound_text
from rankscope.web.access.gate import can_edit, cookie_name, role_of, token_of
from rankscope.web.analyst import UnknownSession
from rankscope.web.live.feed import FeedRefused, Hub, Ticket
from rankscope.web.recipes import import_steps
from rankscope.web.routes.api import analyst_of, guarded, live_of, state_of
from rankscope.web.stored import StoredSessions

router = APIRouter(prefix="/api")

LOCAL_NOTE = ("This server listens on this computer only, so these links work here only. To "
              "let others on your network open them, restart it with: rankscope serve --share")
SHARED_NOTE = ("Anyone who has a link can use it until the session is deleted: the edit link "
               "can change, rename and delete the session; the view-only link can only watch.")
#: What a refused feed is told to wait (Retry-After); the page's script waits longer each try.
RETRY_AFTER_SECONDS = 30


def sessions_of(request: Request) -> StoredSessions:
    return request.app.state.sessions


@router.get("/sessions")
def recent(request: Request) -> JSONResponse:
    """The most recently changed sessions first."""
    return JSONResponse([{
        "session": s.session_id, "title": s.title, "filename": s.filename, "rows": s.n_rows,
        "columns": s.n_columns, "version": s.version, "created": s.created,
        "updated": s.updated, "url": f"/s/{s.session_id}",
    } for s in sessions_of(request).recent()])


@router.post("/s/{session_id}/title")
def rename(request: Request, session_id: str, body: Annotated[Any, Body()] = None
           ) -> JSONResponse:
    """Body: {"title": "..."}."""
    title = sound_text(body).get("title") if isinstance(body, dict) else None
    saved = sessions_of(request).rename(session_id, title)  # InputError for a bad title
    live_of(request).notify(session_id)
    return JSONResponse({"session": session_id, "title": saved})


@router.delete("/s/{session_id}")
def delete(request: Request, session_id: str) -> JSONResponse:
    """Delete the session with its history, pins and (when unshared) its table file."""
    sessions_of(request).delete(session_id)
    live_of(request).notify(session_id)  # open pages hear that it is gone
    response = JSONResponse({"deleted": session_id})
    # Same attributes as when it was set (RFC 6265bis): HttpOnly, SameSite=Lax.
    response.delete_cookie(cookie_name(session_id), httponly=True, samesite="lax")
    return response


@router.get("/s/{session_id}/links")
def share_links(request: Request, session_id: str) -> JSONResponse:
    """The links this request may pass on: both for an editor, the view-only one for a
    viewer. Links are built on the address others reach the server by."""
    analyst_of(request).session(session_id)  # 404 for an unknown session
    if can_edit(request):
        tokens = sessions_of(request).tokens(session_id)
        if "edit" not in tokens and role_of(request) == "edit" and token_of(request):
            tokens["edit"] = str(token_of(request))
    else:
        tokens = {"view": str(token_of(request))}
    base = request.app.state.public_url or str(request.base_url)
    made = {role: links.link(base, session_id, t) for role, t in tokens.items()}
    note = SHARED_NOTE if request.app.state.share else LOCAL_NOTE
    if can_edit(request) and not made:
        note = ("The links of this session cannot be shown here (its sealed copy is missing "
                "or was made with another data folder's key).")
    return JSONResponse({"edit": made.get("edit"), "view": made.get("view"),
                         "sharing": request.app.state.share, "note": note})


class FeedResponse(StreamingResponse):
    """A feed's stream that gives its place back however it ends, even if the client went
    away before the stream began (the generator's own cleanup would then never run)."""

    def __init__(self, hub: Hub, ticket: Ticket) -> None:
        super().__init__(hub.feed(ticket), media_type="text/event-stream",
                         headers={"Cache-Control": "no-cache", "X-Accel-Buffering": "no"})
        self.ticket = ticket

    async def __call__(self, scope: Any, receive: Any, send: Any) -> None:
        try:
            await super().__call__(scope, receive, send)
        finally:
            self.ticket.release()


@router.get("/s/{session_id}/events")
async def events(request: Request, session_id: str) -> Response:
    """Server-sent events: the session's version and viewer count, at once and on change.
    Feeds are counted per key (a link's token, or the owner's) and in all: past either cap
    the answer is 429 or 503 with what to do (RFC 6585 §4, RFC 9110 §15.6.4)."""
    hub = live_of(request)
    try:  # counted first: a refusal costs no read of the store
        ticket = hub.admit(session_id, token_of(request) or role_of(request))
    except FeedRefused as refused:
        return JSONResponse({"error": refused.message}, status_code=refused.status,
                            headers={"Retry-After": str(RETRY_AFTER_SECONDS)})
    try:
        known = await anyio.to_thread.run_sync(hub.stamp, session_id) is not None
    except BaseException:  # cancelled or failed: the place goes back, whatever happened
        ticket.release()
        raise
    if not known:
        ticket.release()
        raise UnknownSession(session_id)
    return FeedResponse(hub, ticket)


@router.post("/s/{session_id}/recipe")
def import_recipe(request: Request, session_id: str, file: Annotated[UploadFile, File()],
                  base_version: Annotated[int | None, Form()] = None,
                  import_id: Annotated[str | None, Form()] = None) -> JSONResponse:
    """Import a recipe JSON file: its steps are added as one change (see app/web/recipes.py)."""
    name = file.filename or "recipe.json"
    data = file.file.read(MAX_RECIPE_BYTES + 1)
    done = guarded(f"importing {name}", import_steps, analyst_of(request), session_id, data,
                   name, base_version, import_id)
    if done.saved:
        live_of(request).notify(session_id)
    body = state_of(request, analyst_of(request).session(session_id))
    body.update(imported=done.saved, steps=done.total)
    if done.refusal is None:
        body["message"] = f"Imported {done.saved} step(s) from {name}."
        return JSONResponse(body)
    text = f"None of the {done.total} step(s) from {name} were saved: {done.refusal}"
    return JSONResponse({**body, "error": text, "conflict": True}, status_code=409)
