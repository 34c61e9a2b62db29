"""Recipe objects: JSON round trip, reading mistakes, immutability, deterministic replay.

References: Python's json module (RFC 8259 JSON) and the format in the recipe page (docs/recipe.md).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from rankscope.design.recipe import Recipe, build_design
from rankscope.tables.errors import InputError
from tests.design.tables import table

STEPS = [
    {"step": "response", "column": "y"},
    {"step": "log", "column": "x", "base": 10},
    {"step": "indicators", "column": "c", "reference": "all"},
    {"step": "product", "columns": ["log10(x)", "z"], "name": "lx z"},
    {"step": "intercept", "include": False},
]


def test_json_round_trip() -> None:
    recipe = Recipe(STEPS)
    text = recipe.to_json()
    # Reference: json.loads parses what we wrote, and the steps come back unchanged.
    assert json.loads(text)["steps"] == STEPS
    assert Recipe.from_json(text) == recipe
    assert Recipe.from_json(recipe.to_json(indent=None)).steps == STEPS


def test_bare_list_is_accepted() -> None:
    # Reference: the recipe page (docs/recipe.md) allows a bare JSON list of steps.
    assert Recipe.from_json(json.dumps(STEPS)) == Recipe(STEPS)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ('[{"step": "drop", "column": "x"', "not valid JSON"),
        ('{"recipe": []}', "a recipe is a list of steps"),
        ('{"steps": [], "author": "me"}', '"author"'),
        ('{"format": "other", "steps": []}', "not a rankscope recipe"),
        ('{"version": 99, "steps": []}', "version 99"),
        ('{"steps": {"step": "drop"}}', "must be a list"),
        ('[{"step": "drop", "column": "x"}, {"step": "zap"}]', "recipe step 2"),
        ("42", "a recipe is a list of steps"),
    ],
)
def test_reading_mistakes(text: str, words: str) -> None:
    # Reference: the recipe page (docs/recipe.md) (top-level fields, version 1).
    with pytest.raises(InputError) as e:
        Recipe.from_json(text)
    assert words in str(e.value)


def test_json_error_names_line_and_column() -> None:
    with pytest.raises(InputError) as e:
        Recipe.from_json('[\n  {"step": "drop" "column": "x"}\n]')
    # Reference: counted by hand, the quote opening "column" is character 19 of line 2,
    # where the comma is missing (json.JSONDecodeError's lineno/colno are 1-based).
    assert "line 2, column 19" in e.value.where


def test_recipe_is_immutable() -> None:
    recipe = Recipe(STEPS[:2])
    recipe.steps[0]["column"] = "changed"
    assert recipe.steps[0]["column"] == "y"  # reference: steps returns copies
    longer = recipe.add({"step": "drop", "column": "z"})
    assert len(recipe) == 2 and len(longer) == 3
    assert longer.without_last() == recipe
    with pytest.raises(InputError):
        recipe.add({"step": "drop"})  # an invalid step never enters a recipe


def test_replay_is_deterministic() -> None:
    rng = np.random.default_rng(7)
    n = 40
    frame = pd.DataFrame(
        {
            "y": rng.normal(size=n),
            "x": rng.uniform(1, 9, n),
            "z": rng.normal(size=n),
            "w": rng.normal(size=n),
            "c": rng.choice(["p", "q", "r"], n),
        }
    )
    frame.loc[[3, 8], "z"] = np.nan
    steps = STEPS[:4] + [
        {"step": "combine", "columns": ["z", "w"], "method": "first_component", "name": "pc"},
        {"step": "standardize", "column": "pc"},
    ]
    first = build_design(table(frame), Recipe(steps))
    again = build_design(table(frame.copy()), Recipe.from_json(Recipe(steps).to_json()))
    # Reference: replay is a pure function of (table, recipe); bytes must match exactly.
    assert first.X.tobytes() == again.X.tobytes()
    assert first.columns == again.columns and first.notes == again.notes
    assert first.y is not None and again.y is not None and first.y.tobytes() == again.y.tobytes()
