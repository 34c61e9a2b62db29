"""Design edits applied to the small triangular factor alone: factor once, edit in p×p.

A Workspace holds the factor of [1, c_1, …, c_q, y] over every column it has seen; linear
edits add combinations, hide or show columns, or pick a response, never touching rows.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from rankscope.core.factor import Factorization
from rankscope.core.reduce import upper_sign_fixed
from rankscope.core.structured import r_factor

#: Name of the constant in combinations passed to Workspace.add.
CONSTANT = "(intercept)"


def _retriangulate(M: np.ndarray) -> np.ndarray:
    """Triangular factor of a small (m, k) matrix: RᵀR = MᵀM, non-negative diagonal.

    An edit leaves most of M triangular already (a column added at the end, held columns
    shown with some left out or moved), so only what is not is reduced (structured.r_factor).
    """
    return upper_sign_fixed(r_factor(M))


@dataclass(frozen=True)
class Workspace:
    """The factor of M = [1, c_1..c_q, y] (raw units) and which columns the design shows.

    T: (q+2, q+2) upper triangular, TᵀT = MᵀM. names: the q column names held.
    visible: the design's columns, in design order (a subset of names, may include the
    constant's name CONSTANT, which is column 0 of M). response: name of y or None.
    Every method returns a new Workspace; costs are O(q³), independent of the rows.
    """

    T: np.ndarray
    names: tuple[str, ...]
    visible: tuple[str, ...]
    response: str | None
    n: int
    sum_weights: float

    @classmethod
    def from_factorization(cls, F: Factorization, response: str | None = None) -> Workspace:
        """Start from a factor of [1, X, y]; the intercept column of X, if any, is kept as
        an ordinary column (it equals the constant)."""
        return cls(
            T=F.T.copy(), names=tuple(F.columns), visible=tuple(F.columns),
            response=response if F.has_response else None, n=F.n, sum_weights=F.sum_weights,
        )

    # ---- statistics read off the factor -------------------------------------------------
    def _index(self, name: str) -> int:
        """Column of M holding `name` (0 is the constant)."""
        if name == CONSTANT and name not in self.names:
            return 0
        return 1 + self.names.index(name)

    def vector(self, combo: dict[str, float]) -> np.ndarray:
        """The (q+2,) coefficient vector over M's columns for a combination by name."""
        a = np.zeros(self.T.shape[1])
        for name, c in combo.items():
            a[self._index(name)] += c
        return a

    def mean(self, name: str) -> float:
        """Weighted mean: row 0 of T is uᵀM with u the unit constant (see Factorization)."""
        return float(self.T[0, self._index(name)] / self.T[0, 0])

    def length(self, name: str) -> float:
        """Euclidean length of the (weighted) column."""
        return float(np.linalg.norm(self.T[:, self._index(name)]))

    def sd(self, name: str) -> float:
        """Sample standard deviation (ddof = 1): the centered length is ||T[1:, j]||."""
        return float(np.linalg.norm(self.T[1:, self._index(name)]) / np.sqrt(self.n - 1))

    def column_block(self, names: list[str]) -> np.ndarray:
        """T's columns for the given names: a (q+2, k) matrix with the same Gram matrix
        as the k data columns (for statistics such as a principal component)."""
        return self.T[:, [self._index(c) for c in names]]

    # ---- edits --------------------------------------------------------------------------
    def add(self, name: str, combo: dict[str, float], at: int | None = None,
            replaces: tuple[str, ...] = ()) -> Workspace:
        """Add column `name` = Σ combo[c]·c (CONSTANT allowed) and show it at design
        position `at` (default: where the first replaced column was, else at the end);
        the replaced columns are hidden, not forgotten."""
        if name in self.names:
            raise ValueError(f"column {name!r} already exists")
        a = self.vector(combo)
        q = len(self.names)
        M = np.hstack([self.T[:, : q + 1], (self.T @ a)[:, None], self.T[:, q + 1 :]])
        T = _retriangulate(M)
        vis = list(self.visible)
        if at is None:
            at = vis.index(replaces[0]) if replaces and replaces[0] in vis else len(vis)
        vis.insert(at, name)
        vis = [c for c in vis if c not in replaces]
        return replace(self, T=T, names=self.names + (name,), visible=tuple(vis))

    def hide(self, name: str) -> Workspace:
        return replace(self, visible=tuple(c for c in self.visible if c != name))

    def show(self, name: str, at: int | None = None) -> Workspace:
        if name in self.visible:
            return self
        if name != CONSTANT and name not in self.names:
            raise ValueError(f"column {name!r} is not held")
        vis = list(self.visible)
        vis.insert(len(vis) if at is None else at, name)
        return replace(self, visible=tuple(vis))

    def with_response(self, name: str | None) -> Workspace:
        """Make a held column the response (the old y is kept as a hidden column)."""
        if name is None:
            return replace(self, response=None)
        ws = self
        if self.response is not None and self.response not in self.names:
            q = len(self.names)
            ws = replace(self, T=self.T.copy(), names=self.names + (self.response,))
            ws = replace(ws, T=_retriangulate(np.hstack([self.T, self.T[:, q + 1 :]])))
        j = ws._index(name)
        T = _retriangulate(np.hstack([ws.T[:, :-1], ws.T[:, j : j + 1]]))
        return replace(ws, T=T, response=name, visible=tuple(c for c in ws.visible if c != name))

    def factorization(self) -> Factorization:
        """The Factorization of [1, visible columns, y]: T·S re-triangularized, no rows."""
        cols = [0] + [self._index(c) for c in self.visible] + [self.T.shape[1] - 1]
        T = _retriangulate(self.T[:, cols])
        return Factorization(
            T=T, columns=list(self.visible), n=self.n, sum_weights=self.sum_weights,
            has_response=self.response is not None,
        )
