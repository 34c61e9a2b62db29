"""The shapes an analysis of a session takes: its settings, working columns and result.

Plain frozen records only; computes nothing.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from rankscope.design.design import INTERCEPT
from rankscope.design.recipe import Recipe

#: Categorical columns with more levels than this get no level chooser (a free-text
#: field instead): a menu of thousands of levels helps nobody.
LEVEL_MENU_LIMIT = 60


@dataclass(frozen=True)
class Settings:
    """What the changes in force add up to: recipe steps, basis priority, ridge penalty."""

    steps: tuple[str, ...]  # each step as canonical JSON, so Settings is hashable
    keep: tuple[str, ...]
    ridge: float | None

    @property
    def recipe(self) -> Recipe:
        return Recipe([json.loads(s) for s in self.steps])


@dataclass(frozen=True)
class WorkingColumn:
    """A working column of the recipe as the controls need it."""

    name: str
    kind: str
    role: str  # predictor | dropped | response
    reference: str | None
    levels: list[str] | None  # categorical only, None when there are too many to list


@dataclass(frozen=True)
class Analysis:
    """One diagnosed state of a session: the design's summary, the diagnosis as a dict,
    the working columns, and how long the build and diagnosis took (seconds)."""

    settings: Settings
    columns: list[str]
    response: str | None
    groups: dict[str, list[str]]
    rows_total: int
    rows_used: int
    notes: list[str]
    diagnosis: dict[str, Any]
    working: list[WorkingColumn]
    seconds: float
    path: str = "rows"  # rows: diagnosed with the rows; factor: from the engine's factor

    @property
    def has_intercept(self) -> bool:
        return INTERCEPT in self.columns
