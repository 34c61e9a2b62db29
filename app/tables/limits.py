"""Size limits on a table being read: the checks and their messages (rows, columns, unpacking).

No reading here; the readers call these as soon as they know a count.
"""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from rankscope.tables.errors import InputError
from rankscope.tables.raw import Raw, row_label, short

#: A compressed file that unpacks to more than this many times its size, and to more than
#: BOMB_FLOOR bytes, is refused: real tables compress far less (text about 3-20x, an .xlsx
#: about 5-10x), while a 'bomb' built to exhaust memory reaches the format's limit (~1000x).
BOMB_RATIO = 200
BOMB_FLOOR = 100_000_000
#: The longest text a cell may hold (characters).
MAX_CELL_CHARS = 1_000_000


def check_columns(n: int, limit: int | None, where: str, at_least: bool = False) -> None:
    """Refuse a table with more than `limit` columns (None: no limit)."""
    if limit is None or n <= limit:
        return
    count = f"at least {n:,}" if at_least else f"{n:,}"
    raise InputError(
        f"The table has {count} columns, more than the limit of {limit:,}",
        where,
        "Keep only the columns the model needs, or start the server with a higher limit "
        f"(rankscope serve --max-columns {_next(n)})",
    )


def check_rows(n: int, limit: int | None, where: str, at_least: bool = False) -> None:
    """Refuse a table with more than `limit` data rows (None: no limit)."""
    if limit is None or n <= limit:
        return
    count = f"more than {limit:,}" if at_least else f"{n:,}"
    raise InputError(
        f"The table has {count} data rows, over the limit of {limit:,}",
        where,
        "Start the server with a higher limit (rankscope serve --max-rows "
        f"{_next(n)}), or diagnose the file with `rankscope check FILE --stream`, which "
        "reads it block by block",
    )


def check_unpacked(unpacked: int, packed: int, where: str, what: str) -> None:
    """Refuse content that unpacks far beyond what a real table of this size would."""
    if unpacked > BOMB_FLOOR and unpacked > BOMB_RATIO * max(packed, 1):
        raise InputError(
            f"The {what} unpacks to more than {unpacked / 1e6:,.0f} MB from "
            f"{packed / 1e6:,.1f} MB, over {BOMB_RATIO} times its size: no real table is "
            "compressed that far, so it was not unpacked",
            where,
            "Check where the file came from; save the table again as plain CSV or Parquet",
        )


def _next(n: int) -> str:
    """A round limit above n, to suggest."""
    step = 10 ** max(len(str(n)) - 1, 1)
    return f"{(n // step + 1) * step}"


def check_cells(raw: Raw, limit: int = MAX_CELL_CHARS) -> None:
    """Refuse a text cell longer than `limit` characters, naming its row and column: such a
    cell is a pasted document or a broken file, and would swamp every page that shows it."""
    for name, col in zip(raw.names, raw.columns, strict=True):
        if pa.types.is_dictionary(col.type):
            # The longest text is in a dictionary; only then are the cells themselves looked at.
            chunks = col.chunks if isinstance(col, pa.ChunkedArray) else [col]
            values = pa.chunked_array([c.dictionary for c in chunks], col.type.value_type)
            if _longest_bytes(values) <= limit:
                continue
            col = col.cast(col.type.value_type)
        # A cell of more than `limit` characters has more than `limit` bytes; byte lengths
        # come from the offsets, so most columns are cleared without decoding any text.
        if _longest_bytes(col) <= limit:
            continue
        lengths = pc.utf8_length(col)
        longest = pc.max(lengths).as_py()
        if longest is None or longest <= limit:
            continue
        pos = pc.index(lengths, longest).as_py()
        raise InputError(
            f"A cell holds {longest:,} characters, more than the {limit:,} a cell may hold",
            f"{raw.where}, {row_label(raw.index, pos)}, column {short(str(name))}",
            "Check that the file is the table you meant (a quote left open or a pasted "
            "document makes such cells); remove that column or shorten the cell",
        )


def _longest_bytes(col) -> int:
    """Bytes in the longest text of a string array (0 when all missing); from the offsets."""
    if not (pa.types.is_string(col.type) or pa.types.is_large_string(col.type)):
        return 0
    most = pc.max(pc.binary_length(col)).as_py()
    return most or 0
