"""Starting point of the edit engine: replay the recipe once, hold every usable column's factor.

The one place in rankscope.scale that reads rows; edits after it work on the factor alone.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
import pandas as pd

from rankscope.core.reduce import block_rows, reduce_blocks, shifts_of, unshift
from rankscope.core.workspace import Workspace
from rankscope.design.apply_roles import levels_of
from rankscope.design.design import Design
from rankscope.design.recipe import Recipe
from rankscope.design.replay import run_steps, trace_design
from rankscope.design.working import Col, WorkingColumns
from rankscope.scale.ledger import Entry, Ledger
from rankscope.scale.store import Store
from rankscope.tables.table import Table


@dataclass(frozen=True)
class Start:
    """What one replay gives the engine."""

    design: Design
    ledger: Ledger
    store: Store
    with_missing: frozenset[str]
    next_key: int


def held_id(key: int, level: str | None = None) -> str:
    """Workspace name of a working column (or of one level's indicator); never a design name."""
    return f"#{key}" if level is None else f"#{key}:{level}"


def _abs_max(values: np.ndarray) -> float:
    present = values[~np.isnan(values)]
    return float(np.abs(present).max()) if present.size else 0.0


def _entries(working: WorkingColumns, first: WorkingColumns
             ) -> tuple[list[Entry], dict[str, np.ndarray], dict[str, float]]:
    """Entries for the working columns, the arrays to hold, and each array's bound.

    working: the final pass (rows kept); first: the pass over all rows (the same columns in the
    same order, since the steps' structure does not depend on the rows).
    """
    key_of = {id(c): k for k, c in enumerate(working.cols)}
    entries: list[Entry] = []
    arrays: dict[str, np.ndarray] = {}
    bounds: dict[str, float] = {}
    for k, (c, c1) in enumerate(zip(working.cols, first.cols, strict=True)):
        held, levels, level_ids = None, None, None
        if c.kind in ("numeric", "boolean") and np.all(np.isfinite(c.values)):
            held = held_id(k)
            arrays[held] = c.values
            bounds[held] = max(_abs_max(c.values), _abs_max(c1.values))
        elif c.kind == "categorical" and not np.any(pd.isna(c.values)):
            levels = tuple(levels_of(c))
            level_ids = tuple(held_id(k, lv) for lv in levels)
            for lv, hid in zip(levels, level_ids, strict=True):
                arrays[hid] = (c.values == lv).astype(float)
                bounds[hid] = 1.0
        anchor = None if c.anchor is None else key_of.get(id(c.anchor), -1)
        entries.append(Entry(
            key=k, name=c.name, kind=c.kind, sources=c.sources, role=c.role,
            reference=c.reference, on_missing=c.on_missing, anchor=anchor, problem=c.problem,
            held=held, levels=levels, level_ids=level_ids,
        ))
    return entries, arrays, bounds


def _row_blocks(arrays: list[np.ndarray], y: np.ndarray, n: int,
                shifts: np.ndarray) -> Iterator[np.ndarray]:
    """Row blocks of [1, held columns − shifts, y − shift], never the whole matrix at once
    (the shifts keep offsets from costing digits; reduce.unshift puts them back)."""
    k = len(arrays) + 2
    step = block_rows(k)
    for s in range(0, n, step):
        sl = slice(s, min(s + step, n))
        B = np.empty((sl.stop - sl.start, k), order="F")  # LAPACK's layout: no copy there
        B[:, 0] = 1.0
        for j, a in enumerate(arrays, start=1):
            np.subtract(a[sl], shifts[j], out=B[:, j])
        np.subtract(y[sl], shifts[k - 1], out=B[:, k - 1])
        yield B


def start(table: Table, recipe: Recipe) -> Start:
    """Replay the recipe (as build_design does) and factor every column an edit may show."""
    steps = recipe.steps
    trace = trace_design(table, steps)
    design, working = trace.design, trace.working
    n_all = table.n_rows
    first = working
    if design.rows_used < n_all:
        # The recipe's first pass ran on all rows; its values bound what edits meet there.
        first = run_steps(table, steps, np.arange(n_all), strict=True)
    entries, arrays, bounds = _entries(working, first)
    ids = list(arrays)
    resp: Col | None = working.response()
    resp_id = None
    if resp is not None:
        resp_id = entries[next(k for k, c in enumerate(working.cols) if c is resp)].held
    n = working.n
    y = arrays[resp_id] if resp_id is not None else np.zeros(n)
    held = [arrays[h] for h in ids]
    head = min(n, block_rows(len(ids) + 2))
    shifts = shifts_of(np.column_stack([np.zeros(head)] + [a[:head] for a in held]
                                       + [y[:head]]))
    T = unshift(reduce_blocks(_row_blocks(held, y, n, shifts), len(ids) + 2), shifts)
    ws = Workspace(T=T, names=tuple(ids), visible=(), response=resp_id, n=n,
                   sum_weights=float(n))
    scale = {h: float(np.linalg.norm(T[:, 1 + i])) for i, h in enumerate(ids)}
    with_missing = frozenset(str(c) for c in table.columns if table.frame[c].isna().any())
    ledger = Ledger(tuple(entries), intercept=working.intercept)
    store = Store(ws, bounds, scale)
    layout = ledger.layout(with_missing)
    store = store.shown(layout.visible, layout.response_id)
    return Start(design, ledger, store, with_missing, next_key=len(entries))
