"""A table whose column names and cells are markup, template, formula and quoting attacks,
as a CSV file; and the same table under plain names, to compare generated code against.

Test helper only: no checks here.
"""

from __future__ import annotations

import csv
import io

import numpy as np

#: Column names: HTML (OWASP XSS filter evasion cheat sheet), a Jinja expression, a
#: spreadsheet formula (OWASP CSV injection), Python quoting and line breaks, a Plotly
#: hover placeholder with HTML entities, and a terminal escape (ECMA-48 CSI).
NAMES = [
    "<script>alert(1)</script>",
    '"><img src=x onerror=alert(1)>',
    "{{7*7}}",
    "=cmd|' /C calc'!A0",
    "q'uo\"te\\back\nline \"\"\"",
    "%{x}<b>bold</b>&amp;",
]
RESPONSE = "\x1b[31mred</textarea>"
#: Category cells: they become indicator column names (grp[<level>]).
LEVELS = ["<script>alert(2)</script>", '"><svg onload=alert(3)>', "two\nlines # x = 1"]
GROUP = "grp"
#: The same table under harmless names, in the same order.
PLAIN_NAMES = [f"n{i}" for i in range(len(NAMES))]
PLAIN_RESPONSE = "resp"
PLAIN_LEVELS = ["a", "b", "c"]
#: Every piece of markup above that would do something if a page or figure obeyed it.
ACTIVE = ["<script>alert", "<img src=x", "<svg onload", "<b>bold</b>", "</textarea>"]


def table_csv(plain: bool = False, n: int = 40, seed: int = 3) -> bytes:
    """The CSV: column 2 is exactly twice column 1 (an exact dependency whose equation
    shows both names), the rest random, and the response."""
    rng = np.random.default_rng(seed)
    a = rng.normal(size=n)
    cols = [a, 2 * a, *(rng.normal(size=n) for _ in range(len(NAMES) - 2))]
    y = a + cols[2] + rng.normal(size=n)
    names, response, levels = ((PLAIN_NAMES, PLAIN_RESPONSE, PLAIN_LEVELS) if plain
                               else (NAMES, RESPONSE, LEVELS))
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow([*names, response, GROUP])
    for i in range(n):
        w.writerow([*(f"{c[i]:.6f}" for c in cols), f"{y[i]:.6f}", levels[i % len(levels)]])
    return out.getvalue().encode()
