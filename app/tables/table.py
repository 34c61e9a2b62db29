"""The Table: a user's file as typed columns, plus what the reader inferred.

Holds data only; reading lives in the per-format reader modules.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

KINDS = ("numeric", "categorical", "boolean", "date")


@dataclass
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
    """

    frame: pd.DataFrame
    kinds: dict[str, str]
    source: str = "<table>"
    notes: list[str] = field(default_factory=list)

    @property
    def columns(self) -> list[str]:
        return list(self.frame.columns)

    @property
    def n_rows(self) -> int:
        return int(len(self.frame))
