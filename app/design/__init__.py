"""The design recipe: declarative steps that turn a Table into (X, y).

Must not do linear algebra beyond building columns; the core diagnoses.
"""

from rankscope.design.recipe import Recipe, build_design
from rankscope.design.script import recipe_to_python
from rankscope.design.steps import SPECS, describe_step, validate_step

__all__ = ["SPECS", "Recipe", "build_design", "describe_step", "recipe_to_python", "validate_step"]
