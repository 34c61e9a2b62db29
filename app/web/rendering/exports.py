"""What a session's downloads hold: the HTML report, recipe JSON, Python script and design CSV.

Assembles them from the session's analysis and recipe through app/report/export; no HTTP here.
"""

from __future__ import annotations

from collections.abc import Iterator

from rankscope.design.recipe import build_design
from rankscope.report.export import (
    design_csv_chunks,
    download_name,
    recipe_json,
    recipe_script,
    render_html,
)
from rankscope.web.analyst import Analyst, settings_of
from rankscope.web.state import Session

#: The downloads a session offers: key -> (file name suffix, media type).
KINDS = {
    "report": ("-report.html", "text/html; charset=utf-8"),
    "recipe": ("-recipe.json", "application/json"),
    "script": ("-design.py", "text/x-python; charset=utf-8"),
    "design": ("-design.csv", "text/csv; charset=utf-8"),
}


def file_name(session: Session, kind: str) -> str:
    return download_name(session.title or session.table.source, KINDS[kind][0])


def report(analyst: Analyst, session: Session) -> str:
    """The self-contained report of the current state (plotly.js inlined)."""
    analysis = analyst.with_rows(session)
    return render_html(
        analysis.diagnosis, title=session.title or session.table.source,
        source=session.table.source, rows=(analysis.rows_used, analysis.rows_total),
        recipe=analysis.settings.recipe, notes=[*session.table.notes, *analysis.notes])


def recipe(session: Session) -> str:
    return recipe_json(settings_of(session.in_force).recipe)


def script(session: Session) -> str:
    """The script that rebuilds X and y from the file the session was made from."""
    return recipe_script(settings_of(session.in_force).recipe, session.table.source,
                         session.table)


def design(session: Session) -> Iterator[str]:
    """The transformed table (X, then y) as CSV pieces; text cells neutralized."""
    return design_csv_chunks(build_design(session.table, settings_of(session.in_force).recipe))
