"""Jinja2 rendering of the pages and of the fragments the page swaps in after each change.

Turns an Analysis (a core result) into HTML and figure dicts; computes nothing itself.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from jinja2 import Environment, FileSystemLoader, select_autoescape

from rankscope.design.design import INTERCEPT
from rankscope.design.steps import COMBINE_METHODS
from rankscope.report.cautions import choose_cautions
from rankscope.report.figures import (
    all_figures,
    inflation_bars,
    ridge_trace,
    singular_value_spectrum,
)
from rankscope.tables.errors import InputError
from rankscope.web.analyst import Analysis, Analyst, describe_change
from rankscope.web.rendering import paging, views, wide
from rankscope.web.rendering.compare import FitRef, compare_fits, most_changed, summary_pairs
from rankscope.web.state import Session

ROOT = Path(__file__).resolve().parents[3]
#: In a checkout the pages' files sit beside app/; installed from a wheel, inside the package.
_PACKAGE = Path(__file__).resolve().parents[2]
TEMPLATES = ROOT / "templates" if (ROOT / "templates").is_dir() else _PACKAGE / "templates"
STATIC = ROOT / "static" if (ROOT / "static").is_dir() else _PACKAGE / "static"

#: Kinds of design change the controls offer, as (step, label) pairs.
SCALINGS = [("center", "Center (subtract the mean)"),
            ("standardize", "Standardize (mean 0, SD 1)"),
            ("unit_length", "Unit length (divide by the column's length)"),
            ("multiply", "Multiply by a constant")]
COMBINE_LABELS = {"sum": "Sum", "mean": "Mean", "difference": "Difference (first − second)",
                  "ratio": "Ratio (first ÷ second)",
                  "first_component": "First principal component"}
COMBINE_CHOICES = [(m, COMBINE_LABELS.get(m, m)) for m in COMBINE_METHODS]


def environment() -> Environment:
    # auto_reload off: the templates ship with the code, and looking at each file's time on
    # every render took about 7% of a busy server's time (measured with the load driver).
    env = Environment(loader=FileSystemLoader(str(TEMPLATES)),
                      autoescape=select_autoescape(["html"]), trim_blocks=True,
                      lstrip_blocks=True, auto_reload=False)
    env.filters["num"] = views.num
    env.filters["inf"] = views.infinite_num
    env.filters["pval"] = views.p_value
    env.filters["isotime"] = views.iso_time
    return env


ENV = environment()


def render(name: str, **context: Any) -> str:
    return ENV.get_template(name).render(**context)


def fit_ref(analyst: Analyst, session: Session, ref: str) -> FitRef | None:
    """Resolve 'current', 'previous' or 'pin:N' to a fit, or None when there is none."""
    if ref.startswith("pin:"):
        try:
            pin_id = int(ref[4:])
        except ValueError:
            return None
        pin = next((p for p in session.pinned if p.pin_id == pin_id), None)
        if pin is None:
            return None
        return FitRef(ref, pin.label, pin.fit, pin.rank, pin.columns)
    if ref == "current":
        position, label = session.position, "Current fit"
    elif ref == "previous":
        if session.position == 0:
            return None
        position, label = session.position - 1, "Before the last change"
    else:
        return None
    analysis = analyst.analysis_at(session, position)
    fit = analysis.diagnosis.get("fit")
    if fit is None:
        return None
    return FitRef(ref, label, fit, int(analysis.diagnosis["rank"]), analysis.columns)


def default_refs(session: Session) -> tuple[str, str]:
    """Compare the newest pinned fit with the current one; without pins, the state before
    the last change with the current one."""
    if session.pinned:
        return f"pin:{session.pinned[-1].pin_id}", "current"
    return "previous", "current"


def compare_context(analyst: Analyst, session: Session, a: str, b: str) -> dict[str, Any]:
    fa, fb = fit_ref(analyst, session, a), fit_ref(analyst, session, b)
    choices = [("current", "Current fit")]
    if session.position > 0:
        choices.append(("previous", "Before the last change"))
    choices += [(f"pin:{p.pin_id}", p.label) for p in session.pinned]
    ctx: dict[str, Any] = {"session": session, "choices": choices, "ref_a": a, "ref_b": b,
                           "fit_a": fa, "fit_b": fb, "rows": [], "summary": []}
    if fa is not None and fb is not None:
        rows = compare_fits(fa, fb)
        ctx["summary"] = summary_pairs(fa, fb)
        if len(rows) > wide.WIDE_COLUMNS:
            # A wide design: the columns whose estimates changed most, not every one.
            ctx["rows"], ctx["rows_total"] = most_changed(rows, COMPARE_ROWS), len(rows)
        else:
            ctx["rows"] = rows
    return ctx


#: Rows the comparison of two fits of a wide design shows (those that changed most).
COMPARE_ROWS = 30
#: Bars of the VIF chart of a wide design (the largest VIFs; the table pages the rest),
#: and lines of its ridge path (those that move most; the ridge table pages every one).
FIGURE_BARS = 30


def wide_context(analysis: Analysis) -> dict[str, Any]:
    """What the page of a wide design shows instead of full tables and the p × p figures:
    the columns that matter, the first page of the VIF and fit tables, the block summary.
    The index table and the pairs are fetched when their panel is opened."""
    d = analysis.diagnosis
    s = wide.structure(d)
    figures = {"spectrum": singular_value_spectrum(d),
               "inflation": inflation_bars(d, FIGURE_BARS),
               "ridge": ridge_trace(d, FIGURE_BARS),
               "blocks-pearson": wide.summary_figure(s) if s else None}
    deps = d["dependencies"]
    listed = []
    for dep in deps[:wide.LISTED_EQUATIONS]:
        # A relation among hundreds of indicators: a few of its drops here, all previewed.
        shown = views.dependency_remedies(dep, analysis, wide.EQUATION_REMEDIES)
        others = sum(c != INTERCEPT for c in dep["combination"])
        listed.append({**dep, "remedies": shown,
                       "more_remedies": max(others + 2 - len(shown), 0)})
    return {
        "wide": True,
        "listed": wide.LISTED_EQUATIONS,
        "focus": wide.focus(d),
        "dependencies": listed,
        "unlisted": len(deps) - len(listed),
        "figures": views.plain(figures),
        "pages": views.plain({"vif": paging.table_page(d, "vif"),
                              "fit": paging.table_page(d, "fit") if d.get("fit") else None,
                              "ridge": paging.table_page(d, "ridge")
                              if (d.get("ridge") or {}).get("chosen") else None}),
        "downloads": paging.DOWNLOADS,
    }


def workspace_context(analyst: Analyst, session: Session, analysis: Analysis,
                      can_edit: bool = True) -> dict[str, Any]:
    """Everything the inspection view shows for the current state of a session; without
    can_edit the controls are shown switched off (a view-only link)."""
    d = analysis.diagnosis
    if wide.is_wide(d):
        shown = wide_context(analysis)
    else:
        deps = [{**dep, "remedies": views.dependency_remedies(dep, analysis)}
                for dep in d["dependencies"]]
        shown = {"wide": False, "dependencies": deps, "vif_rows": views.vif_rows(d),
                 "index_rows": views.index_rows(d), "figures": views.plain(all_figures(d))}
    predictors = [w for w in analysis.working if w.role == "predictor"]
    numeric = [w for w in predictors if w.kind in ("numeric", "boolean")]
    a, b = default_refs(session)
    history = [(i + 1, describe_change(c), i < session.position)
               for i, c in enumerate(session.history)]
    return {
        "session": session,
        "analysis": analysis,
        "d": d,
        **shown,
        "cautions": choose_cautions(d),
        "predictors": predictors,
        "numeric_predictors": numeric,
        "numeric_columns": [w for w in analysis.working if w.role != "dropped"
                            and w.kind in ("numeric", "boolean")],
        "dropped": [w for w in analysis.working if w.role == "dropped"],
        "categoricals": [w for w in predictors if w.kind == "categorical"],
        "response_choices": [w for w in analysis.working
                             if w.kind in ("numeric", "boolean")],
        "scalings": SCALINGS,
        "combine_methods": COMBINE_CHOICES,
        "history": history,
        "cmp": compare_context(analyst, session, a, b),
        "can_edit": can_edit,
    }


def workspace_html(analyst: Analyst, session: Session, analysis: Analysis,
                   can_edit: bool = True) -> str:
    return render("workspace.html", **workspace_context(analyst, session, analysis, can_edit))


def wide_session(analyst: Analyst, session: Session) -> bool:
    """Whether the session's current state is a wide design (its analysis is kept, so
    asking after current_html costs nothing)."""
    try:
        return wide.is_wide(analyst.current(session).diagnosis)
    except InputError:
        return False


def current_html(analyst: Analyst, session: Session, can_edit: bool = True) -> str:
    """The workspace of the session's current state. A saved state that no longer analyses
    (say, a recipe step that newer code refuses) gets a fragment with the message and the
    history controls instead, so the session can still be walked back."""
    try:
        analysis = analyst.current(session)
    except InputError as e:
        history = [(i + 1, describe_change(c), i < session.position)
                   for i, c in enumerate(session.history)]
        return render("stuck.html", session=session, problem=e.message, history=history,
                      can_edit=can_edit)
    return workspace_html(analyst, session, analysis, can_edit)
