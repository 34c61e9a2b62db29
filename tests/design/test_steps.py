"""Step validation, result names and the history sentences.

References: the recipe format in docs/recipe.md (our own specification) and the Python
json module's notion of types.
"""

from __future__ import annotations

import pytest

from rankscope.design.steps import SPECS, describe_step, output_name, validate_step
from rankscope.tables.errors import InputError

ONE_OF_EACH = [
    {"step": "response", "column": "y"},
    {"step": "response", "column": None},
    {"step": "intercept", "include": False},
    {"step": "drop", "column": "x"},
    {"step": "restore", "column": "x"},
    {"step": "indicators", "column": "c"},
    {"step": "indicators", "column": "c", "reference": "b"},
    {"step": "indicators", "column": "c", "reference": "all"},
    {"step": "center", "column": "x"},
    {"step": "standardize", "column": "x", "keep": True},
    {"step": "unit_length", "column": "x", "name": "x1"},
    {"step": "multiply", "column": "x", "by": 1000},
    {"step": "log", "column": "x", "base": 10, "shift": 1},
    {"step": "power", "column": "x", "exponent": 0.5},
    {"step": "product", "columns": ["x", "z"], "name": "xz"},
    {"step": "combine", "columns": ["x", "z", "w"], "method": "sum", "name": "s"},
    {"step": "combine", "columns": ["x", "z"], "method": "difference", "name": "d"},
    {"step": "combine", "columns": ["x", "z"], "method": "ratio", "name": "r"},
    {"step": "combine", "columns": ["x", "z"], "method": "first_component", "name": "pc"},
    {"step": "missing", "column": "x", "policy": "drop_column"},
    {"step": "missing", "column": "x", "policy": "delete_rows"},
    {"step": "kind", "column": "x", "to": "categorical"},
]


def message(excinfo: pytest.ExceptionInfo[InputError]) -> str:
    return str(excinfo.value)


@pytest.mark.parametrize("step", ONE_OF_EACH, ids=lambda s: s["step"])
def test_valid_steps_pass_and_have_a_sentence(step: dict) -> None:
    # Reference: docs/recipe.md lists these as valid; validation returns an equal copy.
    assert validate_step(step, 1) == step
    sentence = describe_step(step)
    # Reference: the UI history shows one sentence (common practice: capital, full stop).
    assert sentence[0].isupper() and sentence.endswith(".")
    for name in (step.get("column"), *step.get("columns", [])):
        if name:
            assert f'"{name}"' in sentence  # the sentence names the columns it touches


def test_every_step_has_a_valid_example() -> None:
    # Reference: SPECS is the list documented in docs/recipe.md; each needs a test above.
    assert {s["step"] for s in ONE_OF_EACH} == set(SPECS)


def test_unknown_step_names_the_close_one() -> None:
    with pytest.raises(InputError) as e:
        validate_step({"step": "standardise", "column": "x"}, 3)
    # Reference: the brief asks for close matches; "standardize" is one letter away.
    assert "recipe step 3" in message(e) and '"standardize"' in message(e)


def test_unknown_field_lists_the_fields() -> None:
    with pytest.raises(InputError) as e:
        validate_step({"step": "drop", "colum": "x"})
    assert '"colum"' in message(e) and "column" in e.value.todo


@pytest.mark.parametrize(
    ("step", "words"),
    [
        ({"column": "x"}, "no 'step' field"),
        ("drop x", "must be an object"),
        ({"step": "drop"}, 'needs the field "column"'),
        ({"step": "drop", "column": ""}, "non-empty text"),
        ({"step": "drop", "column": 3}, "non-empty text"),
        ({"step": "intercept", "include": "no"}, "true or false"),
        ({"step": "multiply", "column": "x", "by": True}, "must be a number"),
        ({"step": "multiply", "column": "x", "by": float("inf")}, "finite"),
        ({"step": "multiply", "column": "x", "by": 0}, "multiply by 0"),
        ({"step": "log", "column": "x", "base": 1}, "log base"),
        ({"step": "log", "column": "x", "base": -2}, "log base"),
        ({"step": "product", "columns": ["x"], "name": "p"}, "exactly 2"),
        ({"step": "product", "columns": "x", "name": "p"}, "list of column names"),
        ({"step": "combine", "columns": ["x"], "method": "sum", "name": "s"}, "at least 2"),
        ({"step": "combine", "columns": ["x", "x"], "method": "sum", "name": "s"}, "twice"),
        (
            {"step": "combine", "columns": ["a", "b", "c"], "method": "ratio", "name": "r"},
            "exactly 2",
        ),
        ({"step": "combine", "columns": ["a", "b"], "method": "summ", "name": "s"}, '"sum"'),
        ({"step": "missing", "column": "x", "policy": "impute"}, "delete_rows"),
        ({"step": "kind", "column": "x", "to": "date"}, "numeric, categorical"),
        ({"step": "response", "column": 5}, "column name or null"),
    ],
)
def test_bad_steps_say_why(step: object, words: str) -> None:
    # Reference: docs/recipe.md (field types and rules for each step).
    with pytest.raises(InputError) as e:
        validate_step(step, 2)
    assert words in message(e)
    assert "recipe step 2" in message(e)


def test_validated_step_is_a_copy() -> None:
    step = {"step": "product", "columns": ["a", "b"], "name": "ab"}
    copy = validate_step(step)
    copy["columns"].append("c")
    assert step["columns"] == ["a", "b"]  # reference: the caller's dict is not aliased


@pytest.mark.parametrize(
    ("step", "name"),
    [
        ({"step": "center", "column": "x"}, "x (centered)"),
        ({"step": "standardize", "column": "x"}, "x (standardized)"),
        ({"step": "unit_length", "column": "x"}, "x (unit length)"),
        ({"step": "multiply", "column": "x", "by": 1000}, "x*1000"),
        ({"step": "multiply", "column": "x", "by": 0.001}, "x*0.001"),
        ({"step": "power", "column": "x", "exponent": 2}, "x^2"),
        ({"step": "log", "column": "x"}, "log(x)"),
        ({"step": "log", "column": "x", "base": 10, "shift": 1}, "log10(x+1)"),
        ({"step": "log", "column": "x", "shift": -0.5}, "log(x-0.5)"),
        ({"step": "log", "column": "x", "name": "lx"}, "lx"),
    ],
)
def test_result_names(step: dict, name: str) -> None:
    # Reference: the naming rules in docs/recipe.md.
    assert output_name(step) == name


def test_describe_refuses_a_bad_step() -> None:
    with pytest.raises(InputError):
        describe_step({"step": "drop"})
