"""The Table: a user's file as typed columns, plus what the reader inferred.

Holds data only; reading lives in the per-format reader modules.
"""

from __future__ import annotations

import threading
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

    from rankscope.tables.raw import RowNumbers

KINDS = ("numeric", "categorical", "boolean", "date")
#: Held while a frame is built from arrays: the server's threads share tables.
_BUILDING = threading.Lock()


class Table:
    """A file read into typed columns.

    frame: columns in file order. numeric -> float64 (NaN = missing),
        categorical -> pandas "category" dtype (string categories),
        boolean -> pandas "boolean" (nullable), date -> datetime64[ns].
        Its index is the row number a person sees, for messages: named "line" for text files
        (the editor line where the row starts; header = line 1), "row" for spreadsheets
        (the sheet's row number), "record" for Parquet (1 = first record).
    kinds: column name -> one of KINDS (what the reader inferred or the user chose).
    source: the file name as given by the user (for messages).
    notes: plain sentences about what the reader inferred, converted or refused.

    A table of numeric columns only may be made from float64 arrays and row numbers
    (`Table.of_numbers`): the frame is then built when first asked for, so a command that
    only reads the numbers never imports pandas (a quarter of a second of a small `check`).
    """

    def __init__(self, frame: pd.DataFrame | None, kinds: dict[str, str],
                 source: str = "<table>", notes: list[str] | None = None) -> None:
        self._frame = frame
        # (arrays, row numbers) until the frame is built; one attribute, so a thread reading
        # it sees either the arrays or (set before they are let go) the frame.
        self._lazy: tuple[dict[str, np.ndarray], RowNumbers] | None = None
        self.kinds = kinds
        self.source = source
        self.notes = notes if notes is not None else []

    @classmethod
    def of_numbers(cls, numbers: dict[str, np.ndarray], rows: RowNumbers, source: str,
                   notes: list[str]) -> Table:
        """A table of numeric columns (float64 arrays, NaN = missing) without a frame yet."""
        table = cls(None, dict.fromkeys(numbers, "numeric"), source, notes)
        table._lazy = (numbers, rows)
        return table

    @property
    def frame(self) -> pd.DataFrame:
        if self._frame is None:
            import pandas as pd

            with _BUILDING:
                if self._frame is None and self._lazy is not None:
                    numbers, rows = self._lazy
                    self._frame = pd.DataFrame(numbers, index=rows.to_pandas(), copy=False)
                    self._lazy = None  # the frame (sharing the arrays) is now the one copy
        assert self._frame is not None
        return self._frame

    @property
    def columns(self) -> list[str]:
        lazy = self._lazy
        return list(lazy[0]) if lazy is not None else list(self.frame.columns)

    @property
    def n_rows(self) -> int:
        lazy = self._lazy
        return len(lazy[1]) if lazy is not None else int(len(self.frame))

    def numbers(self, name: str) -> np.ndarray | None:
        """The float64 values of a numeric column while the table has no frame, else None
        (then read the frame)."""
        lazy = self._lazy
        return lazy[0].get(name) if lazy is not None else None

    def missing(self, name: str) -> np.ndarray:
        """Whether each row of the column is missing (bool array)."""
        values = self.numbers(name)
        if values is not None:
            return np.isnan(values)
        return np.asarray(self.frame[name].isna(), dtype=bool)

    def __repr__(self) -> str:
        return (f"Table(source={self.source!r}, columns={len(self.columns)}, "
                f"rows={self.n_rows})")
