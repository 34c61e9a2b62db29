"""One block of rows through the recipe: row-wise steps run as rankscope.design runs them, statistic
steps are held back as forms. Never computes a mean, spread, length or component on a block.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from rankscope.design.apply_columns import apply_single, check_finite, place
from rankscope.design.apply_groups import apply_combine, apply_product
from rankscope.design.apply_kind import apply_kind
from rankscope.design.apply_roles import apply_indicators
from rankscope.design.names import quoted
from rankscope.design.replay import APPLY
from rankscope.design.steps import ALL_LEVELS, output_name
from rankscope.design.working import PREDICTOR, RESPONSE, Col, WorkingColumns, derived
from rankscope.scale.stream_forms import (
    DEFERRED,
    REAL,
    STAT_OPS,
    STAT_SINGLE,
    TAINTED,
    Entry,
    Form,
    Frozen,
    Key,
    Shape,
    StatStep,
    Tracker,
)
from rankscope.scale.stream_partial import Partial
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

ROLE_STEPS = ("response", "intercept", "drop", "restore", "missing")
ROW_SINGLE = ("log", "power")


def _surrogate(col: Col, kind: str = "numeric") -> np.ndarray:
    """Stand-in values for a column computed later: missing where its inputs are missing."""
    gone = col.missing()
    if kind == "categorical":
        out = np.full(len(gone), "", dtype=object)
        out[gone] = None
        return out
    return np.where(gone, np.nan, 0.0)


class Replay:
    """Runs the steps on one block; `frozen` holds statistics learned in earlier passes."""

    def __init__(self, steps: Sequence[dict[str, Any]], frozen: dict[int, Frozen]) -> None:
        self.steps = list(steps)
        self.frozen = frozen

    def run(self, table: Table, start: int) -> Partial:
        run = _Run(table, start, self.frozen)
        for pos, step in enumerate(self.steps, start=1):
            try:
                with np.errstate(all="ignore"):
                    made = run.apply(pos, step)
            except InputError as e:
                where = f"recipe step {pos} ({step['step']})"
                raise InputError(e.what, f"{where}, {e.where}" if e.where else where,
                                 e.todo) from e
            run.working.made.append(made)
            for j, c in enumerate(made):
                run.key[c] = ("s", pos, j)
                run.col_of[("s", pos, j)] = c
            run.finish_step(pos)
        return run.partial()


class _Run:
    """The state of one block's replay: keys, states and held-back forms of its columns."""

    def __init__(self, table: Table, start: int, frozen: dict[int, Frozen]) -> None:
        m = table.n_rows
        self.table = table
        self.frozen = frozen
        self.working = WorkingColumns.from_table(table, np.arange(m), strict=True)
        self.working.rows = start + np.arange(m)  # messages name file rows, not block rows
        self.key: dict[Col, Key] = {c: ("t", c.name) for c in self.working.cols}
        self.col_of: dict[Key, Col] = {("t", c.name): c for c in self.working.cols}
        self.state: dict[Col, str] = {}
        self.forms: dict[Key, Form] = {}
        self.pending: list[tuple[Col, str, tuple[Col, ...], float]] = []
        self.stats: dict[int, StatStep] = {}
        self.stat_cols: dict[int, list[Col]] = {}
        self.seen_all: dict[int, Tracker] = {}
        self.ind_levels: dict[int, set[str]] = {}
        self.indicator_steps: list[tuple[int, str, str]] = []
        self.stat_of: dict[Col, int] = {}  # outputs of statistic steps

    # ---- bookkeeping ---------------------------------------------------------------------
    def st(self, col: Col) -> str:
        return self.state.get(col, REAL)

    def worst(self, cols: Sequence[Col]) -> str:
        states = {self.st(c) for c in cols}
        return TAINTED if TAINTED in states else DEFERRED if DEFERRED in states else REAL

    def hold_back(self, out: Col, op: str, inputs: Sequence[Col], by: float = 1.0) -> None:
        """Mark `out` as computed on the factor (its key is known once the step returns)."""
        self.state[out] = DEFERRED
        self.pending.append((out, op, tuple(inputs), by))

    def finish_step(self, pos: int) -> None:
        for out, op, inputs, by in self.pending:
            k = self.key[out]
            self.forms[k] = Form(k, op, tuple(self.key[c] for c in inputs), pos, out.name, by)
        self.pending = []

    def upstream(self, col: Col) -> frozenset[int]:
        """Statistic steps whose output the column is computed from."""
        found, stack, seen = set(), [col], set()
        while stack:
            c = stack.pop()
            if id(c) in seen:
                continue
            seen.add(id(c))
            if c in self.stat_of:
                found.add(self.stat_of[c])
            stack.extend(c.parents)
        return frozenset(found)

    def track(self, pos: int, op: str, cols: list[Col], output: str) -> None:
        real = all(self.st(c) == REAL for c in cols)
        self.stats[pos] = StatStep(op, tuple(c.name for c in cols), output, real)
        if real:
            self.stat_cols[pos] = cols
            tr = Tracker()
            tr.see(np.column_stack([c.values for c in cols]))
            self.seen_all[pos] = tr

    # ---- steps ---------------------------------------------------------------------------
    def apply(self, pos: int, step: dict[str, Any]) -> list[Col]:
        kind = step["step"]
        b = self.working
        if kind in ROLE_STEPS:
            return APPLY[kind](b, step)
        if kind == "indicators":
            return self._indicators(pos, step)
        if kind in STAT_SINGLE:
            return self._stat(pos, step)
        if kind == "multiply":
            col = b.number_col(step["column"], "the multiply step")
            state = self.st(col)
            out = apply_single(b, step)  # on stand-in values when col is held back
            if state == DEFERRED:
                self.hold_back(out[0], "multiply", [col], float(step["by"]))
            elif state == TAINTED:
                self.state[out[0]] = TAINTED
            return out
        if kind in ROW_SINGLE:
            col = b.number_col(step["column"], f"the {kind} step")
            if self.st(col) == REAL:
                return apply_single(b, step)
            out = derived(output_name(step), "numeric", _surrogate(col), (col,))
            place(b, col, out, bool(step.get("keep", False)))
            self.state[out] = TAINTED
            return [out]
        if kind == "kind":
            col = b.get(step["column"])
            if self.st(col) == REAL or col.kind == step["to"]:
                return apply_kind(b, step)
            if col.role == RESPONSE and step["to"] == "categorical":
                return apply_kind(b, step)  # refuses, in the recipe's words
            new = derived(col.name, step["to"], _surrogate(col, step["to"]), (col,))
            b.replace(col, new)
            self.state[new] = TAINTED
            return [new]
        if kind == "product":
            return self._product(step)
        if kind == "combine":
            return self._combine(pos, step)
        raise AssertionError(f"no streaming rule for step {kind}")

    def _indicators(self, pos: int, step: dict[str, Any]) -> list[Col]:
        name = step["column"]
        apply_indicators(self.working, {"step": "indicators", "column": name})  # kind check
        col = self.working.get(name)
        reference = step.get("reference")
        col.reference = reference
        if reference not in (None, ALL_LEVELS) and self.st(col) == REAL:
            # The recipe checks the level on every row; one block may lack it.
            present = col.values[~col.missing()]
            self.ind_levels[pos] = set(pd.unique(present).tolist())
            self.indicator_steps.append((pos, col.name, str(reference)))
        return []

    def _stat(self, pos: int, step: dict[str, Any]) -> list[Col]:
        kind = step["step"]
        col = self.working.number_col(step["column"], f"the {kind} step")
        state = self.st(col)
        name = output_name(step)
        self.track(pos, kind, [col], name)
        if state == REAL and pos in self.frozen:
            values = self.frozen[pos].apply(col.values[:, None])
            check_finite(self.working, [col], values, f"the {kind} of {quoted(col.name)}")
        else:
            values = _surrogate(col)
        out = derived(name, "numeric", values, (col,))
        place(self.working, col, out, bool(step.get("keep", False)))
        self.stat_of[out] = pos
        if state == TAINTED:
            self.state[out] = TAINTED
        elif not (state == REAL and pos in self.frozen):
            self.hold_back(out, kind, [col])
        return [out]

    def _product(self, step: dict[str, Any]) -> list[Col]:
        a_name, b_name = step["columns"]
        a = self.working.number_col(a_name, "a product")
        b = self.working.number_col(b_name, "a product")
        if self.worst([a, b]) == REAL:
            return apply_product(self.working, step)
        gone = a.missing() | b.missing()
        out = derived(step["name"], "numeric", np.where(gone, np.nan, 0.0),
                      (a,) if a is b else (a, b))
        self.working.check_free(out.name)
        self.working.insert_after(a, out)
        self.state[out] = TAINTED
        return [out]

    def _combine(self, pos: int, step: dict[str, Any]) -> list[Col]:
        method = step["method"]
        members = [self.working.number_col(n, "combine") for n in step["columns"]]
        state = self.worst(members)
        if method == "first_component":
            self.track(pos, "first_component", members, step["name"])
            frozen = state == REAL and pos in self.frozen
            X = np.column_stack([m.values for m in members])
            # The recipe's own checks and placement, on a mean that cannot fail the component.
            out = apply_combine(self.working, {**step, "method": "mean"})
            self.stat_of[out[0]] = pos
            if frozen:
                out[0].values = self.frozen[pos].apply(X)
            else:
                out[0].values = np.where(np.isnan(X).any(axis=1), np.nan, 0.0)
                if state == TAINTED:
                    self.state[out[0]] = TAINTED
                else:
                    self.hold_back(out[0], "first_component", members)
            return out
        if state == REAL:
            return apply_combine(self.working, step)
        if method == "ratio":
            # Placement and checks of a two-member combine on stand-in values.
            out = apply_combine(self.working, {**step, "method": "difference"})
            self.state[out[0]] = TAINTED
            return out
        out = apply_combine(self.working, step)
        if state == TAINTED:
            self.state[out[0]] = TAINTED
        else:
            self.hold_back(out[0], method, members)
        return out

    # ---- the block's contribution ---------------------------------------------------------
    def entries(self) -> list[Entry]:
        out = []
        for c in self.working.cols:
            if c.role in (PREDICTOR, RESPONSE):
                out.append(Entry(self.key[c], c.name, c.kind, c.role, c.on_missing, c.reference,
                                 c.sources, self.st(c), self.upstream(c)))
        return out

    def wants(self, used: list[Col]) -> set[int]:
        """Statistic steps to learn before the rows of a used column can be computed: those
        held back upstream of a row-wise step that a used column depends on."""
        found: set[int] = set()
        stack = [c for c in used if self.st(c) == TAINTED]
        seen: set[int] = set()
        while stack:
            c = stack.pop()
            if id(c) in seen:
                continue
            seen.add(id(c))
            if self.st(c) == DEFERRED:
                found |= self.form_steps(self.key[c])
            elif self.st(c) == TAINTED:
                stack.extend(c.parents)
        return found

    def form_steps(self, key: Key) -> set[int]:
        """Statistic steps among a held-back column's forms, through its held-back inputs."""
        out: set[int] = set()
        todo = [key]
        while todo:
            f = self.forms.get(todo.pop())
            if f is None:
                continue
            if f.op in STAT_OPS:
                out.add(f.step)
            todo.extend(f.inputs)
        return out

    def real_inputs(self, key: Key) -> set[Key]:
        """The computed-on-rows columns a held-back column is made from."""
        out: set[Key] = set()
        todo = [key]
        while todo:
            k = todo.pop()
            f = self.forms.get(k)
            if f is None:
                out.add(k)
            else:
                todo.extend(f.inputs)
        return out

    def partial(self) -> Partial:
        table = self.table
        m = table.n_rows
        missing = {str(c): np.asarray(table.frame[c].isna(), dtype=bool) for c in table.columns}
        order = [str(c) for c in table.columns]
        entries = self.entries()
        by_key = {self.key[c]: c for c in self.working.cols}
        used: list[Entry] = []
        missing_in: dict[Key, int] = {}
        for e in entries:
            if e.role == PREDICTOR and e.kind == "date":
                continue
            if e.role == PREDICTOR and e.on_missing == "drop_column":
                gone = np.logical_or.reduce([missing[s] for s in sorted(e.sources)])
                missing_in[e.key] = int(gone.sum())
                # Left out here only if missing here; a column without a missing value in a
                # block deletes no row of it, so the rows kept agree with the whole-file plan.
                if missing_in[e.key]:
                    continue
            used.append(e)
        sources = set().union(*(e.sources for e in used)) if used else set()
        kept = np.ones(m, dtype=bool)
        dropped_by: dict[str, int] = {}
        for s in order:
            if s in sources:
                hit = kept & missing[s]
                if hit.any():
                    dropped_by[s] = int(hit.sum())
                    kept &= ~missing[s]
        wants = self.wants([by_key[e.key] for e in used])
        columns: dict[Key, np.ndarray] = {}
        levels: dict[Key, dict[str, int]] = {}
        bases: set[Key] = set()
        for e in used:
            if e.state == DEFERRED:
                bases |= self.real_inputs(e.key)
            elif e.state == REAL and e.kind == "categorical":
                codes, uniq = pd.factorize(by_key[e.key].values[kept])
                counts = np.bincount(codes, minlength=len(uniq))
                levels[e.key] = {str(u): int(n) for u, n in zip(uniq, counts, strict=True)}
                for i, u in enumerate(uniq):
                    columns[("l", e.key, str(u))] = (codes == i).astype(float)
            elif e.state == REAL:
                bases.add(e.key)
        for pos in wants:
            for k in self.forms:
                if self.forms[k].step == pos:
                    bases |= self.real_inputs(k)
        for k in sorted(bases, key=repr):
            columns[k] = np.asarray(self.col_of[k].values[kept], dtype=float)
        seen_kept: dict[int, Tracker] = {}
        for pos, cols in self.stat_cols.items():
            tr = Tracker()
            tr.see(np.column_stack([c.values[kept] for c in cols]))
            seen_kept[pos] = tr
        shape = Shape(
            entries=tuple(entries), intercept=self.working.intercept, forms=dict(self.forms),
            wants=frozenset(wants), notes=tuple(self.working.notes), order=tuple(order),
            stats=dict(self.stats), indicators=tuple(self.indicator_steps),
        )
        return Partial.from_block(
            shape, columns, rows=m, kept=int(kept.sum()), dropped_by=dropped_by,
            missing_in=missing_in, levels=levels, ind_levels=self.ind_levels,
            seen_all=self.seen_all, seen_kept=seen_kept,
        )
