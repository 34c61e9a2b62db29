"""Analyses made through the edit engine: one build from the rows, then steps on the small factor.

Calls the recipe, the engine and the core; never does linear algebra itself, never renders.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, replace
from typing import Any

from rankscope.core.correlation import spearman
from rankscope.core.diagnosis import diagnose_factor, spearman_rows
from rankscope.core.factor import check_values, factorize
from rankscope.design.apply_roles import levels_of
from rankscope.design.design import Design
from rankscope.design.recipe import build_design
from rankscope.design.replay import trace_design
from rankscope.design.working import DROPPED, PREDICTOR, RESPONSE
from rankscope.scale.edits import EditEngine
from rankscope.tables.table import Table
from rankscope.web.analysis import LEVEL_MENU_LIMIT, Analysis, Settings, WorkingColumn

#: Ids of a pair of held columns -> their Spearman correlation on the rows used.
Pairs = dict[tuple[str, str], float]

#: How the page words a Spearman matrix fetched on request.
FROM_ROWS_NOTE = "Spearman correlations computed from the rows on request"

ROLE_NAMES = {PREDICTOR: "predictor", DROPPED: "dropped", RESPONSE: "response"}


@dataclass(frozen=True)
class Held:
    """An engine plus what an Analysis shows that its factor cannot give.

    levels: categorical working column (by ledger key) -> its level menu (None: too many).
    notes: the recipe's notes from the last build on the rows (valid while the steps since
        were linear and left categorical, date and left-out columns alone).
    pairs: Spearman correlations by held-column ids, from that build (None: not known).
    spearman_note: the core's note on sampled rows for Spearman, if it made one.
    deferred: the dependent columns of the last diagnosis on this engine or its parent:
        the core's hint for the next one (diagnose_factor's deferred_hint; a wide design
        then computes two SVDs at once).
    """

    engine: EditEngine
    levels: dict[int, list[str] | None]
    notes: tuple[str, ...]
    pairs: Pairs | None
    spearman_note: str | None
    deferred: tuple[str, ...] = ()


def _menu(levels: list[str]) -> list[str] | None:
    return None if len(levels) > LEVEL_MENU_LIMIT else levels


def _levels(table: Table, settings: Settings, engine: EditEngine) -> dict[int, list[str] | None]:
    """Level menus of the categorical working columns, as analyse() gives them. The ledger
    holds the levels of columns without missing values; others come from one more replay."""
    cats = [e for e in engine.ledger.entries if e.kind == "categorical"]
    out = {e.key: _menu(list(e.levels)) for e in cats if e.levels is not None}
    if len(out) < len(cats):
        cols = trace_design(table, list(settings.recipe)).working.cols
        for e in cats:  # ledger keys: positions in a build (rankscope.scale.start)
            out.setdefault(e.key, _menu(levels_of(cols[e.key])))
    return out


def working(held: Held) -> list[WorkingColumn]:
    """The working columns the controls need, from the engine's ledger."""
    return [WorkingColumn(e.name, e.kind, ROLE_NAMES[e.role], e.reference,
                          held.levels.get(e.key) if e.kind == "categorical" else None)
            for e in held.engine.ledger.entries]


def _ids(engine: EditEngine) -> dict[str, str]:
    """Design column name -> the held column showing it."""
    return dict(zip(engine.layout.columns, engine.layout.visible, strict=True))


def _pairs(diag: dict[str, Any], engine: EditEngine) -> Pairs | None:
    corr = diag["correlations"]
    if corr["spearman"] is None:
        return None
    ids = [_ids(engine)[c] for c in corr["columns"]]
    return {(a, b): corr["spearman"][i][j] for i, a in enumerate(ids)
            for j, b in enumerate(ids)}


def _spearman_note(notes: list[str]) -> str | None:
    return next((n for n in notes if n.startswith("Spearman correlations use")), None)


#: Most cells (rows × design columns) whose ranks the first build computes for Spearman
#: correlations (about 0.5 s at 2,000,000 on a busy core); a larger design's Spearman matrix
#: is computed when the page asks for it (Analyst.spearman): a view nobody opened costs nothing.
SPEARMAN_CELLS = 2_000_000


#: Design columns from which the first build diagnoses the engine's factor (the build's one
#: pass over the rows, re-triangulated for the design) instead of factoring the rows again:
#: the second pass costs O(n·p²), as much as the first (4 to 8 s at 20,000 × 1,000 on a busy
#: core). Narrower designs keep the rows' own factor, which a from-scratch analysis uses:
#: where rounding decides a basis (a 1e-16 remainder), both then decide alike.
REUSE_FACTOR_COLUMNS = 200


def deferred_of(diag: dict[str, Any]) -> tuple[str, ...]:
    """The columns a diagnosis wrote through the others (its dependencies' left sides)."""
    return tuple(r["column"] for r in diag["dependencies"])


def from_rows(table: Table, settings: Settings, engine: EditEngine | None = None,
              design: Design | None = None, started: float | None = None
              ) -> tuple[Analysis, Held]:
    """Build from the rows (or take the build an engine edit just made) and diagnose with
    the rows, as analyse() does; a wide design on the engine's factor with the rows
    attached for what needs them (relations checked on the rows, the refined fit)."""
    started = time.perf_counter() if started is None else started
    if engine is None or design is None:
        engine, design = EditEngine.build_with_design(table, settings.recipe)
    if len(design.columns) >= REUSE_FACTOR_COLUMNS:
        # The checks factorize makes on the rows, before a factor built without them is used.
        check_values(design.X, design.y, design.columns)
        F = replace(engine.factorization(), X=design.X, y=design.y)
    else:
        F = factorize(design.X, design.columns, design.y)
    diag = diagnose_factor(
        F, response=design.response, groups=design.groups,
        keep=list(settings.keep) or None, ridge_penalty=settings.ridge,
        rank_correlation=design.X.size <= SPEARMAN_CELLS,
    ).plain()
    held = Held(engine, _levels(table, settings, engine), tuple(design.notes),
                _pairs(diag, engine), _spearman_note(diag["notes"]), deferred_of(diag))
    return Analysis(
        settings=settings, columns=list(design.columns), response=design.response,
        groups=dict(design.groups), rows_total=design.rows_total, rows_used=design.rows_used,
        notes=list(design.notes), diagnosis=diag, working=working(held),
        seconds=time.perf_counter() - started, path="rows",
    ), held


def _note_signature(engine: EditEngine) -> tuple:
    """What the recipe's notes depend on besides the rows used: the predictors that are
    categorical (coding), dates (left out) or dropped for missing values, in order."""
    missing = engine.with_missing
    return tuple(
        (e.key, e.name, e.kind, e.reference, e.on_missing) for e in engine.ledger.entries
        if e.role == PREDICTOR and (e.kind in ("categorical", "date") or (
            e.on_missing == "drop_column" and e.sources & missing))
    )


def _with_spearman(diag: dict[str, Any], held: Held) -> dict[str, Any]:
    """Fill in the Spearman matrix when every pair was computed on these same rows; a held
    id always names the same values, and each entry depends on its two columns only."""
    corr = diag["correlations"]
    if held.pairs is None or len(corr["columns"]) == 0:
        return diag
    ids = [_ids(held.engine)[c] for c in corr["columns"]]
    if any((a, a) not in held.pairs for a in ids):
        return diag
    matrix = [[held.pairs[(a, b)] for b in ids] for a in ids]
    notes = list(diag["notes"])
    if held.spearman_note is not None:
        at = next((i for i, n in enumerate(notes)
                   if n.endswith("it carries no variation of its own.")), len(notes))
        notes.insert(at, held.spearman_note)
    return {**diag, "correlations": {**corr, "spearman": matrix}, "notes": notes}


def on_factor(held: Held, settings: Settings, started: float | None = None) -> Analysis:
    """Diagnose the engine's factor (no rows) with the settings' keep list and penalty."""
    started = time.perf_counter() if started is None else started
    engine = held.engine
    diag = engine.diagnose(keep=list(settings.keep) or None, ridge_penalty=settings.ridge,
                           deferred_hint=list(held.deferred) or None).plain()
    return Analysis(
        settings=settings, columns=engine.columns, response=engine.response,
        groups=engine.groups, rows_total=engine.rows_total, rows_used=engine.rows_used,
        notes=list(held.notes), diagnosis=_with_spearman(diag, held), working=working(held),
        seconds=time.perf_counter() - started, path="factor",
    )


def after_step(parent: Held, table: Table, settings: Settings, step: dict[str, Any]
               ) -> tuple[Analysis, Held]:
    """The analysis of the parent's recipe plus one step: on the factor when the engine can
    do it and nothing the rows word changes, else one build from the rows."""
    started = time.perf_counter()
    if step.get("step") == "combine" and step.get("method") == "first_component":
        return from_rows(table, settings, started=started)  # its note quotes the rows' weights
    outcome = parent.engine.apply(step)  # InputError exactly when the rebuild would raise it
    if outcome.path == "rebuild":
        return from_rows(table, settings, outcome.engine, outcome.design, started)
    if _note_signature(outcome.engine) != _note_signature(parent.engine):
        return from_rows(table, settings, started=started)
    held = Held(outcome.engine, parent.levels, parent.notes, parent.pairs, parent.spearman_note,
                parent.deferred)
    result = on_factor(held, settings, started)
    return result, replace(held, deferred=deferred_of(result.diagnosis))


def spearman_from_rows(table: Table, settings: Settings, columns: list[str]
                       ) -> tuple[list[list[float]], str]:
    """Spearman correlations of the named design columns on the rows, as the core's
    diagnosis computes them, and a note saying so."""
    design = build_design(table, settings.recipe)
    idx = [design.columns.index(c) for c in columns]
    n = design.X.shape[0]
    rows = spearman_rows(n, n)
    X = design.X[rows] if rows is not None else design.X
    note = FROM_ROWS_NOTE
    if rows is not None:
        note += f" ({len(rows):,} evenly spaced rows of {n:,})"
    return spearman(X[:, idx]).tolist(), note + "."
