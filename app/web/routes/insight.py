"""JSON routes for the views opened on request: previewed remedies, rows behind conditioning.

Each answers {"html": fragment} (and a figure); the work runs in the analysis budget.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request

from rankscope.report.figures import influence_chart
from rankscope.web import insight
from rankscope.web.access.gate import can_edit
from rankscope.web.rendering.render import render
from rankscope.web.rendering.views import plain
from rankscope.web.routes.api import analyst_of, guarded

router = APIRouter(prefix="/api")


def _run(request: Request, session_id: str, what: str, fn) -> Any:
    bench = analyst_of(request)
    session = bench.session(session_id)
    bench.needs_rows(session, what)
    settings = bench.current(session).settings
    key = (what, session.session_id, id(session.table), settings)
    return bench.budget.run(key, lambda: guarded(what, fn, session.table, settings),
                            lambda _: None)


@router.get("/s/{session_id}/remedies")
def remedies(request: Request, session_id: str) -> dict[str, Any]:
    """Every remedy of the current design, previewed on the factor, as a sortable table."""
    found = _run(request, session_id, "previewing the remedies", insight.remedies)
    return {"html": render("_remedies.html", rows=found.shown, more=found.unpreviewed,
                           can_edit=can_edit(request)),
            "remedies": plain(found.shown),
            "remedies_not_previewed": plain(found.unpreviewed)}


@router.get("/s/{session_id}/influence")
def influence(request: Request, session_id: str) -> dict[str, Any]:
    """The rows whose removal moves the condition number and each flagged index most."""
    found = _run(request, session_id, "finding the rows behind the conditioning",
                 insight.influence)
    figure = influence_chart(found) if found else None
    return {"html": render("_influence.html", found=found), "figure": plain(figure)}
