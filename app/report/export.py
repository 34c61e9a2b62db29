"""Exports of a session: HTML report, recipe JSON, Python script, design CSV; recipe import.

Renders results and checks input only; computes no statistics and touches no files.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterator

from rankscope.design.design import Design
from rankscope.design.recipe import Recipe, build_design
from rankscope.design.script import recipe_to_python
from rankscope.report.html import render_html
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

__all__ = ["render_html", "recipe_json", "recipe_script", "design_csv", "design_csv_chunks",
           "neutralize", "import_recipe", "download_name", "MAX_RECIPE_BYTES"]

#: Characters that make a spreadsheet read a cell as a formula (OWASP, CSV Injection):
#: = + - @, and tab and carriage return, which some programs skip before looking.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
#: A recipe is a few kilobytes; a file far larger is not one.
MAX_RECIPE_BYTES = 1_000_000
#: Rows per piece of the CSV, so a large design can be streamed.
CSV_ROWS = 5_000


def recipe_json(recipe: Recipe) -> str:
    return recipe.to_json()


def recipe_script(recipe: Recipe, source_path: str, table: Table) -> str:
    """The numpy/pandas script that rebuilds X and y from the file at source_path."""
    return recipe_to_python(recipe, source_path, table)


#: A field separator of a common locale (comma, semicolon, tab), with the spaces or quotes a
#: spreadsheet may skip, right before a formula character: where a spreadsheet of another
#: locale splits the cell, the piece after it would start a formula.
AFTER_SEPARATOR = re.compile(r"([,;\t][ \"]*)(?=[=+\-@\t\r])")


def neutralize(text: str) -> str:
    """A text cell a spreadsheet will show as text (OWASP's advice): one that starts like a
    formula gets a leading single quote, and so does every piece that would start one after
    a comma, semicolon or tab, should a spreadsheet of another locale split the cell there.
    Only text goes through here: numbers are written as numbers, so a negative value stays a
    usable number."""
    text = AFTER_SEPARATOR.sub(r"\1'", text)
    return "'" + text if text.startswith(FORMULA_START) else text


def _number(x: float) -> str:
    # repr is the shortest text that reads back as the same double. The design has no
    # missing or infinite values, so every cell is a plain decimal number.
    return repr(float(x))


def design_csv_chunks(design: Design) -> Iterator[str]:
    """The design as CSV in pieces: a header of column names (neutralized, as they are the
    only text), then X with the response y as the last column when there is one."""
    names = list(design.columns) + ([design.response or "y"] if design.y is not None else [])
    buf = io.StringIO()
    # Every header cell quoted: a separator inside a name stays inside its cell whichever
    # separator the spreadsheet splits on (comma, semicolon or tab).
    csv.writer(buf, quoting=csv.QUOTE_ALL).writerow([neutralize(n) for n in names])
    yield buf.getvalue()
    X, y = design.X, design.y
    for start in range(0, X.shape[0], CSV_ROWS):
        block = X[start:start + CSV_ROWS].tolist()
        ys = y[start:start + CSV_ROWS].tolist() if y is not None else None
        lines = []
        for i, row in enumerate(block):
            cells = [_number(v) for v in row]
            if ys is not None:
                cells.append(_number(ys[i]))
            lines.append(",".join(cells) + "\r\n")
        yield "".join(lines)


def design_csv(design: Design) -> str:
    """The whole design as one CSV text (RFC 4180 line ends)."""
    return "".join(design_csv_chunks(design))


def import_recipe(data: str | bytes, table: Table | None = None, source: str = "recipe",
                  max_steps: int | None = None) -> Recipe:
    """Read a recipe file (as written by recipe_json, or a bare list of steps). With a table,
    also replay it there, so a step naming a column the table lacks is refused now; a
    recipe of more than max_steps steps is refused before it is replayed.
    Raises InputError naming the file, the step and what to do."""
    if isinstance(data, bytes):
        if len(data) > MAX_RECIPE_BYTES:
            raise InputError(f"the file is {len(data):,} bytes; a recipe is far smaller",
                             source, "Choose the recipe's .json file")
        try:
            data = data.decode("utf-8-sig")
        except UnicodeDecodeError as e:
            raise InputError(f"the file is not UTF-8 text (byte {e.start + 1})", source,
                             "Choose the recipe's .json file") from e
    if len(data) > MAX_RECIPE_BYTES:
        raise InputError("the text is far larger than a recipe", source,
                         "Choose the recipe's .json file")
    try:
        recipe = Recipe.from_json(data)
        if max_steps is not None and len(recipe) > max_steps:
            raise InputError(f"the recipe has {len(recipe):,} steps; one import takes at most "
                             f"{max_steps:,}", "recipe",
                             f"Split it into files of at most {max_steps:,} steps and import "
                             "them one after another")
        if table is not None:
            build_design(table, recipe)
    except InputError as e:
        # The recipe's own messages say "recipe step 2 ..."; name the file instead.
        rest = e.where[len("recipe"):].lstrip(", ") if e.where.startswith("recipe") else e.where
        where = f"{source}, {rest}" if rest else source
        raise InputError(e.what, where, e.todo) from e
    return recipe


def download_name(title: str, suffix: str) -> str:
    """A file name for a download: the title's letters, digits, dots, dashes and
    underscores (others become '_'), never empty, then the suffix (".html")."""
    stem = re.sub(r"[^\w.-]+", "_", title, flags=re.ASCII).strip("._")[:80] or "rankscope"
    return stem + suffix
