"""rankscope: inspect the design matrix of a linear model.

Imports run one way, the allowed directions listed once in DEVELOPERS.md (Architecture map).
The Python API's names load on first use (module __getattr__, PEP 562), so `import rankscope`
stays light: no numpy-heavy, pandas, scipy or web modules until a name is used.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

#: Public name -> the module that defines it.
_LAZY = {
    "inspect": "rankscope.api.entry",
    "serve": "rankscope.api.serve",
    "Inspection": "rankscope.api.result",
    "Recipe": "rankscope.design.recipe",
    "InputError": "rankscope.tables.errors",
}

__all__ = ["InputError", "Inspection", "Recipe", "__version__", "inspect", "serve"]

if TYPE_CHECKING:  # for type checkers and editors only; nothing loads at run time
    from rankscope.api.entry import inspect
    from rankscope.api.result import Inspection
    from rankscope.api.serve import serve
    from rankscope.design.recipe import Recipe
    from rankscope.tables.errors import InputError


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value  # later lookups skip this function
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
