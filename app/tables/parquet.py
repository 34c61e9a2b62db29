"""Parquet bytes -> Raw. Column types come from the file: text stays categorical.

Does not decide kinds (infer.py does).
"""

from __future__ import annotations

import re
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from rankscope.tables.errors import InputError
from rankscope.tables.limits import check_columns, check_rows
from rankscope.tables.raw import Raw, RowNumbers

PANDAS_INDEX = re.compile(r"^__index_level_\d+__$")


def unreadable(e: Exception, where: str) -> InputError:
    """The message for a Parquet file pyarrow cannot open (first line of its reason)."""
    return InputError(
        f"The Parquet file could not be read ({str(e).splitlines()[0][:120]})",
        where,
        "Write or download the file again",
    )


def _framed(data: bytes | Path) -> bool:
    """The file starts and ends with Parquet's magic bytes (a truncated file does not)."""
    if isinstance(data, Path):
        with data.open("rb") as f:
            head = f.read(4)
            size = f.seek(0, 2)
            f.seek(max(size - 4, 0))
            tail = f.read(4)
    else:
        head, tail, size = data[:4], data[-4:], len(data)
    return head == b"PAR1" and tail == b"PAR1" and size >= 12


def read_parquet(data: bytes | Path, where: str,
                 shape: tuple[int | None, int | None] = (None, None)) -> Raw:
    """data: the file's bytes, or its path (read through a memory map, without a copy of
    the bytes). shape: the most data rows and columns to accept (None: no limit), checked
    on the file's footer before any column is read."""
    if not _framed(data):
        raise InputError(
            "The file starts like a Parquet file but is damaged or incomplete",
            where,
            "Write or download the file again",
        )
    try:
        source = pa.memory_map(str(data)) if isinstance(data, Path) else pa.BufferReader(data)
        file = pq.ParquetFile(source)
        meta = file.metadata
        check_columns(meta.num_columns, shape[1], where)
        check_rows(meta.num_rows, shape[0], where)
        # The file's own reader: pq.read_table goes through pyarrow.dataset, which imports
        # pandas (a quarter of a second of a small `check`) for the same table.
        table = file.read()
    except (pa.ArrowException, OSError, ValueError) as e:
        raise unreadable(e, where) from None
    notes = []
    all_names = table.column_names  # a new list at each access: once, not once per column
    keep = [i for i, n in enumerate(all_names) if not PANDAS_INDEX.match(n)]
    if len(keep) < table.num_columns:
        notes.append("A pandas index stored in the file was left out.")
    names = [all_names[i] for i in keep]
    columns = [table.column(i) for i in keep]
    index = RowNumbers(range(1, table.num_rows + 1), "record")
    return Raw(names=names, columns=columns, index=index, where=where, typed=True, notes=notes)
