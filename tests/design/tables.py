"""Test helpers: Tables built straight from DataFrames, kinds taken from the dtypes.

No reading of files here; the readers are tested elsewhere.
"""

from __future__ import annotations

import pandas as pd

from rankscope.tables.table import Table


def kind_of(series: pd.Series) -> str:
    if isinstance(series.dtype, pd.CategoricalDtype):
        return "categorical"
    if pd.api.types.is_bool_dtype(series.dtype):
        return "boolean"
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        return "date"
    return "numeric"


def table(frame: pd.DataFrame | dict, source: str = "data.csv") -> Table:
    """A Table in the reader's types: numeric float64, categorical category, boolean boolean."""
    frame = pd.DataFrame(frame).copy()
    for name in frame.columns:
        s = frame[name]
        if pd.api.types.is_bool_dtype(s.dtype):
            frame[name] = s.astype("boolean")
        elif pd.api.types.is_numeric_dtype(s.dtype):
            frame[name] = s.astype("float64")
        elif not pd.api.types.is_datetime64_any_dtype(s.dtype) and not isinstance(
            s.dtype, pd.CategoricalDtype
        ):
            frame[name] = s.astype("category")
    return Table(frame, {str(c): kind_of(frame[c]) for c in frame.columns}, source)
