"""Factor once, edit instantly: recipe steps applied to the small triangular factor.

Imports core, design and tables; reads rows only when it factors or falls back to a rebuild.
"""

from rankscope.scale.edits import EditEngine, Outcome
from rankscope.scale.ledger import Layout, Rebuild

__all__ = ["EditEngine", "Layout", "Outcome", "Rebuild"]
