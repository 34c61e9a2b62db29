"""Sessions that last: the SQLite session store, its records, and the change model.

Persistence only; analysis and web pages live elsewhere and call in here.
"""

from rankscope.store.check import Check, replay_check
from rankscope.store.history import EDIT_KINDS, KINDS, MOVE_KINDS, Change, Folded, fold
from rankscope.store.records import (
    Applied,
    Conflict,
    Created,
    Entry,
    Pin,
    SessionInfo,
    SessionNotFound,
    SessionState,
)
from rankscope.store.store import Store, default_root

__all__ = [
    "Applied", "Change", "Check", "Conflict", "Created", "EDIT_KINDS", "Entry", "Folded",
    "KINDS", "MOVE_KINDS", "Pin", "SessionInfo", "SessionNotFound", "SessionState", "Store",
    "default_root", "fold", "replay_check",
]
