"""The held columns: a Workspace factor plus, per column, what guards an edit's exactness.

Works on the small factor only; never sees a row, never names a design column.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from rankscope.core.workspace import CONSTANT, Workspace
from rankscope.scale.ledger import Rebuild

#: A new column shorter than GUARD times the size of what it was computed from has lost
#: more than ~6 of its 16 digits to cancellation (rounding is relative to the inputs,
#: Higham 2nd ed. §3.1); the rebuild from the rows then computes it exactly instead.
GUARD = 1e-6
#: Values above LIMIT could overflow in the recipe's own arithmetic (means sum n values);
#: the rebuild then says so in the recipe's words.
LIMIT = 1e290


@dataclass(frozen=True)
class Store:
    """The Workspace with two numbers per held column.

    bound: an upper bound on |value| over every row of the table, in both of the recipe's
        passes (all rows, then rows kept), so overflow the rows would meet is foreseen.
    scale: the length of the inputs the column was computed from, Σ|aᵢ|·scaleᵢ; rounding
        in the factor is relative to it (for columns read from rows, their own length).
    """

    ws: Workspace
    bound: Mapping[str, float]
    scale: Mapping[str, float]

    @property
    def n(self) -> int:
        return self.ws.n

    def centered_length(self, hid: str) -> float:
        """||x − mean·1||: with the constant first in M, rows 1.. of T hold each column
        projected off it (Golub & Van Loan 4th ed. §5.2, QR of a partitioned matrix)."""
        return float(np.linalg.norm(self.ws.T[1:, self.ws._index(hid)]))

    def guard(self, length: float, hid: str, what: str) -> None:
        if not length > GUARD * self.scale[hid]:
            raise Rebuild(f"{what} is at rounding level on the factor")

    def derive(self, hid: str, combo: dict[str, float], bound: float) -> Store:
        """Hold a new column Σ combo[c]·c (CONSTANT allowed), checked for overflow and
        cancellation before it is accepted."""
        if not np.isfinite(bound) or bound > LIMIT:
            raise Rebuild("values could overflow")
        const_len = float(self.ws.T[0, 0])
        scale = sum(abs(c) * (const_len if k == CONSTANT else self.scale[k])
                    for k, c in combo.items())
        ws = self.ws.add(hid, combo)
        length = ws.length(hid)
        if not (np.isfinite(length) and np.isfinite(scale) and np.all(np.isfinite(ws.T))):
            raise Rebuild("values could overflow")
        if not length > GUARD * scale:
            raise Rebuild("the new column cancels to rounding level on the factor")
        return Store(ws, {**self.bound, hid: bound}, {**self.scale, hid: scale})

    def shown(self, visible: list[str], response: str | None) -> Store:
        """The Workspace showing `visible` with `response` as y (no response: y = 0, as the
        core factors a design without one)."""
        ws = self.ws
        if response is None:
            if ws.response is not None:
                T = ws.T.copy()
                T[:, -1] = 0.0
                ws = replace(ws, T=T, response=None)
        elif ws.response != response:
            ws = ws.with_response(response)
        return replace(self, ws=replace(ws, visible=tuple(visible)))
