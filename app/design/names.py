"""Small helpers for wording messages: close matches, file rows, numbers, level order.

Pure functions on strings and numbers; no data frames, no I/O.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable


def quoted(name: object) -> str:
    """A name in double quotes, so spaces and brackets stay visible in messages."""
    return f'"{name}"'


def close_matches(name: str, candidates: Iterable[str], n: int = 3) -> list[str]:
    """Candidates that look like `name`: same letters in another case first, then similar."""
    pool = list(dict.fromkeys(candidates))
    same_case = [c for c in pool if c != name and c.casefold() == name.casefold()]
    similar = difflib.get_close_matches(name, pool, n=n, cutoff=0.6)
    return list(dict.fromkeys(same_case + similar))[:n]


def suggestion(name: str, candidates: Iterable[str]) -> str:
    """A 'did you mean' sentence, or the list of what exists when nothing is close."""
    pool = list(candidates)
    near = close_matches(name, pool)
    if near:
        return "Close matches: " + ", ".join(quoted(c) for c in near)
    if not pool:
        return "There are none to choose from"
    shown = ", ".join(quoted(c) for c in pool[:12])
    more = f" and {len(pool) - 12} more" if len(pool) > 12 else ""
    return f"Available: {shown}{more}"


def file_row(position: int) -> str:
    """The file row of a 0-based data position; the header counts as row 1."""
    return f"row {position + 2}"


def number_text(x: float) -> str:
    """A number as a person would write it: 1000 not 1000.0, 0.5 stays 0.5."""
    x = float(x)
    if x.is_integer() and abs(x) < 1e15:
        return str(int(x))
    return repr(x)


def level_order(levels: Iterable[str]) -> list[str]:
    """Levels sorted as numbers when every label reads as a finite number, else as text.

    Numeric order keeps integer codes such as 2 < 10 in the order people expect.
    """
    labels = sorted(set(levels))
    values: list[float] = []
    for label in labels:
        try:
            v = float(label)
        except ValueError:
            return labels
        if not math.isfinite(v):
            return labels
        values.append(v)
    return [label for _, label in sorted(zip(values, labels, strict=True))]
