"""Download routes: a session's report, recipe, script and design CSV as attachments.

HTTP only: contents come from rendering/exports.py; nothing is computed or saved here.
"""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import Response, StreamingResponse

from rankscope.tables.errors import InputError
from rankscope.web.rendering import exports
from rankscope.web.routes.api import analyst_of, guarded

router = APIRouter(prefix="/api")


def _attachment(name: str) -> dict[str, str]:
    # The name is letters, digits, dots, dashes and underscores only (download_name), so
    # it needs no quoting beyond the quotes (RFC 6266 §4.1).
    return {"Content-Disposition": f'attachment; filename="{name}"',
            "Cache-Control": "no-store"}


@router.get("/s/{session_id}/export/{kind}")
def download(request: Request, session_id: str, kind: str) -> Response:
    """kind: report | recipe | script | design (see exports.KINDS)."""
    if kind not in exports.KINDS:
        raise InputError(f"there is no download called {kind!r}", "download",
                         "Use one of: " + ", ".join(exports.KINDS))
    session = analyst_of(request).session(session_id)
    if kind in ("design", "script"):
        analyst_of(request).needs_rows(session, f"the {kind} download")
    headers = _attachment(exports.file_name(session, kind))
    media = exports.KINDS[kind][1]
    if kind == "design":
        pieces = guarded("the design CSV", exports.design, session)
        return StreamingResponse(pieces, media_type=media, headers=headers)
    if kind == "report":
        text = guarded("the report", exports.report, analyst_of(request), session)
    elif kind == "recipe":
        text = exports.recipe(session)
    else:
        text = guarded("the script", exports.script, session)
    return Response(text, media_type=media, headers=headers)
