"""What inspect() accepts as data, made into a Table: pandas, Arrow, polars, NumPy or a path.

Goes through the same type inference as the file readers (typed columns, as for Parquet);
no design decisions here.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa

from rankscope.tables.build import build
from rankscope.tables.errors import InputError
from rankscope.tables.raw import Raw
from rankscope.tables.table import Table


def _from_arrow(table: pa.Table, where: str) -> Table:
    # "record" numbers rows from 1 in messages, as for a Parquet file.
    index = pd.RangeIndex(1, table.num_rows + 1, name="record")
    names = [str(n) for n in table.column_names]
    return build(Raw(names=names, columns=list(table.columns), index=index, where=where,
                     typed=True))


def _from_pandas(frame: pd.DataFrame, where: str) -> Table:
    if frame.columns.nlevels > 1:
        raise InputError("the DataFrame has several header levels", where,
                         "Flatten its columns to one level of names first")
    frame = frame.set_axis([str(c) for c in frame.columns], axis=1)
    try:
        arrow = pa.Table.from_pandas(frame, preserve_index=False)
    except (pa.ArrowException, TypeError, ValueError) as e:
        raise InputError(f"the DataFrame could not be converted ({str(e).splitlines()[0]})",
                         where, "Give columns of numbers, text, categories or yes/no") from None
    return _from_arrow(arrow, where)


def _from_numpy(array: np.ndarray, names: Sequence[str] | None, where: str) -> Table:
    if array.ndim != 2:
        raise InputError(f"the array has {array.ndim} dimension(s); a table has 2", where,
                         "Give a 2-D array (rows × columns)")
    if names is None:
        raise InputError("a NumPy array needs column names", where,
                         "Pass names=[...] with one name per column")
    names = [str(n) for n in names]
    if len(names) != array.shape[1]:
        raise InputError(f"{len(names)} names for {array.shape[1]} columns", where,
                         "Give one name per column")
    columns = [pa.chunked_array([pa.array(np.ascontiguousarray(array[:, j]))])
               for j in range(array.shape[1])]
    return _from_arrow(pa.Table.from_arrays([c.combine_chunks() for c in columns],
                                            names=names), where)


def is_polars(data: Any) -> bool:
    """True for a polars DataFrame, recognised without importing polars."""
    return type(data).__module__.split(".")[0] == "polars" and hasattr(data, "to_arrow")


def is_table_like(data: Any) -> bool:
    """True for what as_table reads (a table, an array or a path), never a fitted model."""
    return isinstance(data, Table | str | os.PathLike | pd.DataFrame | pa.Table | np.ndarray) \
        or is_polars(data)


def as_table(data: Any, names: Sequence[str] | None = None) -> Table:
    """A Table from a DataFrame, a pyarrow Table, a polars DataFrame, a 2-D NumPy array
    with names, or a path to a CSV/TSV, Excel or Parquet file. Raises InputError."""
    if isinstance(data, Table):
        return data
    if isinstance(data, str | os.PathLike):
        from rankscope.tables.read import read_table

        return read_table(data)
    if isinstance(data, pd.DataFrame):
        return _from_pandas(data, "DataFrame")
    if isinstance(data, pa.Table):
        return _from_arrow(data, "Arrow table")
    if is_polars(data):  # polars stays optional: it is only touched when given
        return _from_arrow(data.to_arrow(), "polars DataFrame")
    if isinstance(data, np.ndarray):
        return _from_numpy(data, names, "array")
    raise InputError(f"rankscope cannot read a {type(data).__name__}", "data",
                     "Give a pandas, polars or pyarrow table, a NumPy array with names=, a "
                     "file path, or a fitted statsmodels model")
