"""Writes a short numpy/pandas Python script that rebuilds X and y from the user's file.

Returns the script as text; never reads or writes files itself.
"""

from __future__ import annotations

import re
from typing import Any

from rankscope.design.design import INTERCEPT
from rankscope.design.names import number_text
from rankscope.design.recipe import Recipe
from rankscope.design.replay import Trace, trace_design
from rankscope.design.steps import describe_step
from rankscope.design.working import Col
from rankscope.tables.table import Table

_HELPERS = {
    "flags": '''def flags(s):
    """true/false-like text or numbers as 1.0/0.0; anything else is missing."""
    words = {"true": 1.0, "false": 0.0, "yes": 1.0, "no": 0.0, "t": 1.0, "f": 0.0,
             "y": 1.0, "n": 0.0, "1": 1.0, "0": 0.0, "1.0": 1.0, "0.0": 0.0}
    return s.map(lambda v: np.nan if pd.isna(v) else words.get(str(v).strip().lower(), np.nan))
''',
    "text": '''def text(s):
    """Category labels as text, missing as None."""
    return np.array([None if pd.isna(v) else str(v) for v in s], dtype=object)
''',
    "label": '''def label(v):
    """A number as a category label: 3 not 3.0."""
    return str(int(v)) if float(v).is_integer() and abs(v) < 1e15 else repr(float(v))
''',
}


def _needed(trace: Trace) -> dict[int, Col]:
    """The working columns X and y are computed from, directly or not, by id."""
    stack: list[Col] = list(trace.plan.predictors)
    if trace.plan.response is not None:
        stack.append(trace.plan.response)
    seen: dict[int, Col] = {}
    while stack:
        col = stack.pop()
        if id(col) not in seen:
            seen[id(col)] = col
            stack.extend(col.parents)
    return seen


def _reader(path: str, text_columns: list[str]) -> str:
    suffix = path.lower().rsplit(".", 1)[-1] if "." in path else ""
    dtype = f", dtype={{{', '.join(f'{c!r}: str' for c in text_columns)}}}" if text_columns else ""
    if suffix in ("parquet", "pq"):
        return "pd.read_parquet(SOURCE)"
    if suffix in ("xlsx", "xlsm", "xls"):
        return f"pd.read_excel(SOURCE{dtype})"
    if suffix in ("tsv", "tab"):
        return f'pd.read_csv(SOURCE, sep="\\t"{dtype})'
    return f"pd.read_csv(SOURCE{dtype})"


def _comment(text: str) -> str:
    """Text safe to put after a # or inside the docstring: column and file names may hold
    line breaks, NUL (which no Python source may contain) or lone surrogates (which UTF-8
    cannot write); every character that is not printable becomes a space."""
    return "".join(ch if ch.isprintable() else " " for ch in text)


def _c(name: str) -> str:
    return f"c[{name!r}]"


def _kind_code(step: dict[str, Any], before: Col, helpers: set[str]) -> list[str]:
    name, to = step["column"], step["to"]
    if to == "categorical" and before.kind == "numeric":
        helpers.add("label")
        return [f"{_c(name)} = np.array([label(v) for v in {_c(name)}], dtype=object)"]
    if to == "categorical":
        return [f'{_c(name)} = np.where({_c(name)} == 1, "true", "false").astype(object)']
    if to == "numeric" and before.kind == "categorical":
        return [f"{_c(name)} = np.array([float(v) for v in {_c(name)}])"]
    if to == "numeric" and before.kind == "date":
        return [f'{_c(name)} = ({_c(name)} - np.datetime64("1970-01-01")) / np.timedelta64(1, "D")']
    return ["# (the values stay 0 and 1)"]


def _log_code(step: dict[str, Any]) -> str:
    x = _c(step["column"])
    shift = step.get("shift", 0)
    if shift:
        x = f"({x} + {number_text(shift)})"
    base = step.get("base")
    if base is None:
        return f"np.log({x})"
    if base in (10, 2):
        return f"np.log{number_text(base)}({x})"
    return f"np.log({x}) / np.log({number_text(base)})"


def _combine_code(step: dict[str, Any], out: str) -> list[str]:
    members = [_c(m) for m in step["columns"]]
    stacked = f"np.column_stack([{', '.join(members)}])"
    method = step["method"]
    if method in ("sum", "mean"):
        return [f"{_c(out)} = {stacked}.{method}(axis=1)"]
    if method == "difference":
        return [f"{_c(out)} = {members[0]} - {members[1]}"]
    if method == "ratio":
        return [f"{_c(out)} = {members[0]} / {members[1]}"]
    return [
        f"z = {stacked}",
        "z = (z - z.mean(axis=0)) / z.std(axis=0, ddof=1)",
        "w = np.linalg.svd(z, full_matrices=False)[2][0]",
        "w = w * np.sign(w[np.argmax(np.abs(w))])  # largest weight positive",
        f"{_c(out)} = z @ w",
    ]


def _step_code(
    step: dict[str, Any], made: list[Col], before: Col | None, helpers: set[str]
) -> list[str]:
    kind = step["step"]
    if kind == "kind":
        assert before is not None
        return _kind_code(step, before, helpers)
    out = made[0].name
    if kind == "product":
        a, b = step["columns"]
        return [f"{_c(out)} = {_c(a)} * {_c(b)}"]
    if kind == "combine":
        return _combine_code(step, out)
    x = _c(step["column"])
    expr = {
        "center": f"{x} - {x}.mean()",
        "standardize": f"({x} - {x}.mean()) / {x}.std(ddof=1)",
        "unit_length": f"{x} / np.linalg.norm({x})",
        "multiply": f"{x} * {number_text(step.get('by', 1))}",
        "power": f"np.power({x}, {float(step.get('exponent', 1))!r})",
    }.get(kind) or _log_code(step)
    return [f"{_c(out)} = {expr}"]


def _matrix_code(trace: Trace) -> list[str]:
    design = trace.design
    entries = []
    indicator_of = {
        name: (col, name[len(col) + 1 : -1])
        for col, names in design.groups.items()
        for name in names
    }
    for i, name in enumerate(design.columns):
        if i == 0 and trace.working.intercept:
            entries.append(f"    np.ones(len(data)),  # {_comment(INTERCEPT)}")
        elif name in indicator_of:
            col, level = indicator_of[name]
            entries.append(f"    ({_c(col)} == {level!r}).astype(float),  # {_comment(name)}")
        else:
            entries.append(f"    {_c(name)},")
    y = "None" if design.response is None else _c(design.response)
    return ["X = np.column_stack([", *entries, "])", f"columns = {design.columns!r}", f"y = {y}"]


def recipe_to_python(recipe: Recipe, source_path: str, table: Table) -> str:
    """A script that rebuilds build_design(table, recipe)'s X and y from the file at source_path.

    The table is needed because the recipe's defaults (which columns, their kinds) and the
    rows kept depend on it. Raises InputError when the recipe does not build.
    """
    steps = recipe.steps
    trace = trace_design(table, steps)
    needed = _needed(trace)
    helpers: set[str] = set()
    # The table's own columns that X and y need, in table order.
    roots = {c.name: c.kind for c in needed.values() if not c.parents}
    kinds = {name: roots[name] for name in trace.plan.sources}
    body = [f"data = {_reader(source_path, [n for n, k in kinds.items() if k == 'categorical'])}"]
    for name, kind in kinds.items():
        col = f"data[{name!r}]"
        if kind == "numeric":
            body.append(f'{col} = pd.to_numeric({col}, errors="coerce")')
        elif kind == "boolean":
            helpers.add("flags")
            body.append(f"{col} = flags({col})")
        elif kind == "date":
            body.append(f'{col} = pd.to_datetime({col}, errors="coerce")')
    body += [
        "# Listwise deletion: keep rows where no column used below is missing.",
        f"data = data.dropna(subset={trace.plan.sources!r}).reset_index(drop=True)",
        "",
        "c = {}  # working columns by name, as numpy arrays",
    ]
    for name, kind in kinds.items():
        if kind == "categorical":
            helpers.add("text")
            body.append(f"{_c(name)} = text(data[{name!r}])")
        elif kind == "date":
            body.append(f'{_c(name)} = data[{name!r}].to_numpy("datetime64[ns]")')
        else:
            body.append(f"{_c(name)} = data[{name!r}].to_numpy(float)")
    for position, (step, made) in enumerate(zip(steps, trace.working.made, strict=True), start=1):
        body.append("")
        body.append(f"# Step {position}: {_comment(describe_step(step))}")
        if made and any(id(c) in needed for c in made):
            before = made[0].parents[0] if made[0].parents else None
            body += _step_code(step, made, before, helpers)
    body += ["", *_matrix_code(trace)]
    # Only the file name goes into the docstring: a Windows path would read as escapes.
    file_name = _comment(re.split(r"[\\/]", source_path)[-1].replace('"', "'"))
    head = [
        f'"""Rebuild the design matrix X and the response y from {file_name}.',
        "",
        f"Written by rankscope from a recipe of {len(steps)} step(s); "
        f"keeps {trace.design.rows_used} of {trace.design.rows_total} rows.",
        '"""',
        "",
        "import numpy as np",
        "import pandas as pd",
        "",
        f"SOURCE = {source_path!r}",
        "",
    ]
    for name in sorted(helpers):
        head += ["", _HELPERS[name]]
    tail = [
        "",
        'if __name__ == "__main__":',
        '    print(f"X: {X.shape[0]} rows, {X.shape[1]} columns")',
    ]
    return "\n".join(head + [""] + body + tail) + "\n"
