"""Plain records shared by the streaming passes: column keys, held-back forms, frozen statistics.

Data only (picklable, for workers); no rows, no factor arithmetic here.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: A working column's identity across blocks and processes: ("t", table column),
#: ("s", step position, index among the step's outputs), or ("l", column key, level) for
#: one level's 0/1 indicator.
Key = tuple

#: Statistic steps: their numbers come from every kept row, never from one block.
STAT_SINGLE = ("center", "standardize", "unit_length")
STAT_OPS = (*STAT_SINGLE, "first_component")

REAL, DEFERRED, TAINTED = "real", "deferred", "tainted"


@dataclass(frozen=True)
class Form:
    """A column computed on the factor after the pass: `op` applied to the `inputs` columns.

    op: a statistic step (STAT_OPS) or a linear step on held-back columns (multiply, sum,
    mean, difference). by: the multiply factor.
    """

    key: Key
    op: str
    inputs: tuple[Key, ...]
    step: int
    name: str
    by: float = 1.0


@dataclass(frozen=True)
class Frozen:
    """A statistic step's numbers learned on the factor of an earlier pass.

    One input: (x - shift[0]) / scale[0]. A component: ((X - shift) / scale) @ weights.
    """

    shift: tuple[float, ...]
    scale: tuple[float, ...]
    weights: tuple[float, ...] | None = None

    def apply(self, X: np.ndarray) -> np.ndarray:
        """Values for the rows of X (n, k); a row with a missing member is missing."""
        if self.weights is None:
            return (X[:, 0] - self.shift[0]) / self.scale[0]
        complete = ~np.isnan(X).any(axis=1)
        out = np.full(len(X), np.nan)
        Z = (X[complete] - np.array(self.shift)) / np.array(self.scale)
        out[complete] = Z @ np.array(self.weights)
        return out


@dataclass(frozen=True)
class Entry:
    """A working column with a role in the design (predictor or response), as the block saw it."""

    key: Key
    name: str
    kind: str
    role: str
    on_missing: str
    reference: str | None
    sources: frozenset[str]
    state: str  # REAL, DEFERRED or TAINTED
    uses: frozenset[int] = frozenset()  # statistic steps upstream of it


@dataclass(frozen=True)
class StatStep:
    """What the messages about a statistic step need: its kind, input and output names."""

    op: str
    inputs: tuple[str, ...]
    output: str
    real: bool  # inputs computed on rows (their values can be tracked exactly)


@dataclass
class Tracker:
    """Rows where every input of a statistic step is present, with each input's range there."""

    count: int = 0
    lo: np.ndarray | None = None
    hi: np.ndarray | None = None

    def see(self, X: np.ndarray) -> None:
        X = X[~np.isnan(X).any(axis=1)]
        if not len(X):
            return
        self.count += len(X)
        lo, hi = X.min(axis=0), X.max(axis=0)
        self.lo = lo if self.lo is None else np.minimum(self.lo, lo)
        self.hi = hi if self.hi is None else np.maximum(self.hi, hi)

    def merged(self, other: Tracker) -> Tracker:
        out = Tracker(self.count, self.lo, self.hi)
        if other.count:
            out.count += other.count
            out.lo = other.lo if out.lo is None else np.minimum(out.lo, other.lo)
            out.hi = other.hi if out.hi is None else np.maximum(out.hi, other.hi)
        return out


@dataclass(frozen=True)
class Shape:
    """The structure a block's replay gives (the same for every block of a pass)."""

    entries: tuple[Entry, ...]
    intercept: bool
    forms: dict[Key, Form]
    wants: frozenset[int]
    notes: tuple[str, ...]
    order: tuple[str, ...]
    stats: dict[int, StatStep] = field(default_factory=dict)
    indicators: tuple[tuple[int, str, str], ...] = ()  # (step, column, reference) to check
