"""The working columns a recipe runs on, in order, with roles and where they came from.

Holds state and lookups only; what each step does lives in the apply_* modules.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from rankscope.design.design import INTERCEPT
from rankscope.design.names import file_row, quoted, suggestion
from rankscope.tables.errors import InputError
from rankscope.tables.table import KINDS, Table

if TYPE_CHECKING:
    import pandas as pd

PREDICTOR = "predictor"
DROPPED = "dropped"
RESPONSE = "response"


@dataclass(eq=False)
class Col:
    """A working column. Compared by identity: two columns may hold equal values.

    values: float64 for numeric and boolean (0/1), object (str or None) for categorical,
        datetime64 for date; one entry per row held.
    sources: the table columns whose missing values make this one missing.
    parents: the working columns it was computed from (for the script and lineage).
    reference: for categorical columns, the level left without an indicator,
        "all" for none, None for the first level in sorted order.
    problem: set when a statistic could not be computed on the rows kept; raised only
        if the column ends up in the design.
    """

    name: str
    kind: str
    values: np.ndarray
    sources: frozenset[str]
    parents: tuple[Col, ...] = ()
    role: str = PREDICTOR
    reference: str | None = None
    on_missing: str = "delete_rows"
    anchor: Col | None = None
    problem: str | None = None

    def missing(self) -> np.ndarray:
        return is_missing(self.values)


def is_missing(values: np.ndarray) -> np.ndarray:
    """pandas.isna of a column's values (NaN, NaT, None), with numpy alone for numbers and
    dates: pandas loads only for object columns."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "f":
        return np.isnan(values)
    if isinstance(values, np.ndarray) and values.dtype.kind == "M":
        return np.isnat(values)
    import pandas as pd

    return np.asarray(pd.isna(values), dtype=bool)


def derived(name: str, kind: str, values: np.ndarray, parents: tuple[Col, ...]) -> Col:
    """A new column computed from parents; it inherits their sources and problems."""
    sources = frozenset().union(*(p.sources for p in parents))
    problem = next((p.problem for p in parents if p.problem), None)
    return Col(name, kind, values, sources, parents, problem=problem)


def _table_values(series: pd.Series, kind: str) -> np.ndarray:
    import pandas as pd

    if kind in ("numeric", "boolean"):
        return series.to_numpy(dtype=float, na_value=np.nan)
    if kind == "categorical":
        values = series.astype(object).to_numpy(dtype=object, copy=True)
        gone = np.asarray(pd.isna(values), dtype=bool)
        values[~gone] = [str(v) for v in values[~gone]]
        values[gone] = None
        return values
    return pd.to_datetime(series).to_numpy(dtype="datetime64[ns]")


def _read_only(values: np.ndarray) -> np.ndarray:
    """A read-only view: what pandas gives for every row of a column (no copy; steps make
    new arrays and never write into the table's)."""
    view = values.view()
    view.flags.writeable = False
    return view


@dataclass
class WorkingColumns:
    """Working columns plus the recipe-wide settings, for the rows `rows` of a table.

    rows: 0-based positions in the table of the rows held (all rows, or the kept ones).
    strict: raise when a statistic cannot be computed; when False, mark the column instead
        (the second pass on kept rows must not fail for columns the design does not use).
    made: for each step run so far, the columns it created.
    """

    cols: list[Col]
    rows: np.ndarray
    source: str
    intercept: bool = True
    strict: bool = True
    notes: list[str] = field(default_factory=list)
    made: list[list[Col]] = field(default_factory=list)

    @classmethod
    def from_table(cls, table: Table, rows: np.ndarray, strict: bool) -> WorkingColumns:
        cols = []
        every_row = len(rows) == table.n_rows and np.array_equal(rows, np.arange(len(rows)))
        for name in table.columns:
            kind = table.kinds.get(name)
            if kind not in KINDS:
                raise InputError(
                    f"column {quoted(name)} has no known kind ({kind!r})",
                    table.source,
                    f"Give it one of: {', '.join(KINDS)}",
                )
            numbers = table.numbers(name)
            if numbers is not None:  # float64 with NaN: what _table_values gives, no pandas
                values = _read_only(numbers) if every_row else numbers[rows]
            else:
                values = _table_values(table.frame[name].iloc[rows], kind)
            cols.append(Col(str(name), kind, values, frozenset([str(name)])))
        return cls(cols, np.asarray(rows, dtype=int), table.source, strict=strict)

    @property
    def n(self) -> int:
        return int(len(self.rows))

    def names(self) -> list[str]:
        return [c.name for c in self.cols]

    def get(self, name: str) -> Col:
        for c in self.cols:
            if c.name == name:
                return c
        todo = suggestion(name, self.names())
        base = name.split("[", 1)[0]
        if name.endswith("]") and base in self.names():
            todo = (
                f"Indicator columns follow from {quoted(base)}: use an indicators step "
                f"or drop {quoted(base)}"
            )
        raise InputError(f"no column named {quoted(name)}", "", todo)

    def number_col(self, name: str, purpose: str) -> Col:
        """A numeric or boolean column (booleans count as 0/1), for `purpose` in messages."""
        col = self.get(name)
        if col.kind not in ("numeric", "boolean"):
            raise InputError(
                f"{purpose} needs numbers, but {quoted(name)} is {col.kind}",
                "",
                f'Use a kind step ({{"step": "kind", "column": "{name}", "to": "numeric"}}) '
                "first, if its values are numbers",
            )
        return col

    def response(self) -> Col | None:
        return next((c for c in self.cols if c.role == RESPONSE), None)

    def check_free(self, name: str, replacing: tuple[Col, ...] = ()) -> None:
        """A new column name must not clash with another working column or the intercept."""
        if name == INTERCEPT:
            raise InputError(f"{quoted(INTERCEPT)} is the intercept's name", "", "Choose another")
        for c in self.cols:
            if c.name == name and c not in replacing:
                raise InputError(
                    f"a column named {quoted(name)} already exists", "", "Choose another name"
                )

    def replace(self, old: Col, new: Col) -> None:
        """Put `new` where `old` was; it takes over old's role and missing-value policy."""
        new.role = old.role
        new.on_missing = old.on_missing
        new.anchor = old.anchor
        self.cols[self.cols.index(old)] = new
        for c in self.cols:
            if c.anchor is old:
                c.anchor = new

    def insert_after(self, anchor: Col, new: Col) -> None:
        """Place `new` after `anchor` and after the columns already placed after it.

        Several columns derived from one anchor then appear in the order they were made.
        """
        i = self.cols.index(anchor) + 1
        while i < len(self.cols) and self.cols[i].anchor is anchor:
            i += 1
        new.anchor = anchor
        self.cols.insert(i, new)

    def where(self, i: int, col: Col) -> str:
        """Where row i (of the rows held) of `col` is, in the user's file."""
        return f"{self.source}, {file_row(int(self.rows[i]))}, column {quoted(col.name)}"

    def trouble(self, what: str, todo: str = "") -> str:
        """Raise when strict; otherwise return the message to mark the column with."""
        if self.strict:
            raise InputError(what, "", todo)
        return InputError(
            f"on the rows kept after deleting rows with missing values, {what}", "", todo
        ).message
