"""Formulas (Wilkinson–Rogers notation, parsed and built by `formulaic`) as a starting design.

Turns a Table and a formula into a Table of the formula's columns plus the recipe steps that
make it the design; builds columns only, never diagnoses. formulaic loads on first use.
"""

from __future__ import annotations

import re
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from rankscope.design.design import INTERCEPT, Design
from rankscope.design.names import quoted, suggestion
from rankscope.design.recipe import Recipe
from rankscope.design.replay import trace_design
from rankscope.tables.errors import InputError
from rankscope.tables.raw import row_label
from rankscope.tables.table import Table

#: formulaic's name for the constant column; rankscope calls it INTERCEPT everywhere.
FORMULAIC_INTERCEPT = "Intercept"

#: Markers formulaic puts around the offending token in a syntax error's context line.
_MARK_OPEN, _MARK_CLOSE = "⧛", "⧚"
_ANSI = re.compile(r"\x1b\[[0-9;]*m")


@dataclass
class Start:
    """A formula made into a starting table: the design's columns (numeric, no intercept)
    and the response, with the steps that make that table the formula's design.

    terms: each term of the right-hand side (not the intercept) -> its columns, in order.
    """

    table: Table
    steps: list[dict[str, Any]]
    terms: dict[str, list[str]]
    rows_total: int
    kept: np.ndarray
    dropped_by: dict[str, int] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)


def _where(position: int | None) -> str:
    return "formula" if position is None else f"formula, character {position}"


def _position_of(name: str, text: str) -> int | None:
    """1-based position of a variable name in the formula (bare or in backticks)."""
    for pattern in (rf"`{re.escape(name)}`", rf"(?<![\w.`]){re.escape(name)}(?![\w`])"):
        m = re.search(pattern, text)
        if m:
            return m.start() + 1
    return None


def _syntax_error(text: str, err: Exception) -> InputError:
    """formulaic's syntax error as one line: what, and the character where it happens."""
    lines = [ln for ln in _ANSI.sub("", str(err)).splitlines() if ln.strip()]
    what = lines[0] if lines else "the formula cannot be read"
    position = None
    for ln in lines[1:]:
        if _MARK_OPEN in ln:
            plain = ln.replace(_MARK_OPEN, "").replace(_MARK_CLOSE, "")
            offset = text.find(plain)
            position = max(offset, 0) + ln.index(_MARK_OPEN) + 1
            token = ln[ln.index(_MARK_OPEN) + 1:ln.index(_MARK_CLOSE)] if _MARK_CLOSE in ln else ""
            if token:
                what += f" (at {token!r})"
            break
    return InputError(f"the formula cannot be read: {what.rstrip('.')}", _where(position),
                      "Write it like y ~ a + b + C(group) + a:b; names with spaces go in "
                      "backticks, `like this`")


#: formulaic's context key for what `.` ("every other column") stands for.
AVAILABLE = "__formulaic_variables_available__"


def parse(text: str, available: Sequence[str] = ()) -> Any:
    """The formulaic Formula of `text`; InputError (with the character) when it cannot be
    read. available: the columns `.` stands for."""
    from formulaic import Formula
    from formulaic.errors import FormulaicError

    if not isinstance(text, str) or not text.strip():
        raise InputError("the formula is empty", "formula", "Write it like y ~ a + b")
    try:
        formula = Formula(text, _context={AVAILABLE: list(available)})
    except FormulaicError as e:
        raise _syntax_error(text, e) from None
    except (SyntaxError, ValueError, TypeError) as e:
        raise InputError(f"the formula cannot be read: {e}", "formula",
                         "Write it like y ~ a + b") from None
    return formula


_BACKTICKED = re.compile(r"`([^`]*)`")


def _python_names(code: str, text: str) -> set[str]:
    """Names a Python factor such as poly(x, 3) or np.log(`a b` + 1) reads from the data."""
    import ast
    import builtins

    from formulaic.transforms import TRANSFORMS

    quoted_names = _BACKTICKED.findall(code)
    plain = _BACKTICKED.sub(lambda m: f"__q{quoted_names.index(m.group(1))}__", code)
    try:
        tree = ast.parse(plain, mode="eval")
    except SyntaxError:
        return set(quoted_names)  # formulaic says what is wrong when it evaluates
    out: set[str] = set()
    called = {id(n.func) for n in ast.walk(tree) if isinstance(n, ast.Call)}
    for node in ast.walk(tree):
        if isinstance(node, ast.Name) and id(node) in called and node.id not in TRANSFORMS \
                and not hasattr(builtins, node.id):
            raise InputError(f"the formula calls {quoted(node.id)}, which is not a function "
                             "formulas know", _where(_position_of(node.id, text)),
                             "Use one of: " + ", ".join(sorted(k for k in TRANSFORMS
                                                               if k[0].islower())))
        if isinstance(node, ast.Name):
            m = re.fullmatch(r"__q(\d+)__", node.id)
            if m:
                out.add(quoted_names[int(m.group(1))])
            elif node.id not in TRANSFORMS and not hasattr(builtins, node.id):
                out.add(node.id)
    return out


def _required(formula: Any, text: str) -> list[str]:
    """Every data name the formula reads. formulaic's own list leaves out the arguments of
    some transforms (poly, center), so the tokens are read here as well."""
    from formulaic.parser.algos.tokenize import tokenize
    from formulaic.parser.types import Token

    names = {str(v) for v in formula.required_variables}
    for token in tokenize(text):
        if token.kind is Token.Kind.NAME and token.token != ".":  # "." is every column
            names.add(token.token)
        elif token.kind is Token.Kind.PYTHON:
            names |= _python_names(token.token, text)
    return sorted(names)


def check_names(text: str, formula: Any, table: Table) -> list[str]:
    """The table columns the formula uses, in table order; InputError naming the position
    of an unknown column and the nearest names, or of a date column."""
    columns = [str(c) for c in table.columns]
    used = _required(formula, text)
    for name in used:
        if name not in columns:
            raise InputError(f"the table has no column named {quoted(name)}",
                             _where(_position_of(name, text)), suggestion(name, columns))
    for name in used:
        if table.kinds.get(name) == "date":
            raise InputError(f"{quoted(name)} holds dates, which a formula cannot use as "
                             "numbers", _where(_position_of(name, text)),
                             "Make it numeric first (a kind step), or leave it out")
    return [c for c in columns if c in used]


def _listwise(table: Table, used: list[str]) -> tuple[np.ndarray, dict[str, int]]:
    """Rows without a missing value in any used column; each deleted row counted under the
    first missing column in table order (as the recipe counts them)."""
    kept = np.ones(table.n_rows, dtype=bool)
    dropped: dict[str, int] = {}
    for c in used:
        miss = np.asarray(table.frame[c].isna(), dtype=bool)
        hit = kept & miss
        if hit.any():
            dropped[c] = int(hit.sum())
            kept &= ~miss
    return kept, dropped


def _frame(table: Table, used: list[str], kept: np.ndarray) -> pd.DataFrame:
    """The used columns on the kept rows, in the types formulas expect: numbers as float,
    yes/no as bool, categories with only the levels present (as the recipe codes them)."""
    out = {}
    for c in used:
        col = table.frame[c][kept]
        kind = table.kinds.get(c)
        if kind == "boolean":
            col = col.astype(bool)
        elif kind == "categorical":
            col = col.cat.remove_unused_categories()
        out[c] = col.to_numpy() if kind == "numeric" else col.reset_index(drop=True)
    return pd.DataFrame(out)


def _evaluation_error(text: str, err: Exception, columns: list[str]) -> InputError:
    message = _ANSI.sub("", str(err)).splitlines()[0] if str(err) else type(err).__name__
    m = re.search(r"`([^`]+)` is not present", message)
    if m:
        name = m.group(1)
        return InputError(f"the table has no column named {quoted(name)}",
                          _where(_position_of(name, text)), suggestion(name, columns))
    return InputError(f"the formula could not be evaluated: {message}", "formula",
                      "Check the functions and names it uses (see docs/python-api.md)")


def _check_finite(name: str, values: np.ndarray, index: pd.Index, source: str) -> None:
    bad = ~np.isfinite(values)
    if bad.any():
        pos = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"the formula's column {quoted(name)} is not a finite number in {int(bad.sum())} "
            f"row(s), the first with {float(values[pos])!r}",
            f"{source}, {row_label(index, pos)}",
            "Change the formula (e.g. log(x + 1) for zeros) or the data",
        )


def start(table: Table, text: str) -> Start:
    """The formula's columns on the rows it can use, as a Table, plus the steps (response,
    intercept) that make that Table the formula's design."""
    # `.` stands for every column a formula can use: dates are not numbers.
    formula = parse(text, [str(c) for c in table.columns if table.kinds.get(c) != "date"])
    used = check_names(text, formula, table)
    kept, dropped = _listwise(table, used)
    if not kept.any():
        raise InputError("no rows are left after deleting rows with a missing value",
                         table.source, "Leave out the columns that are mostly missing")
    from formulaic import model_matrix
    from formulaic.errors import FormulaicError

    data = _frame(table, used, kept)
    try:
        # na_action "ignore": rows with missing values are already gone, so a NaN now comes
        # from a transform and is reported by row below rather than silently dropped.
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            mm = model_matrix(formula, data, na_action="ignore")
    except FormulaicError as e:
        raise _evaluation_error(text, e, [str(c) for c in table.columns]) from None
    except Exception as e:  # a transform failing on the data (e.g. log of text)
        raise _evaluation_error(text, e, [str(c) for c in table.columns]) from None
    rhs = getattr(mm, "rhs", mm)
    lhs = getattr(mm, "lhs", None)
    if not hasattr(rhs, "model_spec") or (lhs is not None and not hasattr(lhs, "columns")):
        raise InputError("the formula has several parts (|); a design is one matrix",
                         _where(text.find("|") + 1 if "|" in text else None),
                         "Write one right-hand side, such as y ~ a + b + c")
    index = table.frame.index[kept]
    names = [str(c) for c in rhs.columns]
    cols: dict[str, np.ndarray] = {}
    for name in names:
        values = np.asarray(rhs[name], dtype=np.float64)
        _check_finite(name, values, index, table.source)
        if name != FORMULAIC_INTERCEPT:
            cols[name] = values
    if INTERCEPT in cols:
        raise InputError(f"a formula column is named {quoted(INTERCEPT)}, the intercept's name",
                         "formula", "Rename that column in the table")
    response = None
    if lhs is not None:
        if lhs.shape[1] != 1:
            raise InputError(f"the left side of the formula makes {lhs.shape[1]} columns; a "
                             "design has one response", "formula",
                             "Write one response column (or expression) left of ~")
        response = str(lhs.columns[0])
        if response in cols:
            raise InputError(f"{quoted(response)} is both the response and a predictor",
                             "formula", "Take it out of the right side")
        y = np.asarray(lhs.iloc[:, 0], dtype=np.float64)
        _check_finite(response, y, index, table.source)
        cols[response] = y
    terms: dict[str, list[str]] = {}
    for term, where in rhs.model_spec.term_indices.items():
        members = [names[i] for i in where if names[i] != FORMULAIC_INTERCEPT]
        if members:
            terms[str(term)] = members
    steps: list[dict[str, Any]] = []
    if response is not None:
        steps.append({"step": "response", "column": response})
    if FORMULAIC_INTERCEPT not in names:
        steps.append({"step": "intercept", "include": False})
    frame = pd.DataFrame(cols, index=index, copy=False)
    notes = [f"The design starts from the formula {text.strip()}."]
    if dropped:
        counts = ", ".join(f"{quoted(c)} {k}" for c, k in dropped.items())
        notes.append(f"Deleted {int((~kept).sum())} of {table.n_rows} rows with a missing "
                     f"value: {counts}.")
    out = Table(frame=frame, kinds=dict.fromkeys(cols, "numeric"), source=table.source,
                notes=list(table.notes))
    return Start(out, steps, terms, table.n_rows, kept, dropped, notes)


_STEP = re.compile(r"recipe step (\d+)")


def _renumbered(e: InputError, shift: int) -> InputError:
    """An error of the caller's step k says step k, not k + the formula's own steps."""
    where = _STEP.sub(lambda m: f"recipe step {int(m.group(1)) - shift}", e.where, count=1)
    return InputError(e.what, where, e.todo)


def formula_design(table: Table, text: str, steps: Sequence[dict[str, Any]] = ()) -> Design:
    """The formula's design on the table, with any further recipe steps on top. Its columns
    carry the formula's names (the constant is INTERCEPT); each term with a column left is a
    group (for GVIF), besides the groups the steps make."""
    return formula_trace(table, text, steps)[0]


def formula_trace(table: Table, text: str, steps: Sequence[dict[str, Any]] = ()
                  ) -> tuple[Design, np.ndarray]:
    """formula_design, with the mask of the table's rows the design uses."""
    begun = start(table, text)
    try:
        trace = trace_design(begun.table, Recipe([*begun.steps, *steps]).steps)
    except InputError as e:
        raise _renumbered(e, len(begun.steps)) from e
    design = trace.design
    groups = {t: [c for c in cols if c in design.columns] for t, cols in begun.terms.items()}
    groups = {t: cols for t, cols in groups.items() if cols}
    groups.update(design.groups)
    design.groups = groups
    design.rows_total = begun.rows_total
    dropped = dict(begun.dropped_by)
    for c, k in design.dropped_by.items():
        dropped[c] = dropped.get(c, 0) + k
    design.dropped_by = dropped
    design.notes = begun.notes + design.notes
    kept = begun.kept.copy()
    kept[np.flatnonzero(kept)] = trace.kept
    return design, kept
