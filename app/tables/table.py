"""The Table: a user's file as typed columns, plus what the reader inferred.

Holds data only; reading lives in the per-format reader modules.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

    from rankscope.tables.raw import RowNumbers

KINDS = ("numeric", "categorical", "boolean", "date")


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

    def __init__(self, frame: pd.DataFrame | None = None, kinds: dict[str, str] | None = None,
                 source: str = "<table>", notes: list[str] | None = None) -> None:
        self._frame = frame
        self._numbers: dict[str, np.ndarray] = {}
        self._rows: RowNumbers | None = None
        self.kinds = kinds if kinds is not None else {}
        self.source = source
        self.notes = notes if notes is not None else []

    @classmethod
    def of_numbers(cls, numbers: dict[str, np.ndarray], rows: RowNumbers, source: str,
                   notes: list[str]) -> Table:
        """A table of numeric columns (float64 arrays, NaN = missing) without a frame yet."""
        table = cls(None, dict.fromkeys(numbers, "numeric"), source, notes)
        table._numbers, table._rows = numbers, rows
        return table

    @property
    def frame(self) -> pd.DataFrame:
        if self._frame is None:
            import pandas as pd

            assert self._rows is not None
            self._frame = pd.DataFrame(self._numbers, index=self._rows.to_pandas(), copy=False)
            self._numbers, self._rows = {}, None  # from now on the frame is the one copy
        return self._frame

    @property
    def columns(self) -> list[str]:
        return list(self._numbers) if self._frame is None else list(self._frame.columns)

    @property
    def n_rows(self) -> int:
        if self._frame is None:
            return len(self._rows) if self._rows is not None else 0
        return int(len(self._frame))

    def numbers(self, name: str) -> np.ndarray | None:
        """The float64 values of a numeric column while the table has no frame, else None
        (then read the frame)."""
        return self._numbers.get(name) if self._frame is None else None

    def missing(self, name: str) -> np.ndarray:
        """Whether each row of the column is missing (bool array)."""
        values = self.numbers(name)
        if values is not None:
            return np.isnan(values)
        return np.asarray(self.frame[name].isna(), dtype=bool)

    def __repr__(self) -> str:
        return (f"Table(source={self.source!r}, columns={len(self.columns)}, "
                f"rows={self.n_rows})")
