"""What some rows contribute: the triangular factor of [1, held columns] plus counts, mergeable.

Blocks fold into one Partial in file order, or partitions merge in a tree; the order of merging
changes nothing but rounding. No recipe logic here.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from rankscope.core.reduce import merge, shifts_of
from rankscope.scale.stream_forms import Key, Shape, Tracker


def _aligned(R: np.ndarray, bases: list[Key], union: list[Key]) -> np.ndarray:
    """R's columns placed at their keys' positions in [1, union]; the others are zero, which
    is exact: a column first seen later was zero (absent) in these rows."""
    if bases == union:
        return R
    out = np.zeros((R.shape[0], 1 + len(union)))
    out[:, 0] = R[:, 0]
    at = {k: i for i, k in enumerate(union)}
    out[:, [1 + at[k] for k in bases]] = R[:, 1:]
    return out


def _shifts(shift: np.ndarray, bases: list[Key], union: list[Key]) -> np.ndarray:
    """shift placed at the keys' positions in union; 0 for absent columns (their values are 0)."""
    at = {k: i for i, k in enumerate(bases)}
    return np.array([shift[at[k]] if k in at else 0.0 for k in union])


def _rebased(R: np.ndarray, old: np.ndarray, new: np.ndarray) -> np.ndarray:
    """Factor of [1, cols − new] from that of [1, cols − old]: row 0 moves by (old − new)·R[0, 0]
    (reduce.unshift's rule), the centred rows stay as they are."""
    out = R.copy()
    out[0, 1:] += (old - new) * R[0, 0]
    return out


def _add(a: dict, b: dict) -> dict:
    out = dict(a)
    for k, v in b.items():
        out[k] = out.get(k, 0) + v
    return out


@dataclass
class Partial:
    """The contribution of some rows.

    R: triangular factor with RᵀR = M_cᵀM_c, M_c = [1, bases − shift] over the kept rows
        (None: no row kept); reduce.unshift with [0, shift] gives the factor of [1, bases].
    shift: (len(bases),) the value subtracted from each column before reducing: the first
        block's mean, so offsets (timestamps, Kelvin) cost no digits of the centred part.
    rows / kept: rows read and rows kept after listwise deletion.
    dropped_by: table column -> rows deleted because of it (first missing in table order).
    missing_in: drop_column candidates -> rows where one of their sources is missing.
    levels: categorical design columns -> level -> kept rows with it.
    ind_levels: indicators steps -> levels present on any row (the recipe checks all rows).
    seen_all / seen_kept: statistic steps -> their inputs' present rows and ranges.
    """

    shape: Shape
    bases: list[Key]
    R: np.ndarray | None
    rows: int
    kept: int
    dropped_by: dict[str, int] = field(default_factory=dict)
    missing_in: dict[Key, int] = field(default_factory=dict)
    levels: dict[Key, dict[str, int]] = field(default_factory=dict)
    ind_levels: dict[int, set[str]] = field(default_factory=dict)
    seen_all: dict[int, Tracker] = field(default_factory=dict)
    seen_kept: dict[int, Tracker] = field(default_factory=dict)
    blocks: int = 1
    shift: np.ndarray = field(default_factory=lambda: np.zeros(0))

    @classmethod
    def from_block(cls, shape: Shape, columns: dict[Key, np.ndarray], *, rows: int, kept: int,
                   **counts) -> Partial:
        bases = list(columns)
        R = None
        shift = np.zeros(len(bases))
        if kept:
            vals = np.column_stack([np.zeros(kept), *columns.values()])
            shift = shifts_of(vals)[1:]
            vals[:, 1:] -= shift
            vals[:, 0] = 1.0
            R = merge(None, vals)
        return cls(shape, bases, R, rows, kept, **counts, shift=shift)

    def absorb(self, other: Partial) -> Partial:
        """This Partial with other's rows added (self is updated and returned)."""
        if other.shape.entries != self.shape.entries or other.shape.forms != self.shape.forms:
            raise AssertionError("blocks of one pass gave different recipe structures")
        union = self.bases + [k for k in other.bases if k not in set(self.bases)]
        mine_s = _shifts(self.shift, self.bases, union)
        theirs_s = _shifts(other.shift, other.bases, union)
        # The merged factor keeps this Partial's shifts, and takes the other's for columns
        # new to it; each side is moved to those shifts first (a small change of origin).
        target = np.where([k in set(self.bases) for k in union], mine_s, theirs_s)
        if other.R is not None:
            theirs = _rebased(_aligned(other.R, other.bases, union), theirs_s, target)
            mine = None if self.R is None else _rebased(
                _aligned(self.R, self.bases, union), mine_s, target)
            self.R = merge(mine, theirs)
        elif self.R is not None:
            self.R = _rebased(_aligned(self.R, self.bases, union), mine_s, target)
        self.bases = union
        self.shift = target
        self.rows += other.rows
        self.kept += other.kept
        self.blocks += other.blocks
        self.dropped_by = _add(self.dropped_by, other.dropped_by)
        self.missing_in = _add(self.missing_in, other.missing_in)
        for k, lv in other.levels.items():
            self.levels[k] = _add(self.levels.get(k, {}), lv)
        for pos, lv in other.ind_levels.items():
            self.ind_levels[pos] = self.ind_levels.get(pos, set()) | lv
        for mine_, theirs_ in ((self.seen_all, other.seen_all), (self.seen_kept, other.seen_kept)):
            for pos, tr in theirs_.items():
                mine_[pos] = mine_[pos].merged(tr) if pos in mine_ else tr
        return self
