"""After a pass: statistic steps done on the factor through a Workspace, then the design's
Factorization with the names, groups and notes build_design would give. Reads no rows.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from rankscope.core.factor import Factorization
from rankscope.core.reduce import unshift, upper_sign_fixed
from rankscope.core.workspace import CONSTANT, Workspace
from rankscope.design.assemble import coded_levels
from rankscope.design.design import INTERCEPT
from rankscope.design.names import level_order, number_text, quoted, suggestion
from rankscope.design.steps import ALL_LEVELS
from rankscope.design.working import PREDICTOR, RESPONSE
from rankscope.scale.stream_forms import DEFERRED, Entry, Form, Frozen, Key, Tracker
from rankscope.scale.stream_partial import Partial
from rankscope.tables.errors import InputError

KEPT = "on the rows kept after deleting rows with missing values, "
#: A centered length below this share of the column's length is rounding: no spread.
FLAT = 1e-13


@dataclass
class Layout:
    """The design as build_design would describe it (without X and y)."""

    columns: list[str]
    response: str | None
    groups: dict[str, list[str]]
    intercept: bool
    rows_total: int
    rows_used: int
    dropped_by: dict[str, int]
    notes: list[str] = field(default_factory=list)
    references: dict[str, str] = field(default_factory=dict)


def _refuse(pos: int, op: str, what: str, todo: str, kept: bool) -> InputError:
    # On all rows the recipe refuses at the step; on the kept rows only when the column is used.
    if kept:
        return InputError(KEPT + what, "", todo)
    return InputError(what, f"recipe step {pos} ({op})", todo)


def _check_tracker(pos: int, op: str, names: tuple[str, ...], output: str, tr: Tracker,
                   kept: bool) -> None:
    """The recipe's own refusals for a statistic step, from exact counts and ranges."""
    if op == "center" and tr.count == 0:
        raise _refuse(pos, op, f"{quoted(names[0])} has no values", "", kept)
    if op == "standardize" and (tr.count < 2 or tr.lo[0] == tr.hi[0]):
        shown = number_text(tr.lo[0]) if tr.count else "missing"
        raise _refuse(pos, op, f"{quoted(names[0])} has no spread (every value is {shown}), so "
                      "it cannot be divided by its standard deviation",
                      "Use a center step instead, or drop the column", kept)
    if op == "unit_length" and (tr.count == 0 or (tr.lo[0] == 0 and tr.hi[0] == 0)):
        raise _refuse(pos, op, f"{quoted(names[0])} is all zero, so it has no length to "
                      "divide by", "Drop the column", kept)
    if op == "first_component":
        if tr.count < 2:
            raise _refuse(pos, "combine", f"the first component needs at least 2 rows where "
                          f"{output}'s members all have values", "", kept)
        for j, name in enumerate(names):
            if tr.lo[j] == tr.hi[j]:
                raise _refuse(pos, "combine", f"{quoted(name)} is constant, so it cannot be "
                              "standardized for the component", "Leave it out of the group", kept)


def _plan(p: Partial) -> tuple[list[Entry], Entry | None, list[str]]:
    """Used predictors in order, the response, and notes on what was left out."""
    preds, notes, dates = [], [], []
    for e in p.shape.entries:
        if e.role != PREDICTOR:
            continue
        if e.kind == "date":
            dates.append(e)
        elif e.on_missing == "drop_column" and p.missing_in.get(e.key, 0):
            notes.append(f"Left out {quoted(e.name)}: it is missing in {p.missing_in[e.key]} "
                         "row(s) and its missing policy is drop_column.")
        else:
            preds.append(e)
    notes += [f"Left out the date column {quoted(e.name)}; a kind step can make it numeric "
              "(days since 1970-01-01)." for e in dates]
    resp = next((e for e in p.shape.entries if e.role == RESPONSE), None)
    return preds, resp, notes


def workspace(p: Partial) -> tuple[Workspace, dict[Key, str]]:
    """The pass's factor as a Workspace of [1, held columns, y = 0]."""
    k = 1 + len(p.bases)
    T = np.zeros((k + 1, k + 1))
    T[:k, :k] = unshift(upper_sign_fixed(p.R), np.concatenate([[0.0], p.shift]))
    ids = {key: f"#{i}" for i, key in enumerate(p.bases)}
    ws = Workspace(T=T, names=tuple(ids.values()), visible=(), response=None, n=p.kept,
                   sum_weights=float(p.kept))
    return ws, ids


def _closure(forms: dict[Key, Form], roots: list[Key]) -> list[Form]:
    """The forms the roots are made from, in the order the recipe made them."""
    out: dict[Key, Form] = {}
    todo = list(roots)
    while todo:
        k = todo.pop()
        if k in forms and k not in out:
            out[k] = forms[k]
            todo.extend(forms[k].inputs)
    return sorted(out.values(), key=lambda f: (f.step, f.key))


def _component(ws: Workspace, x: list[str], name: str, members: list[str], pos: int
               ) -> tuple[dict[str, float], Frozen, str]:
    """The first principal component of the standardized members, as a combination.

    The standardized members have the factor T[1:, x]·diag(1/sd) (same Gram matrix), so
    their right singular vectors come from that small block (Golub & Van Loan, Matrix
    Computations, 4th ed., §8.6). The sign rule is the recipe's: the largest weight positive.
    """
    if ws.n < 2:
        raise _refuse(pos, "combine", f"the first component needs at least 2 rows where {name}'s "
                      "members all have values", "", True)
    C = ws.column_block(x)[1:]
    lengths = np.linalg.norm(C, axis=0)
    for m, cl, hid in zip(members, lengths, x, strict=True):
        if not cl > FLAT * ws.length(hid):
            raise _refuse(pos, "combine", f"{quoted(m)} is constant, so it cannot be "
                          "standardized for the component", "Leave it out of the group", True)
    sd = lengths / math.sqrt(ws.n - 1)
    _, s, vt = np.linalg.svd(C / sd, full_matrices=False)
    w = vt[0] * np.sign(vt[0][np.argmax(np.abs(vt[0]))])
    means = np.array([ws.mean(h) for h in x])
    combo = {h: float(wj / sj) for h, wj, sj in zip(x, w, sd, strict=True)}
    combo[CONSTANT] = float(-np.sum(w * means / sd))
    share = float(s[0] ** 2 / np.sum(s**2))
    listed = ", ".join(f"{quoted(m)} {number_text(round(float(wj), 3))}"
                       for m, wj in zip(members, w, strict=True))
    note = (f"{quoted(name)} is the first principal component of its standardized members; "
            f"it carries {share:.0%} of their variance (weights: {listed}).")
    frozen = Frozen(tuple(means.tolist()), tuple(sd.tolist()), tuple(w.tolist()))
    return combo, frozen, note


def resolve(p: Partial, ws: Workspace, ids: dict[Key, str], forms: list[Form]
            ) -> tuple[Workspace, dict[int, Frozen], list[str]]:
    """Add each held-back column to the Workspace as a combination of held columns; return
    the statistics learned (for a later pass) and the recipe's notes on components."""
    learned: dict[int, Frozen] = {}
    notes: list[str] = []
    stats = p.shape.stats
    for f in forms:
        x = [ids[k] for k in f.inputs]
        names = stats[f.step].inputs if f.step in stats else ()
        if f.op == "center":
            mean = ws.mean(x[0])
            combo, learned[f.step] = {x[0]: 1.0, CONSTANT: -mean}, Frozen((mean,), (1.0,))
        elif f.op == "standardize":
            cl = float(np.linalg.norm(ws.column_block(x)[1:]))
            if ws.n < 2 or not cl > FLAT * ws.length(x[0]):
                raise _refuse(f.step, f.op, f"{quoted(names[0])} has no spread, so it cannot be "
                              "divided by its standard deviation",
                              "Use a center step instead, or drop the column", True)
            mean, sd = ws.mean(x[0]), ws.sd(x[0])
            combo = {x[0]: 1.0 / sd, CONSTANT: -mean / sd}
            learned[f.step] = Frozen((mean,), (sd,))
        elif f.op == "unit_length":
            length = ws.length(x[0])
            if length == 0.0:
                raise _refuse(f.step, f.op, f"{quoted(names[0])} is all zero, so it has no "
                              "length to divide by", "Drop the column", True)
            combo, learned[f.step] = {x[0]: 1.0 / length}, Frozen((0.0,), (length,))
        elif f.op == "first_component":
            combo, learned[f.step], note = _component(ws, x, f.name, list(names), f.step)
            notes.append(note)
        elif f.op == "multiply":
            combo = {x[0]: f.by}
        elif f.op == "sum":
            combo = {h: 1.0 for h in x}
        elif f.op == "mean":
            combo = {h: 1.0 / len(x) for h in x}
        elif f.op == "difference":
            combo = {x[0]: 1.0, x[1]: -1.0}
        else:
            raise AssertionError(f"no factor rule for {f.op}")
        hid = f"#{len(ws.names)}"
        ws = ws.add(hid, combo)
        ids[f.key] = hid
    return ws, learned, notes


def learn(p: Partial) -> dict[int, Frozen]:
    """Statistics of the steps the pass asked for (shape.wants), from its factor."""
    ws, ids = workspace(p)
    roots = [k for k, f in p.shape.forms.items() if f.step in p.shape.wants]
    _, learned, _ = resolve(p, ws, ids, _closure(p.shape.forms, roots))
    return {s: v for s, v in learned.items() if s in p.shape.wants}


def _checks(p: Partial, used: list[Entry]) -> None:
    shape = p.shape
    for pos, ref in ((s, r) for s, _, r in shape.indicators):
        levels = p.ind_levels.get(pos, set())
        if ref not in levels:
            name = next(c for s, c, _ in shape.indicators if s == pos)
            raise InputError(f"{quoted(name)} has no level {quoted(ref)}",
                             f"recipe step {pos} (indicators)",
                             suggestion(ref, level_order(levels))
                             + f', or "{ALL_LEVELS}" to keep every level')
    upstream = set().union(*(e.uses for e in used)) if used else set()
    for pos, st in sorted(shape.stats.items()):
        if st.real and pos in p.seen_all:
            _check_tracker(pos, st.op, st.inputs, st.output, p.seen_all[pos], kept=False)
    for pos, st in sorted(shape.stats.items()):
        if st.real and pos in upstream and pos in p.seen_kept:
            _check_tracker(pos, st.op, st.inputs, st.output, p.seen_kept[pos], kept=True)


def _indicators(e: Entry, levels: dict[str, int], notes: list[str]) -> list[tuple[str, Key]]:
    """As the recipe's assembly: levels on the rows used, sorted; the reference left out."""
    present = level_order(lv for lv, n in levels.items() if n > 0)
    kept = coded_levels(e.name, present, e.reference, notes)
    return [(f"{e.name}[{lv}]", ("l", e.key, lv)) for lv in kept]


def _deletion_note(total: int, used: int, dropped_by: dict[str, int]) -> str:
    counts = ", ".join(f"{quoted(c)} {k}" for c, k in dropped_by.items())
    several = " (a row missing several columns counts under the first in table order)"
    return (f"Deleted {total - used} of {total} rows with a missing value: {counts}"
            f"{several if len(dropped_by) > 1 else ''}.")


def finish(p: Partial, where: str) -> tuple[Factorization, Layout]:
    """The design's Factorization (no rows kept) and its layout, from the last pass."""
    if p.rows == 0:
        raise InputError("the table has no rows", where, "Check the file")
    preds, resp, left_notes = _plan(p)
    used = preds + ([resp] if resp is not None else [])
    dropped_by = {c: p.dropped_by[c] for c in p.shape.order if c in p.dropped_by}
    if p.kept == 0:
        worst = max(dropped_by, key=dropped_by.__getitem__)
        raise InputError(
            "no rows are left after deleting rows with a missing value", where,
            f"Most are missing {quoted(worst)}; leave it out with "
            f'{{"step": "missing", "column": "{worst}", "policy": "drop_column"}}')
    _checks(p, used)
    ws, ids = workspace(p)
    held_back = [e.key for e in used if e.state == DEFERRED]
    ws, _, comp_notes = resolve(p, ws, ids, _closure(p.shape.forms, held_back))
    names: list[str] = [INTERCEPT] if p.shape.intercept else []
    visible: list[str] = [CONSTANT] if p.shape.intercept else []
    groups: dict[str, list[str]] = {}
    references: dict[str, str] = {}
    coding: list[str] = []
    for e in preds:
        if e.kind == "categorical":
            levels = p.levels.get(e.key, {})
            pairs = _indicators(e, levels, coding)
            if pairs:
                groups[e.name] = [n for n, _ in pairs]
                present = level_order(lv for lv, k in levels.items() if k > 0)
                ref = e.reference if e.reference is not None else present[0]
                if ref != ALL_LEVELS:
                    references[e.name] = ref
        else:
            pairs = [(e.name, e.key)]
        for name, key in pairs:
            if name in names:
                raise InputError(f"two design columns would both be named {quoted(name)}", "",
                                 "Rename one of them (steps that make columns take a name field)")
            names.append(name)
            visible.append(ids[key])
    if not names:
        raise InputError("the design has no columns", "",
                         "Restore a column or include the intercept")
    ws = replace(ws, visible=tuple(visible))
    if resp is not None:
        ws = ws.with_response(ids[resp.key])
    F = replace(ws.factorization(), columns=names)
    notes = [_deletion_note(p.rows, p.kept, dropped_by)] if p.kept < p.rows else []
    notes += list(p.shape.notes) + comp_notes + coding + left_notes
    layout = Layout(columns=names, response=None if resp is None else resp.name, groups=groups,
                    intercept=p.shape.intercept, rows_total=p.rows, rows_used=p.kept,
                    dropped_by=dropped_by, notes=notes, references=references)
    return F, layout
