"""The streaming reduction on a Dask cluster: each Parquet row group reduced to its triangle on
a worker, the triangles merged in a tree. Dask is optional; nothing imports it at module load.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq

from rankscope.core.factor import Factorization
from rankscope.design.recipe import Recipe
from rankscope.scale.stream import BLOCK_ROWS, StreamInfo, _as_recipe
from rankscope.scale.stream_finish import finish, learn
from rankscope.scale.stream_forms import Frozen
from rankscope.scale.stream_partial import Partial
from rankscope.scale.stream_replay import Replay
from rankscope.scale.stream_source import SAMPLE_ROWS, parquet_table
from rankscope.tables.errors import InputError

PARQUET_SUFFIXES = (".parquet", ".parq", ".pq")


@dataclass(frozen=True)
class Piece:
    """One row group of one file: the unit of work a worker reduces."""

    path: str
    row_group: int
    start: int  # position of its first row in the whole dataset (files in name order)
    rows: int


def pieces(folder: Path) -> list[Piece]:
    """The dataset's row groups in a fixed order: files sorted by path, then row groups."""
    files = sorted(p for p in folder.rglob("*") if p.suffix.lower() in PARQUET_SUFFIXES
                   and p.is_file())
    out, start = [], 0
    for f in files:
        try:
            meta = pq.ParquetFile(f).metadata
        except (pa.ArrowException, OSError, ValueError) as e:
            raise InputError(f"The Parquet file could not be read ({str(e)[:120]})", str(f),
                             "Write or copy the file again") from None
        for rg in range(meta.num_row_groups):
            n = meta.row_group(rg).num_rows
            out.append(Piece(str(f), rg, start, n))
            start += n
    return out


def reduce_piece(piece: Piece, steps: list[dict], frozen: dict[int, Frozen],
                 kinds: dict[str, str], where: str, block_rows: int = BLOCK_ROWS) -> Partial:
    """Runs on a worker: the recipe over one row group, folded into one Partial."""
    pf = pq.ParquetFile(piece.path)
    replay = Replay(steps, frozen)
    total: Partial | None = None
    start = piece.start
    for batch in pf.iter_batches(batch_size=block_rows, row_groups=[piece.row_group]):
        part = replay.run(parquet_table(batch, start, where, kinds), start)
        start += batch.num_rows
        total = part if total is None else total.absorb(part)
    if total is None:
        raise InputError("A row group of the dataset has no rows", piece.path,
                         "Write the dataset again")
    return total


def combine(a: Partial, b: Partial) -> Partial:
    """Merge two partials without touching either (a worker may still hold them)."""
    return copy.deepcopy(a).absorb(b)


def _kinds(first: Piece, where: str, declared: dict[str, str] | None) -> dict[str, str]:
    """Column kinds from the first rows of the first file, as the single-file stream does."""
    batch = next(pq.ParquetFile(first.path).iter_batches(batch_size=SAMPLE_ROWS))
    table = parquet_table(batch, 0, where, None)
    if declared:
        from rankscope.tables.kinds import with_kinds

        table = with_kinds(table, declared)
    return dict(table.kinds)


def _tree(client: Any, parts: list[Any]) -> Partial:
    """Pairwise merges on the workers until one Partial is left (depth log2 of the pieces)."""
    while len(parts) > 1:
        nxt = [client.submit(combine, parts[i], parts[i + 1], pure=False)
               for i in range(0, len(parts) - 1, 2)]
        if len(parts) % 2:
            nxt.append(parts[-1])
        parts = nxt
    return parts[0].result()


def dask_stream(parquet_dir: str | Path, recipe: Recipe | list | None = None,
                scheduler: str | None = None, *, kinds: dict[str, str] | None = None,
                block_rows: int = BLOCK_ROWS) -> tuple[Factorization, StreamInfo]:
    """dask_factor with the design's names, groups and counts (a StreamInfo)."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise InputError("The Dask engine needs the optional 'dask' packages", "",
                         'Install them with pip install "rankscope[dask]"') from None
    folder = Path(parquet_dir)
    where = str(parquet_dir)
    if not folder.is_dir():
        raise InputError("This is not a folder of Parquet files", where,
                         "Give the folder that holds the dataset's .parquet files")
    found = pieces(folder)
    if not found:
        raise InputError("The folder holds no Parquet files with rows", where,
                         "Give the folder that holds the dataset's .parquet files")
    col_kinds = _kinds(found[0], where, kinds)
    steps = _as_recipe(recipe).steps
    cluster = None
    if scheduler is None:
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address=None, host="127.0.0.1")
    client = Client(cluster if cluster is not None else scheduler)
    try:
        return _run(client, found, steps, col_kinds, where, block_rows)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _run(client: Any, found: list[Piece], steps: list[dict], kinds: dict[str, str], where: str,
         block_rows: int) -> tuple[Factorization, StreamInfo]:
    frozen: dict[int, Frozen] = {}
    size = sum(Path(p).stat().st_size for p in {x.path for x in found})
    for passes in range(1, len(steps) + 4):
        parts = client.map(reduce_piece, found, steps=steps, frozen=frozen, kinds=kinds,
                           where=where, block_rows=block_rows, pure=False)
        total = _tree(client, parts)
        if not total.shape.wants - frozen.keys():
            F, layout = finish(total, where)
            return F, StreamInfo(source=where, kinds=kinds, layout=layout,
                                 passes=passes, blocks=total.blocks,
                                 bytes_total=size)
        frozen.update(learn(total))
    raise AssertionError("the recipe's statistics did not settle")


def dask_factor(parquet_dir: str | Path, recipe: Recipe | list | None = None,
                scheduler: str | None = None) -> Factorization:
    """The Factorization of the design the recipe builds on a Parquet dataset folder, reduced
    on a Dask cluster (scheduler: its address; None starts a local cluster of 2 processes).

    Equal, up to rounding, to stream_factor on the same rows and to the in-memory analysis.
    """
    return dask_stream(parquet_dir, recipe, scheduler)[0]

