"""Analysis of a file too big for memory: the recipe run block by block into one small factor.

Holds one block of rows at a time; statistics over all kept rows come from the factor, never
from a block; no command-line options or printing (the CLI's `check --stream` calls it).
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from rankscope.core.factor import Factorization
from rankscope.design.design import Design
from rankscope.design.recipe import Recipe
from rankscope.scale.stream_finish import Layout, finish, learn
from rankscope.scale.stream_forms import Frozen
from rankscope.scale.stream_partial import Partial
from rankscope.scale.stream_replay import Replay
from rankscope.scale.stream_source import Retype, Source, open_source
from rankscope.tables.errors import InputError

#: Rows per block: small enough for bounded memory, large enough that Python's per-block
#: work is a small share of the time.
BLOCK_ROWS = 100_000

Progress = Callable[[int, int, int], None]


class Cancelled(Exception):
    """The caller set the cancel event; the stream stopped between two blocks."""


@dataclass
class StreamInfo:
    """What the streamed design is, with the facts build_design and read_table would report."""

    source: str
    kinds: dict[str, str]
    layout: Layout
    table_notes: list[str] = field(default_factory=list)
    passes: int = 1
    blocks: int = 0
    bytes_total: int = 0
    seconds: float = 0.0

    @property
    def columns(self) -> list[str]:
        return self.layout.columns

    @property
    def response(self) -> str | None:
        return self.layout.response

    @property
    def groups(self) -> dict[str, list[str]]:
        return self.layout.groups

    def design(self) -> Design:
        """A Design with the streamed design's names and counts and no rows (X has 0 rows),
        for reports that describe a design without reading it."""
        lay = self.layout
        return Design(X=np.zeros((0, len(lay.columns))), columns=list(lay.columns),
                      response=lay.response, groups=dict(lay.groups),
                      rows_total=lay.rows_total, rows_used=lay.rows_used,
                      dropped_by=dict(lay.dropped_by), notes=list(lay.notes),
                      references=dict(lay.references))


def _as_recipe(recipe: Recipe | list | None) -> Recipe:
    if recipe is None:
        return Recipe()
    return recipe if isinstance(recipe, Recipe) else Recipe(recipe)


def stream_factor(path: str | Path, recipe: Recipe | list | None = None, *,
                  block_rows: int = BLOCK_ROWS, progress: Progress | None = None,
                  cancel: threading.Event | None = None, kinds: dict[str, str] | None = None,
                  name: str | None = None) -> tuple[Factorization, StreamInfo]:
    """The Factorization of the design build_design(read_table(path), recipe) would give,
    reading the file (CSV/TSV, optionally .gz, or Parquet) one block of rows at a time.

    progress(rows_done, bytes_done, bytes_total) is called after each block; when a recipe
    needs a statistic before a row-wise step (center, then square), the file is read again
    and bytes_total counts every pass. cancel: checked between blocks; raises Cancelled.
    Raises InputError for anything a user can fix, as read_table and build_design do.
    """
    if block_rows < 1:
        raise ValueError("block_rows must be positive")
    source = open_source(path, name=name, kinds=kinds)
    return stream_source(source, _as_recipe(recipe), block_rows=block_rows,
                         progress=progress, cancel=cancel)


def stream_source(source: Source, recipe: Recipe, *, block_rows: int = BLOCK_ROWS,
                  progress: Progress | None = None, cancel: threading.Event | None = None
                  ) -> tuple[Factorization, StreamInfo]:
    """stream_factor on a Source already opened (its kinds decide the recipe's defaults)."""
    started = time.monotonic()
    steps = recipe.steps
    frozen: dict[int, Frozen] = {}
    passes = 0
    # Each pass learns the statistics of one more level of statistic-before-row-wise steps.
    for _ in range(len(steps) + 3):
        passes += 1
        while True:
            try:
                part = _one_pass(source, steps, frozen, block_rows, progress, cancel, passes)
                break
            except Retype as r:
                # A column read as numbers holds text further down: the readers' text rules
                # decide it (or refuse it with its row), from the first row again.
                source.as_text.add(r.column)
        todo = part.shape.wants - frozen.keys()
        if not todo:
            F, layout = finish(part, source.where)
            info = StreamInfo(source=source.where, kinds=dict(source.kinds), layout=layout,
                              table_notes=list(source.notes), passes=passes,
                              blocks=part.blocks, bytes_total=source.bytes_total,
                              seconds=time.monotonic() - started)
            return F, info
        frozen.update(learn(part))
    raise AssertionError("the recipe's statistics did not settle")


def _one_pass(source: Source, steps: list[dict], frozen: dict[int, Frozen], block_rows: int,
              progress: Progress | None, cancel: threading.Event | None, number: int
              ) -> Partial:
    replay = Replay(steps, frozen)
    total: Partial | None = None
    planned = number
    for block in source.blocks(block_rows):
        if cancel is not None and cancel.is_set():
            raise Cancelled(f"stopped at row {block.start + 1:,} of {source.where}")
        part = replay.run(block.table, block.start)
        if total is None:
            total = part
            # The first block shows whether another pass will follow (statistics wanted).
            planned = number + (1 if part.shape.wants - frozen.keys() else 0)
        else:
            total.absorb(part)
        if progress is not None:
            done = source.bytes_total * (number - 1) + block.bytes_done
            progress(total.rows, done, source.bytes_total * planned)
    if total is None:
        raise InputError("The table has a header row but no data rows", source.where,
                         "Add the data below the header row")
    return total
