"""Parquet bytes -> Raw. Column types come from the file: text stays categorical.

Does not decide kinds (infer.py does).
"""

from __future__ import annotations

import re

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from rankscope.tables.errors import InputError
from rankscope.tables.limits import check_columns, check_rows
from rankscope.tables.raw import Raw

PANDAS_INDEX = re.compile(r"^__index_level_\d+__$")


def unreadable(e: Exception, where: str) -> InputError:
    """The message for a Parquet file pyarrow cannot open (first line of its reason)."""
    return InputError(
        f"The Parquet file could not be read ({str(e).splitlines()[0][:120]})",
        where,
        "Write or download the file again",
    )


def read_parquet(data: bytes, where: str,
                 shape: tuple[int | None, int | None] = (None, None)) -> Raw:
    """shape: the most data rows and columns to accept (None: no limit), checked on the
    file's footer before any column is read."""
    if not (data.startswith(b"PAR1") and data.endswith(b"PAR1") and len(data) >= 12):
        raise InputError(
            "The file starts like a Parquet file but is damaged or incomplete",
            where,
            "Write or download the file again",
        )
    try:
        meta = pq.ParquetFile(pa.BufferReader(data)).metadata
        check_columns(meta.num_columns, shape[1], where)
        check_rows(meta.num_rows, shape[0], where)
        table = pq.read_table(pa.BufferReader(data))
    except (pa.ArrowException, OSError, ValueError) as e:
        raise unreadable(e, where) from None
    notes = []
    keep = [i for i, n in enumerate(table.column_names) if not PANDAS_INDEX.match(n)]
    if len(keep) < table.num_columns:
        notes.append("A pandas index stored in the file was left out.")
    names = [table.column_names[i] for i in keep]
    columns = [table.column(i) for i in keep]
    index = pd.RangeIndex(1, table.num_rows + 1, name="record")
    return Raw(names=names, columns=columns, index=index, where=where, typed=True, notes=notes)
