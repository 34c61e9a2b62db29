"""The Recipe (an ordered list of plain-dict steps, stored as JSON) and build_design.

No file access: JSON comes in and goes out as text; the caller reads and writes files.
"""

from __future__ import annotations

import copy
import json
import re
from collections.abc import Iterable, Iterator
from typing import Any

from rankscope.design.design import Design
from rankscope.design.names import quoted
from rankscope.design.replay import trace_design
from rankscope.design.steps import validate_step
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

FORMAT = "rankscope-recipe"
VERSION = 1
#: Deepest nesting of brackets a recipe may have. A recipe needs four (the document, its
#: steps, a step, a list of columns); JSON nested thousands deep would exhaust Python's
#: recursion while it is read, so it is refused before.
MAX_DEPTH = 20
_STRINGS = re.compile(r'"(?:[^"\\]|\\.)*"?')  # never fails, so never backtracks
_BRACKETS = re.compile(r"[\[\]{}]")


def nesting_depth(text: str, limit: int = MAX_DEPTH) -> int:
    """How deep brackets nest in JSON text, outside strings (counting stops past limit)."""
    depth = deepest = 0
    for m in _BRACKETS.finditer(_STRINGS.sub('""', text)):
        depth += 1 if m.group() in "[{" else -1
        if depth > deepest:
            deepest = depth
            if deepest > limit:
                break
    return deepest


class Recipe:
    """An ordered list of validated steps. Immutable: `add` and `without_last` return new ones."""

    def __init__(self, steps: Iterable[Any] = ()) -> None:
        self._steps = tuple(validate_step(s, i) for i, s in enumerate(steps, start=1))

    @property
    def steps(self) -> list[dict[str, Any]]:
        """Copies of the steps, so callers cannot change the recipe behind its back."""
        return copy.deepcopy(list(self._steps))

    def __len__(self) -> int:
        return len(self._steps)

    def __iter__(self) -> Iterator[dict[str, Any]]:
        return iter(self.steps)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Recipe) and self._steps == other._steps

    def __hash__(self) -> int:
        return hash(self.to_json())

    def __repr__(self) -> str:
        return f"Recipe({self.steps!r})"

    def add(self, step: dict[str, Any]) -> Recipe:
        return Recipe([*self._steps, step])

    def without_last(self) -> Recipe:
        return Recipe(self._steps[:-1])

    def to_json(self, indent: int | None = 2) -> str:
        doc = {"format": FORMAT, "version": VERSION, "steps": self.steps}
        return json.dumps(doc, indent=indent, ensure_ascii=False, allow_nan=False)

    @classmethod
    def from_json(cls, text: str) -> Recipe:
        """Read a recipe written by to_json, or a bare JSON list of steps."""
        if nesting_depth(text) > MAX_DEPTH:
            raise InputError(f"the recipe nests brackets more than {MAX_DEPTH} deep; a recipe "
                             "needs four (the file, its steps, a step, a list of columns)",
                             "recipe", "Choose a recipe file written by rankscope")
        try:
            doc = json.loads(text)
        except json.JSONDecodeError as e:
            raise InputError(
                f"the recipe is not valid JSON ({e.msg})",
                f"recipe, line {e.lineno}, column {e.colno}",
                "Check brackets, commas and quotes there",
            ) from e
        if isinstance(doc, list):
            return cls(doc)
        if not isinstance(doc, dict) or "steps" not in doc:
            raise InputError(
                "a recipe is a list of steps, or an object with a 'steps' list",
                "recipe",
                'Write it like {"steps": [{"step": "drop", "column": "x"}]}',
            )
        extra = sorted(set(doc) - {"format", "version", "steps"})
        if extra:
            raise InputError(
                f"a recipe has no field {quoted(extra[0])}",
                "recipe",
                "Its fields: format, version, steps",
            )
        if doc.get("format", FORMAT) != FORMAT:
            raise InputError(f"this is not a rankscope recipe (format {doc['format']!r})", "recipe")
        version = doc.get("version", VERSION)
        if not isinstance(version, int) or isinstance(version, bool) or version > VERSION:
            raise InputError(
                f"recipe version {version!r} is not one this rankscope reads (up to {VERSION})",
                "recipe",
                "Update rankscope",
            )
        if not isinstance(doc["steps"], list):
            raise InputError("the recipe's 'steps' must be a list", "recipe")
        return cls(doc["steps"])


def build_design(table: Table, recipe: Recipe) -> Design:
    """Replay the recipe on the table. The same table and recipe give the same Design."""
    return trace_design(table, recipe.steps).design
