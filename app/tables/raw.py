"""What a format reader hands to type inference: named Arrow columns plus where each row sits.

Holds data and message helpers only; no reading, no kind decisions.

Row numbers are those a person sees: the line in a text editor (header = line 1), the spreadsheet
row, or the record number of a Parquet file. They become the index of Table.frame, named
"line", "row" or "record", so later steps (overrides, listwise deletion) can still name rows.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import pyarrow as pa

if TYPE_CHECKING:
    import pandas as pd


@dataclass(eq=False)
class RowNumbers:
    """The row number a person sees for each row (a range, or an array where rows skip lines),
    named "line", "row" or "record": a pandas index without pandas, which loads only when a
    frame is built (see Table.of_numbers)."""

    numbers: range | np.ndarray
    name: str

    def __len__(self) -> int:
        return len(self.numbers)

    def __getitem__(self, pos: int) -> int:
        return int(self.numbers[pos])

    def to_pandas(self) -> pd.Index:
        import pandas as pd

        if isinstance(self.numbers, range):
            return pd.RangeIndex(self.numbers.start, self.numbers.stop, name=self.name)
        return pd.Index(self.numbers, dtype="int64", name=self.name)


def pandas_index(index: pd.Index | RowNumbers) -> pd.Index:
    """The row numbers as a pandas index."""
    return index.to_pandas() if isinstance(index, RowNumbers) else index


@dataclass
class Raw:
    """Columns as read, before kinds are decided.

    names: column names as in the file (may be blank or repeated; checked later).
    columns: one Arrow array per name, all the same length.
    index: human row number of each row, named "line", "row" or "record".
    where: the file as named in messages, e.g. "sales.xlsx, sheet 'Q1'".
    typed: the format stores column types (Parquet): text columns stay categorical.
    decimal: decimal mark of the text ("," or "."); text columns are parsed with it.
    cell: optional lookup of the original text of cell (row position, column position).
    """

    names: list[str]
    columns: list[pa.ChunkedArray]
    index: pd.Index | RowNumbers
    where: str
    typed: bool = False
    decimal: str = "."
    cell: Callable[[int, int], str | None] | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def n_rows(self) -> int:
        return len(self.index)


def row_label(index: pd.Index | RowNumbers, pos: int) -> str:
    """'line 17' for the row at position pos; 'row N' (header = row 1) when the index is plain."""
    if index.name in ("line", "row", "record"):
        return f"{index.name} {int(index[pos])}"
    return f"row {pos + 2}"


def at(where: str, index: pd.Index | RowNumbers | None = None, pos: int | None = None,
       column=None) -> str:
    """The 'where' of an InputError: file, then row, then column, as far as known."""
    parts = [where] if where else []
    if index is not None and pos is not None:
        parts.append(row_label(index, pos))
    if column is not None:
        parts.append(f"column '{column}'")
    return ", ".join(parts)


def short(value, limit: int = 40) -> str:
    """A cell value quoted for a message, cut to a readable length."""
    text = str(value)
    if len(text) > limit:
        text = text[: limit - 1] + "…"
    return repr(text)
