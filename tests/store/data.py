"""Test helpers for the store: a small random table as CSV bytes, and the snapshot undo model.

Makes data in memory only; tests decide where files go.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Columns the concurrency and crash tests drop and restore.
TOGGLED = ("a", "b", "c")


def csv_bytes(seed: int = 0, n: int = 30) -> bytes:
    """A table with numeric, categorical, boolean and date columns and a few missing cells."""
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({
        "a": rng.normal(size=n).round(6),
        "b": rng.normal(size=n).round(6),
        "c": rng.uniform(1, 5, size=n).round(6),
        "g": rng.choice(["north", "south", "east"], size=n),
        "flag": rng.choice(["true", "false"], size=n),
        "day": pd.date_range("2024-01-01", periods=n, freq="D").strftime("%Y-%m-%d"),
        "y": rng.normal(size=n).round(6),
    })
    frame.loc[3, "c"] = np.nan
    frame.loc[5, "g"] = ""
    return frame.to_csv(index=False).encode()


class SnapshotUndo:
    """The snapshot ("memento") model of undo (Gamma et al., Design Patterns, 1994): a list
    of whole states and a pointer. An edit drops the states after the pointer and appends
    the new one; undo and redo move the pointer. Used as the reference for the store's
    operation log, which never keeps states."""

    def __init__(self) -> None:
        self.states: list[tuple] = [()]
        self.at = 0

    def edit(self, item: object) -> None:
        new = (*self.states[self.at], item)
        del self.states[self.at + 1:]
        self.states.append(new)
        self.at += 1

    def undo(self) -> bool:
        if self.at == 0:
            return False
        self.at -= 1
        return True

    def redo(self) -> bool:
        if self.at == len(self.states) - 1:
            return False
        self.at += 1
        return True

    @property
    def current(self) -> list:
        return list(self.states[self.at])
