"""Number formatting for relations and JSON: short decimals, simple fractions, infinities.

Pure functions on Python floats; no arrays of results, no I/O.
"""

from __future__ import annotations

import math
from fractions import Fraction

#: A coefficient is shown in a short form when that form is within this relative
#: distance. Relation coefficients carry an error of about cond·eps (≈1e-12 for the
#: problems we show), so 1e-9 accepts rounding noise and rejects real differences.
SHOW_REL = 1e-9


def close(a: float, b: float, rel: float = SHOW_REL) -> bool:
    return abs(a - b) <= rel * max(abs(a), abs(b), 1e-300)


#: Largest denominator written as a fraction (thirds, sevenths, twelfths): beyond it a
#: fraction is harder to read than its decimal.
FRACTION_DENOMINATOR = 12


def short_number(c: float, rel: float = SHOW_REL) -> str:
    """The shortest readable form of c within relative distance `rel`: a decimal of at most
    6 significant digits, else a fraction with a small denominator (5/9, 2/7), else the
    shortest longer decimal (up to the 17 digits that reproduce any float64 exactly).
    """
    if c == 0 or not math.isfinite(c):
        return "0" if c == 0 else str(c)
    rel = max(rel, 0.0)
    for digits in range(1, 7):
        s = f"{c:.{digits}g}"
        if close(float(s), c, rel):
            return _plain(s)
    f = Fraction(c).limit_denominator(FRACTION_DENOMINATOR)
    if f.denominator > 1 and abs(f.numerator) < 10**6 and close(float(f), c, rel):
        return f"{f.numerator}/{f.denominator}"
    for digits in range(7, 18):
        s = f"{c:.{digits}g}"
        if close(float(s), c, rel):
            return _plain(s)
    return _plain(repr(c))


def _plain(s: str) -> str:
    """Write exponent notation out in full when it is short (1e+03 -> 1000)."""
    if "e" not in s:
        return s
    v = float(s)
    if 1e-4 <= abs(v) < 1e9:
        text = f"{v:.17f}".rstrip("0").rstrip(".")
        return text if float(text) == v else s
    return s


def finite_or_none(x: float) -> float | None:
    """JSON has no infinity: an infinite or undefined number is written as null."""
    x = float(x)
    return x if math.isfinite(x) else None
