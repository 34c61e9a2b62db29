"""The full tables of a wide design a page at a time (sorted and filtered on the server), and
each one complete as CSV: VIFs, condition indices with their proportions, correlations, fit.

Orders and formats numbers of a Diagnosis dict for display; no statistics, no HTTP, no HTML.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable, Iterator
from dataclasses import asdict, dataclass
from functools import partial
from typing import Any

import numpy as np

from rankscope.report.export import neutralize
from rankscope.tables.errors import InputError
from rankscope.web.rendering.views import infinite_num, num, p_value
from rankscope.web.rendering.wide import kept
from rankscope.web.rendering.wide import matrix as correlation_array

#: Rows a page shows unless asked for another number, and the most a page may hold.
PAGE_ROWS = 25
MOST_ROWS = 200
#: Names listed in one cell of the index table (the high proportions of one dimension).
CELL_NAMES = 10


@dataclass(frozen=True)
class Column:
    """A column of a paged table: its key (for sorting), heading, and whether it is a number
    (right-aligned; sorted largest first on the first click) and can be sorted on."""

    key: str
    label: str
    number: bool = True
    sortable: bool = True


@dataclass(eq=False)
class Row:
    """One row: its shown cells (made by `shown` when the row is on a page: a wide design
    has a thousand rows, a page shows 25), its sort values by key (None: no value, always
    last), the design column it is about (or None) and its marks (CSS classes: infinite,
    flagged …)."""

    shown: Callable[[], list[str]]
    values: dict[str, Any]
    column: str | None = None
    mark: str = ""

    @property
    def cells(self) -> list[str]:
        return self.shown()


@dataclass(frozen=True)
class Table:
    """How one full table is made: columns, the default sort, and its rows from a diagnosis."""

    title: str
    columns: Callable[[dict[str, Any]], list[Column]]
    default: tuple[str, str]  # (sort key, "asc" | "desc")
    rows: Callable[[dict[str, Any]], list[Row]]


def _f(x: Any) -> float | None:
    return None if x is None else float(x)


# ---- VIF --------------------------------------------------------------------------------
def _vif_columns(d: dict[str, Any]) -> list[Column]:
    cols = [Column("column", "Column", number=False), Column("vif", "VIF"),
            Column("tolerance", "Tolerance"), Column("se", "SE ×")]
    if d.get("gvif"):
        cols += [Column("gvif", "Scaled GVIF"), Column("group", "Group", number=False)]
    return cols


def _vif_cells(col: str, v: Any, tol: Any, se: Any, gvif: bool, g: str | None, gs: Any
               ) -> list[str]:
    cells = [col, infinite_num(v), num(tol), infinite_num(se)]
    return cells + [num(gs) if g else "", g or ""] if gvif else cells


def _vif_rows(d: dict[str, Any]) -> list[Row]:
    group_of = {c: g for g, info in (d.get("gvif") or {}).items() for c in info["columns"]}
    se = d.get("se_inflation") or {}
    tolerance = d.get("tolerance") or {}
    gvif = bool(d.get("gvif"))
    rows = []
    for col, v in (d.get("vif") or {}).items():
        g = group_of.get(col)
        gs = d["gvif"][g]["gvif_scaled"] if g else None
        tol = tolerance.get(col)
        values = {"column": col.lower(), "vif": math.inf if v is None else v,
                  "tolerance": _f(tol),
                  "se": math.inf if se.get(col) is None else se[col]}
        if gvif:
            values |= {"gvif": _f(gs), "group": (g or "").lower() or None}
        rows.append(Row(partial(_vif_cells, col, v, tol, se.get(col), gvif, g, gs), values,
                        col, "infinite" if v is None else ""))
    return rows


# ---- condition indices ------------------------------------------------------------------
def _index_columns(d: dict[str, Any]) -> list[Column]:
    return [Column("dimension", "Dimension"), Column("index", "Condition index"),
            Column("largest", "Largest proportion"),
            Column("columns", "Columns with high proportions", number=False, sortable=False)]


def _index_rows(d: dict[str, Any]) -> list[Row]:
    """One row per dimension. Its cell names the columns whose proportion is above the
    proportion mark (or the three largest, when none is); a row is flagged as on the narrow
    page: when the core listed it among the near-dependencies."""
    mark = d["thresholds"]["proportion"]
    props_all = d.get("variance_proportions") or []
    near = d.get("near_dependencies") or []
    exact = d.get("index_exact") or []
    rows = []
    for k, idx in enumerate(d.get("condition_indices") or []):
        props = props_all[k] if k < len(props_all) else None
        if props is None:
            # A wide design's dimension of low index (docs/json.md): its shares are in the
            # table's download, computed when asked.
            text, largest, high, flagged = ("index below 10: shares in the download", None,
                                            [], False)
        else:
            ranked = sorted(props.items(), key=lambda kv: -kv[1])
            high = [(c, p) for c, p in ranked if p > mark]
            shown = high or ranked[:3]
            text = " · ".join(f"{c} {p:.2f}" for c, p in shown[:CELL_NAMES])
            if len(shown) > CELL_NAMES:
                text += f" · and {len(shown) - CELL_NAMES} more"
            if not high:
                text = "none above the mark; largest: " + text
            largest = ranked[0][1] if ranked else None
            flagged = any(n["index"] == idx and all(props.get(c) == p for c, p in
                                                    n["proportions"].items()) for n in near)
        is_exact = bool(exact[k]) if k < len(exact) else False
        marks = " ".join(m for m, on in (("flagged", flagged), ("exact", is_exact)) if on)
        cells = [str(k + 1), ("exact · " if is_exact else "") + infinite_num(idx),
                 num(largest, 2) if largest is not None else "—", text]
        values = {"dimension": k, "index": math.inf if idx is None else idx,
                  "largest": largest, "names": [c.lower() for c, _ in high]}
        rows.append(Row(partial(list, cells), values, None, marks))
    return rows


# ---- fit --------------------------------------------------------------------------------
def _fit_columns(d: dict[str, Any]) -> list[Column]:
    cols = [Column("column", "Column", number=False), Column("coefficient", "Coefficient"),
            Column("se", "Std error"), Column("t", "t"), Column("p", "p")]
    if (d.get("fit") or {}).get("aliased"):
        cols.append(Column("min_norm", "Minimum-norm coefficient"))
    return cols


def _fit_cells(c: str, values: dict[str, Any], aliased: bool, any_aliased: bool
               ) -> list[str]:
    if aliased:
        cells = [c, "aliased", "—", "—", "—"]
    else:
        cells = [c, num(values["coefficient"]), num(values["se"]), num(values["t"], 3),
                 p_value(values["p"])]
    return cells + [num(values["min_norm"])] if any_aliased else cells


def _fit_rows(d: dict[str, Any]) -> list[Row]:
    fit = d.get("fit")
    if not fit:
        return []
    aliased = set(fit.get("aliased") or [])
    coefs, ses = fit["coefficients"], fit["std_errors"]
    ts, ps = fit["t_values"], fit["p_values"]
    min_norm = fit.get("min_norm") or {}
    rows = []
    for c in d["columns"]:
        if c in aliased:
            values: dict[str, Any] = {"column": c.lower()}
        else:
            values = {"column": c.lower(), "coefficient": _f(coefs.get(c)),
                      "se": _f(ses.get(c)), "t": _f(ts.get(c)), "p": _f(ps.get(c))}
        if aliased:
            values["min_norm"] = _f(min_norm.get(c))
        rows.append(Row(partial(_fit_cells, c, values, c in aliased, bool(aliased)), values, c,
                        "aliased" if c in aliased else ""))
    return rows


# ---- ridge ------------------------------------------------------------------------------
def _ridge_columns(d: dict[str, Any]) -> list[Column]:
    return [Column("column", "Column", number=False), Column("ridge", "Ridge coefficient"),
            Column("least_squares", "Least squares")]


def _ridge_rows(d: dict[str, Any]) -> list[Row]:
    """The coefficients at the chosen penalty beside the least-squares ones, the constant
    first (as on the page of a narrow design)."""
    chosen = (d.get("ridge") or {}).get("chosen")
    if not chosen:
        return []
    ls = (d.get("fit") or {}).get("coefficients") or {}
    pairs = list(chosen["coefficients"].items())
    if chosen.get("constant") is not None:
        pairs.insert(0, ("(intercept)", chosen["constant"]))
    rows = []
    for c, v in pairs:
        values = {"column": c.lower(), "ridge": _f(v), "least_squares": _f(ls.get(c))}
        rows.append(Row(partial(_ridge_cells, c, values), values, c))
    return rows


def _ridge_cells(c: str, values: dict[str, Any]) -> list[str]:
    return [c, num(values["ridge"]), num(values["least_squares"])]


TABLES: dict[str, Table] = {
    "vif": Table("Variance inflation", _vif_columns, ("vif", "desc"), _vif_rows),
    "indices": Table("Condition indices", _index_columns, ("index", "desc"), _index_rows),
    "fit": Table("Fit", _fit_columns, ("column", "asc"), _fit_rows),
    "ridge": Table("Ridge", _ridge_columns, ("column", "asc"), _ridge_rows),
}

#: Every paged table, with the correlation pairs (made from the matrix, not row by row).
NAMES = (*TABLES, "pairs")


def _unknown(name: str) -> InputError:
    return InputError(f"there is no table called {name!r}", "table",
                      "Use one of: " + ", ".join(NAMES))


def _bounds(offset: int, limit: int) -> tuple[int, int]:
    return max(int(offset), 0), min(max(int(limit), 1), MOST_ROWS)


def _sorted(rows: list[Row], key: str, descending: bool) -> list[Row]:
    """Rows by one value; rows without it last, whichever the direction."""
    def known(r: Row) -> bool:
        v = r.values.get(key)
        return v is not None and not (isinstance(v, float) and math.isnan(v))

    have = [r for r in rows if known(r)]
    lack = [r for r in rows if not known(r)]
    have.sort(key=lambda r: r.values[key], reverse=descending)
    return have + lack


def _matches(row: Row, q: str) -> bool:
    if "names" in row.values:
        return any(q in n for n in row.values["names"])
    return q in (row.column or "").lower()


def table_page(d: dict[str, Any], name: str, offset: int = 0, limit: int = PAGE_ROWS,
               sort: str | None = None, order: str | None = None, q: str = ""
               ) -> dict[str, Any]:
    """One page of a full table: its rows from `offset`, sorted by `sort` (`order` asc or
    desc; default: the table's own), only rows naming a column containing `q` (any case)."""
    if name == "pairs":
        return pairs_page(d, offset, limit, sort, order, q)
    table = TABLES.get(name)
    if table is None:
        raise _unknown(name)
    columns = table.columns(d)
    sort = sort or table.default[0]
    order = order or (table.default[1] if sort == table.default[0] else "desc")
    if not any(c.key == sort and c.sortable for c in columns):
        raise InputError(f"the {name} table cannot be sorted by {sort!r}", "sort",
                         "Use one of: " + ", ".join(c.key for c in columns if c.sortable))
    if order not in ("asc", "desc"):
        raise InputError(f"order must be asc or desc, not {order!r}", "order",
                         "Send order=asc or order=desc")
    offset, limit = _bounds(offset, limit)
    rows = kept(d, "rows-" + name, lambda: table.rows(d))
    wanted = q.strip().lower()
    chosen = [r for r in rows if _matches(r, wanted)] if wanted else rows
    chosen = kept(d, f"sorted-{name}-{sort}-{order}", lambda: _sorted(rows, sort,
                                                                      order == "desc")) \
        if not wanted else _sorted(chosen, sort, order == "desc")
    return {
        "table": name, "title": table.title, "columns": [asdict(c) for c in columns],
        "rows": [{"cells": r.cells, "column": r.column, "mark": r.mark}
                 for r in chosen[offset:offset + limit]],
        "total": len(rows), "matched": len(chosen), "offset": offset, "limit": limit,
        "sort": sort, "order": order, "q": q,
    }


# ---- correlation pairs ------------------------------------------------------------------
PAIR_COLUMNS = [Column("a", "Column", number=False, sortable=False),
                Column("b", "with", number=False, sortable=False),
                Column("r", "r"), Column("size", "|r|")]


def _pairs(d: dict[str, Any]) -> tuple[list[str], np.ndarray, np.ndarray, np.ndarray]:
    corr = d.get("correlations") or {}
    names = list(corr.get("columns") or [])

    def make() -> tuple[list[str], np.ndarray, np.ndarray, np.ndarray]:
        if corr.get("pearson") is None or len(names) < 2:
            empty = np.zeros(0, dtype=int)
            return names, empty, empty, np.zeros(0)
        C = correlation_array(corr, "pearson")  # the array the lead section's structure made
        iu, ju = np.triu_indices(len(names), k=1)
        return names, iu, ju, C[iu, ju]

    return kept(corr, "pairs", make)


def pairs_page(d: dict[str, Any], offset: int = 0, limit: int = PAGE_ROWS,
               sort: str | None = None, order: str | None = None, q: str = ""
               ) -> dict[str, Any]:
    """A page of the Pearson correlations as pairs of columns, strongest (|r|) first."""
    sort, order = sort or "size", order or "desc"
    if sort not in ("r", "size") or order not in ("asc", "desc"):
        raise InputError(f"the pairs table sorts by r or size, asc or desc (not {sort!r}, "
                         f"{order!r})", "sort", "Send sort=size&order=desc, for example")
    offset, limit = _bounds(offset, limit)
    names, iu, ju, vals = _pairs(d)
    corr = d.get("correlations") or {}
    key = np.abs(vals) if sort == "size" else vals
    ranked = kept(corr, f"pairs-{sort}", lambda: np.argsort(-key, kind="stable"))
    if order == "asc":
        ranked = ranked[::-1]
    wanted = q.strip().lower()
    if wanted:
        hit = np.array([wanted in n.lower() for n in names], dtype=bool)
        ranked = ranked[hit[iu[ranked]] | hit[ju[ranked]]]
    rows = [{"cells": [names[iu[t]], names[ju[t]], f"{vals[t]:.3f}", f"{abs(vals[t]):.3f}"],
             "column": None, "mark": ""} for t in ranked[offset:offset + limit]]
    return {"table": "pairs", "title": "Correlations (Pearson), pair by pair",
            "columns": [asdict(c) for c in PAIR_COLUMNS], "rows": rows,
            "total": int(vals.size), "matched": int(ranked.size), "offset": offset,
            "limit": limit, "sort": sort, "order": order, "q": q}


# ---- complete tables as CSV -------------------------------------------------------------
#: The CSV downloads: key -> (file name suffix, what it holds).
DOWNLOADS = {
    "vif": ("-vif.csv", "VIF, tolerance, SE ×, GVIF per column"),
    "indices": ("-condition-indices.csv", "condition indices with every proportion"),
    "correlations": ("-correlations.csv", "the Pearson correlation matrix"),
    "fit": ("-fit.csv", "coefficients, standard errors, t, p"),
}


def _cell(x: Any) -> str:
    if x is None:
        return ""
    if isinstance(x, bool):
        return "true" if x else "false"
    if isinstance(x, int):
        return str(x)
    if isinstance(x, float):
        return repr(float(x)) if math.isfinite(x) else ("inf" if x > 0 else "-inf")
    return neutralize(str(x))


def _lines(rows: Iterator[list[Any]], header: list[str]) -> Iterator[str]:
    buf = io.StringIO()
    # Header cells quoted (names may hold separators); the rows are numbers and names.
    csv.writer(buf, quoting=csv.QUOTE_ALL).writerow([neutralize(h) for h in header])
    yield buf.getvalue()
    out = io.StringIO()
    writer = csv.writer(out)
    for n, row in enumerate(rows, 1):
        writer.writerow([_cell(x) for x in row])
        if n % 200 == 0:
            yield out.getvalue()
            out.seek(0)
            out.truncate()
    yield out.getvalue()


def table_csv(d: dict[str, Any], name: str) -> Iterator[str]:
    """The complete table as CSV pieces (infinite values as inf; empty: no value)."""
    if name == "vif":
        group_of = {c: g for g, info in (d.get("gvif") or {}).items() for c in info["columns"]}
        se = d.get("se_inflation") or {}

        def vif_rows() -> Iterator[list[Any]]:
            for c, v in (d.get("vif") or {}).items():
                g = group_of.get(c)
                info = d["gvif"][g] if g else {}
                yield [c, math.inf if v is None else v, (d.get("tolerance") or {}).get(c),
                       math.inf if se.get(c) is None else se[c], g, info.get("gvif"),
                       info.get("gvif_scaled")]
        return _lines(vif_rows(), ["column", "vif", "tolerance", "se_inflation", "group",
                                   "gvif", "gvif_scaled"])
    if name == "indices":
        cols = list(d["columns"])
        props = d.get("variance_proportions") or []
        exact = d.get("index_exact") or []

        def index_rows() -> Iterator[list[Any]]:
            for k, idx in enumerate(d.get("condition_indices") or []):
                p = (props[k] if k < len(props) else None) or {}
                yield [k + 1, math.inf if idx is None else idx,
                       bool(exact[k]) if k < len(exact) else None,
                       *[p.get(c) for c in cols]]
        return _lines(index_rows(), ["dimension", "condition_index", "exact", *cols])
    if name == "correlations":
        corr = d.get("correlations") or {}
        names = list(corr.get("columns") or [])
        matrix = corr.get("pearson") or []
        return _lines(([n, *row] for n, row in zip(names, matrix, strict=False)),
                      ["", *names])
    if name == "fit":
        fit = d.get("fit") or {}
        aliased = set(fit.get("aliased") or [])

        def fit_rows() -> Iterator[list[Any]]:
            for c in d["columns"] if fit else []:
                yield [c, fit["coefficients"].get(c), fit["std_errors"].get(c),
                       fit["t_values"].get(c), fit["p_values"].get(c), c in aliased,
                       (fit.get("min_norm") or {}).get(c)]
        return _lines(fit_rows(), ["column", "coefficient", "std_error", "t", "p", "aliased",
                                   "min_norm"])
    raise InputError(f"there is no table download called {name!r}", "download",
                     "Use one of: " + ", ".join(DOWNLOADS))
