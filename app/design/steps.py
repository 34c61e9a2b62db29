"""Recipe steps: their names and fields, validation of one step, names of new columns, wording.

Checks the shape of a step only; applying steps to data lives in the apply_* modules.
"""

from __future__ import annotations

import math
import sys
from dataclasses import dataclass
from typing import Any

from rankscope.design.names import close_matches, number_text, quoted, suggestion
from rankscope.tables.errors import InputError

ALL_LEVELS = "all"
COMBINE_METHODS = ("sum", "mean", "difference", "ratio", "first_component")
MISSING_POLICIES = ("delete_rows", "drop_column")
KIND_TARGETS = ("numeric", "categorical", "boolean")


@dataclass(frozen=True)
class Field:
    """One field of a step: its JSON type, whether it is required, and a line of help."""

    name: str
    type: str  # column | column_or_null | columns | text | number | flag | choice
    required: bool
    help: str
    choices: tuple[str, ...] = ()


@dataclass(frozen=True)
class StepSpec:
    """A step name with its fields and one sentence on what it does."""

    name: str
    summary: str
    fields: tuple[Field, ...]

    def field(self, name: str) -> Field:
        return next(f for f in self.fields if f.name == name)


_COLUMN = Field("column", "column", True, "a column as currently named")
_NAME = Field("name", "text", False, "name of the result (default: derived from the column)")
_KEEP = Field("keep", "flag", False, "true keeps the original column next to the result")

SPECS: dict[str, StepSpec] = {
    s.name: s
    for s in (
        StepSpec(
            "response",
            "Choose the response y (null clears it).",
            (Field("column", "column_or_null", True, "the response column, or null"),),
        ),
        StepSpec(
            "intercept",
            "Include or leave out the constant column.",
            (Field("include", "flag", True, "true to include the intercept"),),
        ),
        StepSpec("drop", "Leave a column out of the predictors.", (_COLUMN,)),
        StepSpec("restore", "Bring a dropped column back as a predictor.", (_COLUMN,)),
        StepSpec(
            "indicators",
            "Choose how a categorical column becomes 0/1 columns.",
            (
                _COLUMN,
                Field(
                    "reference",
                    "text",
                    False,
                    'the level without a column, or "all" to keep every level '
                    "(default: the first level in sorted order)",
                ),
            ),
        ),
        StepSpec("center", "Subtract the column's mean.", (_COLUMN, _NAME, _KEEP)),
        StepSpec(
            "standardize",
            "Subtract the mean, divide by the sample standard deviation.",
            (_COLUMN, _NAME, _KEEP),
        ),
        StepSpec(
            "unit_length", "Divide by the Euclidean length of the column.", (_COLUMN, _NAME, _KEEP)
        ),
        StepSpec(
            "multiply",
            "Multiply by a constant (a change of unit).",
            (_COLUMN, Field("by", "number", True, "a non-zero number"), _NAME, _KEEP),
        ),
        StepSpec(
            "log",
            "Take the logarithm of column + shift.",
            (
                _COLUMN,
                Field("base", "number", False, "positive, not 1 (default: e, the natural log)"),
                Field("shift", "number", False, "added before the log (default 0)"),
                _NAME,
                _KEEP,
            ),
        ),
        StepSpec(
            "power",
            "Raise to a power.",
            (_COLUMN, Field("exponent", "number", True, "any number"), _NAME, _KEEP),
        ),
        StepSpec(
            "product",
            "Add the product of two columns (they stay).",
            (
                Field(
                    "columns", "columns", True, "exactly two columns (the same one twice squares)"
                ),
                Field("name", "text", True, "name of the new column"),
            ),
        ),
        StepSpec(
            "combine",
            "Replace a group of columns by one column made from them.",
            (
                Field("columns", "columns", True, "two or more different columns"),
                Field(
                    "method",
                    "choice",
                    True,
                    "sum, mean, difference (first minus second), ratio (first over second), "
                    "first_component (first principal component of the standardized group)",
                    COMBINE_METHODS,
                ),
                Field("name", "text", True, "name of the new column"),
            ),
        ),
        StepSpec(
            "missing",
            "Choose what a column's missing values do.",
            (
                _COLUMN,
                Field(
                    "policy",
                    "choice",
                    True,
                    "delete_rows (the default: rows missing it are deleted) or drop_column "
                    "(leave the column out when it has missing values)",
                    MISSING_POLICIES,
                ),
            ),
        ),
        StepSpec(
            "kind",
            "Treat a column as another kind.",
            (
                _COLUMN,
                Field("to", "choice", True, "numeric, categorical or boolean", KIND_TARGETS),
            ),
        ),
    )
}

# Steps that take one column and make one numeric column from it.
SINGLE_COLUMN = ("center", "standardize", "unit_length", "multiply", "log", "power")


def finite_number(value: int | float) -> bool:
    """True for a number a float can hold (JSON integers may be far larger)."""
    if isinstance(value, int):
        return abs(value) <= sys.float_info.max
    return math.isfinite(value)


def short_number(value: int | float) -> str:
    """A number for a message: a huge integer by its size, not its 400 digits."""
    if isinstance(value, int) and abs(value) > sys.float_info.max:
        return f"an integer of {len(str(abs(value))):,} digits"
    return repr(value)


def _bad(what: str, where: str, todo: str = "") -> InputError:
    return InputError(what, where, todo)


def _check_field(spec: StepSpec, f: Field, value: Any, where: str) -> None:
    label = f"field {quoted(f.name)} of the {spec.name} step"
    if f.type in ("column", "text"):
        if not isinstance(value, str) or not value.strip():
            raise _bad(f"{label} must be non-empty text, not {value!r}", where, f.help)
    elif f.type == "column_or_null":
        if value is not None and (not isinstance(value, str) or not value.strip()):
            raise _bad(f"{label} must be a column name or null, not {value!r}", where, f.help)
    elif f.type == "columns":
        if not isinstance(value, list) or not all(isinstance(v, str) and v.strip() for v in value):
            raise _bad(f"{label} must be a list of column names, not {value!r}", where, f.help)
    elif f.type == "number":
        # bool is an int in Python; true/false as a number is a mistake in the JSON
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise _bad(f"{label} must be a number, not {value!r}", where, f.help)
        if not finite_number(value):
            raise _bad(f"{label} must be a finite number, not {short_number(value)}", where,
                       f.help)
    elif f.type == "flag":
        if not isinstance(value, bool):
            raise _bad(f"{label} must be true or false, not {value!r}", where, f.help)
    elif f.type == "choice":
        if value not in f.choices:
            near = close_matches(str(value), f.choices)
            hint = f"Did you mean {quoted(near[0])}? " if near else ""
            raise _bad(
                f"{label} must be one of {', '.join(f.choices)}, not {value!r}",
                where,
                hint + f.help,
            )


def _check_together(step: dict[str, Any], where: str) -> None:
    """Rules that involve more than one field."""
    name = step["step"]
    if name == "multiply" and step["by"] == 0:
        raise _bad("multiply by 0 would erase the column", where, "Use a drop step instead")
    if name == "log" and "base" in step:
        base = step["base"]
        if base <= 0 or base == 1:
            raise _bad(
                f"a log base must be positive and not 1, not {number_text(base)}",
                where,
                "Leave out base for the natural log, or use 10 or 2",
            )
    if name == "product" and len(step["columns"]) != 2:
        raise _bad(
            f"a product takes exactly 2 columns, got {len(step['columns'])}",
            where,
            "Chain product steps for more factors",
        )
    if name == "combine":
        members = step["columns"]
        if len(members) < 2:
            raise _bad(
                f"combine needs at least 2 columns, got {len(members)}",
                where,
                "Use a single-column step (such as multiply) for one column",
            )
        repeated = [m for i, m in enumerate(members) if m in members[:i]]
        if repeated:
            raise _bad(f"combine lists {quoted(repeated[0])} twice", where, "List each once")
        if step["method"] in ("difference", "ratio") and len(members) != 2:
            raise _bad(
                f"a {step['method']} combines exactly 2 columns, got {len(members)}",
                where,
                "List the first and the second column only",
            )


def validate_step(step: Any, position: int | None = None) -> dict[str, Any]:
    """Check one step's shape; return a copy. position (1-based) goes into messages."""
    where = f"recipe step {position}" if position is not None else "recipe step"
    if not isinstance(step, dict):
        raise _bad(
            f"a step must be an object with a 'step' field, not {type(step).__name__}",
            where,
            'Write it like {"step": "drop", "column": "x"}',
        )
    name = step.get("step")
    if not isinstance(name, str):
        raise _bad(
            "the step has no 'step' field naming what to do",
            where,
            "Add one of: " + ", ".join(SPECS),
        )
    if name not in SPECS:
        raise _bad(f"unknown step {quoted(name)}", where, suggestion(name, SPECS))
    spec = SPECS[name]
    allowed = [f.name for f in spec.fields]
    for key in step:
        if key != "step" and key not in allowed:
            raise _bad(
                f"the {name} step has no field {quoted(key)}",
                where,
                f"Its fields: {', '.join(allowed)}. " + suggestion(str(key), allowed),
            )
    for f in spec.fields:
        if f.name not in step:
            if f.required:
                raise _bad(f"the {name} step needs the field {quoted(f.name)}", where, f.help)
            continue
        _check_field(spec, f, step[f.name], where)
    _check_together(step, where)
    return {key: (list(v) if isinstance(v, list) else v) for key, v in step.items()}


def output_name(step: dict[str, Any]) -> str:
    """The name of the column a single-column, product or combine step makes."""
    if "name" in step:
        return str(step["name"])
    col = step["column"]
    kind = step["step"]
    if kind == "center":
        return f"{col} (centered)"
    if kind == "standardize":
        return f"{col} (standardized)"
    if kind == "unit_length":
        return f"{col} (unit length)"
    if kind == "multiply":
        return f"{col}*{number_text(step['by'])}"
    if kind == "power":
        return f"{col}^{number_text(step['exponent'])}"
    if kind == "log":
        shift = step.get("shift", 0)
        inner = col if shift == 0 else f"{col}{'+' if shift > 0 else '-'}{number_text(abs(shift))}"
        base = step.get("base")
        prefix = "log" if base is None else f"log{number_text(base)}"
        return f"{prefix}({inner})"
    raise ValueError(f"{kind} steps name their result with the 'name' field")


def _result(step: dict[str, Any]) -> str:
    made = output_name(step)
    if step.get("keep"):
        return f", kept beside it as {quoted(made)}"
    return f" (now {quoted(made)})" if made != step["column"] else ""


def describe_step(step: dict[str, Any]) -> str:
    """A short sentence for the history list, e.g. 'Drop "x" from the predictors.'"""
    step = validate_step(step)
    kind = step["step"]
    col = quoted(step.get("column"))
    if kind == "response":
        if step["column"] is None:
            return "Clear the response."
        return f"Use {col} as the response."
    if kind == "intercept":
        return "Include the intercept." if step["include"] else "Leave out the intercept."
    if kind == "drop":
        return f"Drop {col} from the predictors."
    if kind == "restore":
        return f"Restore {col} as a predictor."
    if kind == "indicators":
        ref = step.get("reference")
        if ref is None:
            return f"Code {col} with indicators against its first level."
        if ref == ALL_LEVELS:
            return f"Code {col} with one indicator for every level."
        return f"Code {col} with indicators against level {quoted(ref)}."
    if kind == "center":
        return f"Center {col} at its mean{_result(step)}."
    if kind == "standardize":
        return f"Standardize {col} to mean 0 and standard deviation 1{_result(step)}."
    if kind == "unit_length":
        return f"Scale {col} to unit length{_result(step)}."
    if kind == "multiply":
        return f"Multiply {col} by {number_text(step['by'])}{_result(step)}."
    if kind == "log":
        base = step.get("base")
        which = "natural log" if base is None else f"base-{number_text(base)} log"
        shift = step.get("shift", 0)
        of = col if shift == 0 else f"{col} {'+' if shift > 0 else '-'} {number_text(abs(shift))}"
        return f"Take the {which} of {of}{_result(step)}."
    if kind == "power":
        return f"Raise {col} to the power {number_text(step['exponent'])}{_result(step)}."
    if kind == "product":
        a, b = (quoted(c) for c in step["columns"])
        return f"Add the product of {a} and {b} as {quoted(step['name'])}."
    if kind == "combine":
        members = [quoted(c) for c in step["columns"]]
        new = quoted(step["name"])
        method = step["method"]
        if method == "difference":
            return (
                f"Replace {members[0]} and {members[1]} by {members[0]} minus {members[1]}, {new}."
            )
        if method == "ratio":
            return (
                f"Replace {members[0]} and {members[1]} by {members[0]} over {members[1]}, {new}."
            )
        group = ", ".join(members[:-1]) + " and " + members[-1]
        if method == "first_component":
            return f"Replace {group} by their first principal component, {new}."
        return f"Replace {group} by their {method}, {new}."
    if kind == "missing":
        if step["policy"] == "drop_column":
            return f"Leave {col} out if it has missing values, instead of deleting rows."
        return f"Delete rows where {col} is missing."
    if kind == "kind":
        return f"Treat {col} as {step['to']}."
    raise AssertionError(f"no wording for step {kind}")
