"""Errors raised for bad input: each says what was wrong, where, and what to do.

No I/O here; readers and the recipe raise these, shells print or render them.
"""

from __future__ import annotations


class InputError(Exception):
    """Bad input a user can fix.

    what: what is wrong, in plain words.
    where: file, row (1-based, counting the header as row 1) and/or column, as text.
    todo: what the user can do about it.
    """

    def __init__(self, what: str, where: str = "", todo: str = "") -> None:
        self.what = what
        self.where = where
        self.todo = todo
        super().__init__(self.message)

    @property
    def message(self) -> str:
        parts = [self.what.rstrip(".") + "."]
        if self.where:
            parts.insert(0, f"{self.where}:")
        if self.todo:
            parts.append(self.todo.rstrip(".") + ".")
        return " ".join(parts)
