"""Recipe steps a reduced session takes on its factor alone: drop, restore, intercept and the
linear steps of rankscope.scale.linear, with the recipe's names and placement. Reads no rows.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from rankscope.core.factor import Factorization
from rankscope.core.workspace import Workspace
from rankscope.design.design import INTERCEPT
from rankscope.design.names import quoted
from rankscope.design.recipe import Recipe
from rankscope.design.steps import ALL_LEVELS, output_name
from rankscope.design.working import DROPPED, PREDICTOR, RESPONSE, Col, WorkingColumns
from rankscope.scale.ledger import Entry, Layout, Ledger, Rebuild
from rankscope.scale.linear import State, apply_linear
from rankscope.scale.reduced import Reduced
from rankscope.scale.start import held_id
from rankscope.scale.store import Store
from rankscope.tables.errors import InputError

#: The design steps a reduced session can take on its factor alone.
FACTOR_STEPS = ("drop", "restore", "intercept", "center", "standardize", "unit_length",
                "multiply", "combine")
#: combine methods done on the factor (first_component's sign rule may need the rows; ratio is
#: not linear).
FACTOR_COMBINE = ("sum", "mean", "difference")
#: What a refused change says, word for word.
ROWS_NEEDED = ("this session was reduced to its factor and the rows stay in the data; changes "
               "that need the rows are not available")
TODO = "Start a session from a file to make this change"


def refused(what: str = "") -> InputError:
    return InputError(ROWS_NEEDED, what, TODO)


def takes_without_rows(step: dict[str, Any]) -> bool:
    """Whether a recipe step can be taken on a factor alone (the rows being elsewhere)."""
    if step.get("step") not in FACTOR_STEPS:
        return False
    return step.get("step") != "combine" or step.get("method") in FACTOR_COMBINE


def refuse_without_rows(step: dict[str, Any]) -> None:
    """Raise the refusal a session without rows gives a step that needs them."""
    if step.get("step") not in FACTOR_STEPS:
        raise refused(f"recipe step {step.get('step')!r}")
    if not takes_without_rows(step):
        raise refused(f"combine by {step.get('method')!r}")


@dataclass(frozen=True)
class Folded:
    """A reduced design after the recipe: its factor (no rows), layout and working columns."""

    F: Factorization
    layout: Layout
    ledger: Ledger


def _entries(F: Factorization, kinds: dict[str, str], groups: dict[str, list[str]],
             response: str | None) -> tuple[list[Entry], list[str]]:
    """Ledger entries in design order, then the columns outside the design; and the held id
    of each column of F (its intercept column is held too, though the layout uses CONSTANT)."""
    group_of = {m: g for g, members in groups.items() for m in members}
    entries: list[Entry] = []
    ids: list[str] = []
    for name in F.columns:
        k = len(entries)
        if name == INTERCEPT:
            ids.append(held_id(-1))
        elif name in group_of:
            g = group_of[name]
            lv = name[len(g) + 1:-1]  # the recipe names an indicator "group[level]"
            ids.append(held_id(k if groups[g][0] == name else entries[-1].key, lv))
            if groups[g][0] == name:
                # Reference "all": the held indicators are exactly those the design shows.
                entries.append(Entry(k, g, "categorical", frozenset([g]), reference=ALL_LEVELS,
                                     levels=(lv,), level_ids=(ids[-1],)))
            else:
                e = entries[-1]
                entries[-1] = replace(e, levels=(*(e.levels or ()), lv),
                                      level_ids=(*(e.level_ids or ()), ids[-1]))
        else:
            ids.append(held_id(k))
            entries.append(Entry(k, name, kinds.get(name, "numeric"), frozenset([name]),
                                 held=ids[-1]))
    shown = {e.name for e in entries}
    for name, kind in kinds.items():
        if name in shown:
            continue
        k = len(entries)
        if name == response:
            entries.append(Entry(k, name, kind, frozenset([name]), role=RESPONSE,
                                 held=held_id(k)))
        elif kind == "categorical":  # no levels on the rows used: it adds no column
            entries.append(Entry(k, name, kind, frozenset([name]), levels=(), level_ids=()))
        elif kind == "date":  # never a design column
            entries.append(Entry(k, name, kind, frozenset([name])))
        else:  # left out when reduced (its missing values): the factor does not hold it
            entries.append(Entry(k, name, kind, frozenset([name]), role=DROPPED,
                                 problem="not held"))
    return entries, ids


def _start(reduced: Reduced) -> tuple[State, frozenset[str]]:
    """The ledger and held factor of a reduced dataset, and its columns with missing values."""
    F, lay = reduced.F, reduced.info.layout
    entries, ids = _entries(F, reduced.info.kinds, lay.groups, lay.response)
    resp = next((e.held for e in entries if e.role == RESPONSE), None)
    ws = Workspace(T=F.T.copy(), names=tuple(ids), visible=(), response=resp, n=F.n,
                   sum_weights=F.sum_weights)
    if resp is not None:
        ws = ws.with_response(resp)  # hold y by name too, so steps can reach it
    # Each column's length bounds its values on the rows used, the only rows this session has.
    size = {h: ws.length(h) for h in ws.names}
    missing = frozenset(c for c, k in lay.dropped_by.items() if k)
    state = State(Ledger(tuple(entries), intercept=lay.intercept), Store(ws, size, size),
                  len(entries), lay.rows_total)
    return state, missing


def _working(led: Ledger) -> WorkingColumns:
    """Working columns without rows mirroring the ledger, for the recipe's lookups and words."""
    cols = [Col(e.name, e.kind, np.empty(0), e.sources, role=e.role) for e in led.entries]
    return WorkingColumns(cols, np.empty(0, dtype=int), "", intercept=led.intercept)


def _check(led: Ledger, step: dict[str, Any], where: str) -> None:
    """The recipe's refusals for names and kinds, and ours for what the factor cannot do."""
    kind = step["step"]
    if kind not in FACTOR_STEPS:
        raise refused(f"recipe step {kind!r}")
    working = _working(led)
    try:
        if kind in ("drop", "restore"):
            role = working.get(step["column"]).role
            if kind == "drop" and role != PREDICTOR:
                raise InputError(f"{quoted(step['column'])} is not a predictor of this design",
                                 "", "Pick one of the predictors")
            if kind == "restore" and role != DROPPED:
                raise InputError(f"{quoted(step['column'])} is not dropped", "",
                                 "Pick one of the dropped columns")
        elif kind == "combine":
            if step["method"] not in FACTOR_COMBINE:
                raise refused(f"combine by {step['method']}")
            members = tuple(working.number_col(n, "combine") for n in step["columns"])
            if any(m.role == RESPONSE for m in members):
                raise InputError("the response cannot be combined into a predictor", "",
                                 "Combine predictors only")
            working.check_free(step["name"], replacing=members)
        elif kind != "intercept":
            col = working.number_col(step["column"], f"the {kind} step")
            keep = bool(step.get("keep", False))
            working.check_free(output_name(step), replacing=() if keep else (col,))
    except InputError as e:
        raise InputError(e.what, e.where or where, e.todo) from None


def _layout(led: Ledger, missing: frozenset[str], where: str) -> Layout:
    try:
        return led.layout(missing)
    except Rebuild as why:
        raise InputError(f"the design cannot be made on the factor: {why.reason}", where,
                         "Undo the last change or start a session from a file") from None


def fold(reduced: Reduced, steps: list[dict[str, Any]]) -> Folded:
    """The reduced design after the recipe's steps, each done exactly on the factor.

    Raises InputError for a step the factor cannot take (ROWS_NEEDED) or one the recipe itself
    would refuse (its own words, with the step's position).
    """
    state, missing = _start(reduced)
    used = _layout(state.ledger, missing, "").used & missing
    for pos, step in enumerate(Recipe(steps).steps, start=1):
        where = f"recipe step {pos} ({step['step']})"
        _check(state.ledger, step, where)
        try:
            state = apply_linear(state, step)
        except Rebuild as why:
            raise InputError(f"this step cannot be done exactly on the factor: {why.reason}",
                             where, TODO) from None
        try:
            now = state.ledger.layout(missing).used & missing
        except Rebuild:
            continue  # a design on the way may be empty; only the last one must hold
        if now != used:
            # Missing values in a column left out or brought in would change the rows used.
            raise refused(where)
    layout = _layout(state.ledger, missing, f"recipe step {len(steps)}" if steps else "")
    store = state.store.shown(layout.visible, layout.response_id)
    F = replace(store.ws.factorization(), columns=list(layout.columns))
    return Folded(F, layout, state.ledger)
