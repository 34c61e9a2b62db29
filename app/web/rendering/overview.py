"""Per-column summaries of an uploaded table for the overview page: kind, missing, basics.

Reads the Table only (pandas descriptive statistics); no design, no diagnosis, no HTML.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from rankscope.tables.table import Table


@dataclass(frozen=True)
class ColumnSummary:
    """What the overview shows for one column. stats: label -> value, in display order."""

    name: str
    kind: str
    present: int
    missing: int
    stats: list[tuple[str, object]] = field(default_factory=list)


def _numeric(s: pd.Series) -> list[tuple[str, object]]:
    v = s.dropna().astype(float)
    if v.empty:
        return []
    # Scaled by the largest magnitude, so sums of values near 1e308 do not overflow.
    scale = float(v.abs().max()) or 1.0
    u = v / scale
    return [("mean", float(u.mean()) * scale),
            ("SD", float(u.std(ddof=1)) * scale if len(v) > 1 else None),
            ("min", float(v.min())), ("max", float(v.max())), ("distinct", int(v.nunique()))]


def _categorical(s: pd.Series) -> list[tuple[str, object]]:
    counts = s.dropna().astype(str).value_counts()
    if counts.empty:
        return []
    top = ", ".join(f"{k} ({v})" for k, v in counts.head(3).items())
    return [("levels", int(len(counts))), ("most common", top)]


def _boolean(s: pd.Series) -> list[tuple[str, object]]:
    v = s.dropna()
    if v.empty:
        return []
    return [("true", int(v.astype(bool).sum())), ("false", int((~v.astype(bool)).sum()))]


def _date(s: pd.Series) -> list[tuple[str, object]]:
    v = pd.to_datetime(s.dropna())
    if v.empty:
        return []
    return [("first", str(v.min().date())), ("last", str(v.max().date())),
            ("distinct", int(v.nunique()))]


SUMMARIES = {"numeric": _numeric, "categorical": _categorical, "boolean": _boolean,
             "date": _date}


def summarize(table: Table) -> list[ColumnSummary]:
    """One summary per column, in file order."""
    out = []
    for name in table.columns:
        s = table.frame[name]
        kind = table.kinds.get(name, "numeric")
        missing = int(s.isna().sum())
        stats = SUMMARIES.get(kind, _categorical)(s)
        out.append(ColumnSummary(str(name), kind, int(len(s) - missing), missing, stats))
    return out
