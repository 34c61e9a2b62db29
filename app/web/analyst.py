"""Turning a session into an Analysis: its source's factor for the recipe, diagnosed; recent kept.

Calls the recipe and the core only; never does linear algebra itself, never renders.
"""

from __future__ import annotations

import json
import logging
import threading
import time
from collections.abc import Callable
from dataclasses import replace
from typing import Any

from rankscope.core import diagnose
from rankscope.core.diagnosis import diagnose_factor
from rankscope.design.apply_roles import levels_of
from rankscope.design.design import Design
from rankscope.design.names import quoted
from rankscope.design.recipe import Recipe
from rankscope.design.replay import trace_design
from rankscope.design.steps import describe_step, finite_number, short_number
from rankscope.design.working import DROPPED, PREDICTOR, RESPONSE
from rankscope.scale.reduced import Reduced
from rankscope.scale.reduced_steps import refused
from rankscope.scale.sources import NO_ROWS_NOTE, Source
from rankscope.store.records import Applied, Conflict, Created
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table
from rankscope.web import refit
from rankscope.web.analysis import LEVEL_MENU_LIMIT, Analysis, Settings, WorkingColumn
from rankscope.web.budget import Budget
from rankscope.web.faults import fault_of, internal_error
from rankscope.web.recent import Recent, cells
from rankscope.web.state import Change, PinnedFit, Session, SessionStore

__all__ = ["LEVEL_MENU_LIMIT", "Analysis", "Settings", "UnknownSession", "WorkingColumn",
           "Analyst", "analyse", "settings_of"]


log = logging.getLogger("rankscope.web")


class UnknownSession(KeyError):
    """No session has this id (it was never made, or it was deleted)."""


def settings_of(changes: list[Change]) -> Settings:
    """Fold the history entries in force into Settings."""
    steps: list[str] = []
    keep: list[str] = []
    ridge: float | None = None
    for change in changes:
        if change.kind == "step":
            steps.append(json.dumps(change.payload, sort_keys=True))
        elif change.kind == "recipe":
            steps.extend(json.dumps(s, sort_keys=True) for s in change.payload["steps"])
        elif change.kind == "keep":
            col = change.payload["column"]
            # "Keep this one instead": the column goes to the front of the priority list.
            keep = [col] + [c for c in keep if c != col]
        elif change.kind == "ridge":
            ridge = change.payload["penalty"]
    return Settings(tuple(steps), tuple(keep), ridge)


def describe_change(change: Change) -> str:
    """A sentence for the history list."""
    if change.kind == "step":
        return describe_step(change.payload)
    if change.kind == "recipe":
        steps = change.payload["steps"]
        first = describe_step(steps[0])
        return (f"Import a recipe of {len(steps)} step(s): {first}" if len(steps) == 1 else
                f"Import a recipe of {len(steps)} steps, from: {first}")
    if change.kind == "keep":
        return (f"Keep {quoted(change.payload['column'])} in the basis first, so the "
                "others are written in terms of it.")
    penalty = change.payload["penalty"]
    if penalty is None:
        return "Turn the ridge penalty off."
    return f"Set the ridge penalty to {penalty:g}."


def check_change(change: Change) -> Change:
    """Refuse a malformed change before it reaches the history (steps are checked by the
    recipe itself when the Recipe is built)."""
    if change.kind == "step":
        Recipe([change.payload])  # raises InputError naming the bad field
        return change
    if change.kind == "recipe":
        Recipe(change.payload.get("steps") or [])
        return change
    if change.kind == "keep":
        col = change.payload.get("column")
        if not isinstance(col, str) or not col:
            raise InputError("a basis choice needs a column name", "", "Pick a column")
        return Change("keep", {"column": col})
    if change.kind == "ridge":
        value = change.payload.get("penalty")
        if value is None:
            return Change("ridge", {"penalty": None})
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise InputError(f"a ridge penalty must be a number, not {value!r}", "ridge penalty",
                             "Enter a number of 0 or more, or clear the field")
        if not finite_number(value) or value < 0:
            raise InputError(f"a ridge penalty must be a finite number of 0 or more, not "
                             f"{short_number(value)}", "ridge penalty",
                             "Enter a number of 0 or more (in units of the correlation matrix)")
        return Change("ridge", {"penalty": float(value)})
    raise InputError(f"unknown kind of change {change.kind!r}", "", "Use step, keep or ridge")


def _working(bench_cols: list[Any]) -> list[WorkingColumn]:
    out = []
    for col in bench_cols:
        levels = None
        if col.kind == "categorical":
            levels = levels_of(col)
            if len(levels) > LEVEL_MENU_LIMIT:
                levels = None
        role = {PREDICTOR: "predictor", DROPPED: "dropped", RESPONSE: "response"}[col.role]
        out.append(WorkingColumn(col.name, col.kind, role, col.reference, levels))
    return out


def analyse(table: Table, settings: Settings, complete: bool = False) -> Analysis:
    """Replay the recipe on the table and diagnose the design. Raises InputError.
    complete: a wide design's extras too (every dimension's proportions, the spectra)."""
    start = time.perf_counter()
    trace = trace_design(table, list(settings.recipe))
    design: Design = trace.design
    # Kept columns that a later step removed are simply passed over by the core.
    diag = diagnose(
        design.X, design.columns, design.y, response=design.response, groups=design.groups,
        keep=list(settings.keep) or None, ridge_penalty=settings.ridge,
        all_proportions=complete, spectra=complete,
    )
    return Analysis(
        settings=settings,
        columns=list(design.columns),
        response=design.response,
        groups=dict(design.groups),
        rows_total=design.rows_total,
        rows_used=design.rows_used,
        notes=list(design.notes),
        diagnosis=diag.plain(),
        working=_working(trace.working.cols),
        seconds=time.perf_counter() - start,
    )


def on_source(source: Source, settings: Settings, complete: bool = False) -> Analysis:
    """The diagnosis of a source's factor under the settings (keep, ridge, recipe steps).
    complete: as for analyse."""
    started = time.perf_counter()
    got = source.factor_for(list(settings.recipe))
    lay = got.layout
    diag = diagnose_factor(got.F, response=lay.response, groups=lay.groups,
                           keep=list(settings.keep) or None, ridge_penalty=settings.ridge,
                           all_proportions=complete, spectra=complete)
    # The controls list the working columns the factor holds, in recipe order.
    working = [WorkingColumn(e.name, e.kind, e.role, None, None) for e in got.ledger.entries
               if e.held is not None or e.level_ids]
    return Analysis(
        settings=settings, columns=list(lay.columns), response=lay.response,
        groups=lay.groups, rows_total=got.rows_total, rows_used=got.rows_used,
        notes=list(got.notes), diagnosis=diag.plain(), working=working,
        seconds=time.perf_counter() - started, path="factor",
    )


class Analyst:
    """The analysis side of the web app: sessions in a store, recent analyses in memory.

    One Analyst serves every source of a factor: a session with rows goes through the edit
    engines below, one without rows asks its source for the factor of its recipe.

    Every change is tried on a copy of the session first; only a change whose analysis
    succeeds is stored, so a failing step never touches what the session holds. Changes
    carry the version they were made on; the store decides what a late one means.
    Analyses run within `budget` (time and number at once); one past its time is cached
    when it ends, so the retry answers at once. Recent analyses and edit engines are kept
    by size (rankscope.web.recent): at least cache_size of each, and more while they are small, so
    every open session's next change is one edit away.
    """

    def __init__(self, store: SessionStore, cache_size: int = 12,
                 budget: Budget | None = None) -> None:
        self.store = store
        self.budget = budget or Budget()
        self._cache: Recent[tuple[str, int, Settings], Analysis] = Recent(
            lambda a: cells(len(a.columns)), cache_size)
        # The edit engines of recent recipe prefixes, so the next step is one edit away.
        self._engines: Recent[tuple[str, int, tuple[str, ...]], refit.Held] = Recent(
            lambda h: cells(len(h.engine.columns)), cache_size)
        self._guard = threading.Lock()

    def session(self, session_id: str) -> Session:
        s = self.store.get(session_id)
        if s is None:
            raise UnknownSession(session_id)
        return s

    def analysis_at(self, session: Session, position: int) -> Analysis:
        """The analysis of the first `position` changes of the history (cached)."""
        settings = settings_of(session.history[:position])
        key = (session.session_id, id(session.table), settings)
        with self._guard:
            hit = self._cache.get(key)
            if hit is not None:
                self._cache.move_to_end(key)
                return hit
        return self.budget.run(key, lambda: self._worded(session, settings),
                               lambda result: self._remember(key, result))

    def _worded(self, session: Session, settings: Settings) -> Analysis:
        """_analyse, with a failure nobody worded (a numerical breakdown) turned into a
        message, so every page that shows the analysis says so instead of failing."""
        try:
            return self._analyse(session, settings)
        except InputError:
            raise
        except Exception as exc:  # noqa: BLE001 - never a 500 for a user's table or step
            if fault_of(exc) is not None:
                raise  # the server's own trouble (memory, disk): no verdict on the design
            ref, _ = internal_error()
            log.exception("analysis of session %s failed (reference %s)",
                          session.session_id, ref)
            raise InputError(
                f"this design could not be analysed: rankscope failed on it (reference {ref} "
                "in the server's log)", session.table.source,
                "Undo the last change; if the table itself fails, please report this with "
                "the file and the reference") from exc

    def _remember(self, key: tuple[str, int, Settings], result: Analysis) -> None:
        with self._guard:
            self._cache[key] = result

    def _held(self, session: Session, steps: tuple[str, ...]) -> refit.Held | None:
        with self._guard:
            held = self._engines.get((session.session_id, id(session.table), steps))
            if held is not None:
                self._engines.move_to_end((session.session_id, id(session.table), steps))
            return held

    def _analyse(self, session: Session, settings: Settings) -> Analysis:
        """A session without rows: from its source's factor. With rows: through a cached
        engine when one is a step (or only keep/ridge) away, else one build from the rows;
        either way the engine of these steps is kept for the next."""
        if session.source.rows is None:
            return on_source(session.source, settings)
        table, steps = session.table, settings.steps
        held = self._held(session, steps)
        if held is not None:  # only the keep list or the ridge penalty changed
            return refit.on_factor(held, settings)
        parent = self._held(session, steps[:-1]) if steps else None
        if parent is not None:
            result, held = refit.after_step(parent, table, settings, json.loads(steps[-1]))
        else:
            result, held = refit.from_rows(table, settings)
        with self._guard:
            self._engines[(session.session_id, id(table), steps)] = held
        return result

    def with_rows(self, session: Session) -> Analysis:
        """The current analysis as diagnosed with the rows (residuals of relations on the
        rows, Spearman): for the report, which lists them (a session without rows: what
        its factor gives)."""
        result = self.current(session)
        if result.path == "rows" or session.source.rows is None:
            return result
        key = ("rows", session.session_id, id(session.table), result.settings)
        return self.budget.run(key, lambda: analyse(session.table, result.settings),
                               lambda _: None)

    def spearman(self, session: Session) -> tuple[dict[str, Any], str | None]:
        """The current diagnosis with its Spearman matrix, computed from the rows when the
        factor path left it out (the cached analysis then keeps it), and a note saying so."""
        result = self.current(session)
        if session.source.rows is None:
            return result.diagnosis, NO_ROWS_NOTE
        corr = result.diagnosis["correlations"]
        if corr["spearman"] is not None or len(corr["columns"]) < 2:
            return result.diagnosis, None
        matrix, note = self.budget.run(
            ("spearman", session.session_id, id(session.table), result.settings),
            lambda: refit.spearman_from_rows(session.table, result.settings, corr["columns"]),
            lambda _: None)
        diag = {**result.diagnosis, "correlations": {**corr, "spearman": matrix}}
        key = (session.session_id, id(session.table), result.settings)
        with self._guard:
            if key in self._cache:
                self._cache[key] = replace(result, diagnosis=diag)
        return diag, note

    def current(self, session: Session) -> Analysis:
        return self.analysis_at(session, session.position)

    def complete(self, session: Session) -> dict[str, Any]:
        """The current diagnosis with what a wide design's analysis leaves to whoever asks
        (every dimension's proportions, the raw and centred spectra): for the full tables'
        downloads. Computed on the held engine's factor when there is one (the factor the
        analysis itself used), within the budget like any analysis."""
        result = self.current(session)
        d = result.diagnosis
        if all(row is not None for row in d["variance_proportions"]) and all(
                v is not None for v in d["singular_values"].values()):
            return d
        settings = result.settings

        def run() -> dict[str, Any]:
            if session.source.rows is None:
                return on_source(session.source, settings, complete=True).diagnosis
            held = self._held(session, settings.steps)
            if held is None:
                return analyse(session.table, settings, complete=True).diagnosis
            full = held.engine.diagnose(keep=list(settings.keep) or None,
                                        ridge_penalty=settings.ridge, all_proportions=True,
                                        spectra=True)
            return {**d, "variance_proportions": full.variance_proportions,
                    "singular_values": full.singular_values}

        return self.budget.run(("complete", session.session_id, id(session.table), settings),
                               run, lambda _: None)

    def needs_rows(self, session: Session, what: str) -> None:
        """Raise InputError when `what` needs rows this session does not hold."""
        if session.source.rows is None:
            raise refused(what)

    def start(self, data: bytes, filename: str, table: Table | None = None
              ) -> tuple[Session, Created]:
        """A new session on an uploaded file (table: already read from exactly these
        bytes); the recipe starts empty (the user picks the response)."""
        return self.store.create(data, filename, table)

    def start_reduced(self, reduced: Reduced) -> tuple[Session, Created]:
        """A new session on a reduced dataset: its design is the one the reduction built, and
        its factor is kept with it in the store (so it outlives this server)."""
        table = reduced.schema()
        return self.store.create(reduced.manifest(), table.source, table,
                                 factor=reduced.to_bytes())

    def apply(self, session_id: str, change: Change, base_version: int | None = None,
              change_id: str | None = None) -> Applied | Conflict:
        """Add a change made by someone who saw base_version (default: the current one).

        The store judges it against what happened since (saved, saved on top, or refused
        with a Conflict). When nothing happened since, the analysis of the result is made
        first, so a change that cannot be analysed is refused and nothing is saved.
        """
        change = check_change(change)
        session = self.session(session_id)
        if change_id is not None:
            first = self.store.answered(session_id, change.kind, change.payload, change_id)
            if first is not None:
                return first
        base = session.version if base_version is None else base_version
        checked = None
        if base == session.version:
            first = self._judged(session_id, base, change, change_id,
                                 lambda: self.current(session.with_change(change)))
            if first is not None:
                return first  # the id was answered by another request meanwhile
            # The analysis built the steps as the store's check would (EditEngine.apply
            # raises exactly when build_design does), so the store need not replay them
            # again on this version. A basis choice is not checked by the analysis.
            checked = base if change.kind in ("step", "recipe") else None
        return self.store.change(session_id, base, change.kind, change.payload, change_id,
                                 checked)

    def pin(self, session_id: str, label: str = "") -> PinnedFit:
        """Keep the current fit for comparison."""
        session = self.session(session_id)
        result = self.current(session)
        fit = result.diagnosis.get("fit")
        if fit is None:
            raise InputError("there is no fit to pin yet", "fit",
                             "Choose a response column first")
        number = max((p.pin_id for p in session.pinned), default=0) + 1
        label = label.strip()[:80] or f"Fit {number}: after {session.position} change(s)"
        return self.store.add_pin(session_id, label, fit, version=session.version,
                                  position=session.position, columns=result.columns,
                                  rank=int(result.diagnosis["rank"]))

    def unpin(self, session_id: str, pin_id: int) -> None:
        self.store.remove_pin(session_id, pin_id)

    def move(self, session_id: str, delta: int, base_version: int | None = None,
             change_id: str | None = None) -> Applied | Conflict:
        """Undo (delta −1) or redo (+1) as seen at base_version; the target state is
        analysed before the move is saved, as in apply."""
        session = self.session(session_id)
        word = "undo" if delta < 0 else "redo"
        if change_id is not None:
            first = self.store.answered(session_id, word, {}, change_id)
            if first is not None:
                return first
        base = session.version if base_version is None else base_version
        if base == session.version:
            def target() -> None:
                to = session.position + delta
                if not 0 <= to <= len(session.history):
                    raise InputError(f"there is nothing to {word}", "history")
                self.current(replace(session, position=to))

            first = self._judged(session_id, base, Change(word, {}), change_id, target)
            if first is not None:
                return first
        return self.store.change(session_id, base, word, {}, change_id)

    def _judged(self, session_id: str, base: int, change: Change, change_id: str | None,
                trial: Callable[[], object]) -> Applied | Conflict | None:
        """Run the trial of a change on its own base. When it finds the change wrong there
        (InputError), the refusal is kept under the change id before it is raised, so a
        retry gets it again even after the session moved on; should the id have been
        answered by another request meanwhile, that first answer is returned instead.
        A server fault or a slow analysis is no answer: nothing is kept, a retry tries again."""
        try:
            trial()
        except InputError as e:
            if change_id is None:
                raise
            return self.store.refuse(session_id, base, change.kind, change.payload, change_id, e)
        return None
