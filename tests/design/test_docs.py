"""docs/recipe.md against the code: every step and field, every example valid.

Reference: the document itself (the format users read) compared with steps.SPECS.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

from rankscope.design.recipe import Recipe
from rankscope.design.steps import SPECS, describe_step

DOC = (Path(__file__).resolve().parents[2] / "docs" / "recipe.md").read_text(encoding="utf-8")


def test_every_step_and_field_is_documented() -> None:
    for name, spec in SPECS.items():
        section = DOC.split(f"\n### `{name}`\n", 1)
        assert len(section) == 2, f"no section for {name}"
        body = re.split(r"\n##+ ", section[1], maxsplit=1)[0]
        for field in spec.fields:
            assert f"`{field.name}`" in body, f"{name}: field {field.name} undocumented"


def test_examples_are_valid_recipes() -> None:
    examples = re.findall(r"`(\{\"step\".*?\})`", DOC)
    fenced = re.search(r"```json\n(.*?)```", DOC, re.S)
    assert fenced is not None and len(examples) >= len(SPECS)
    # Reference: json.loads parses each example; Recipe validation accepts it.
    Recipe([json.loads(e) for e in examples])
    assert len(Recipe.from_json(fenced.group(1))) == 5


def test_history_sentence_example() -> None:
    sentence = describe_step({"step": "log", "column": "visits", "base": 10, "shift": 1})
    assert f"`{sentence}`" in DOC
