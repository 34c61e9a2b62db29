"""Excel .xlsx bytes -> Raw: one sheet, header = first non-empty row, rows as Excel numbers them.

Does not decide kinds (infer.py does).

Cells keep the types Excel stored: a column of numbers is numeric, of dates is date, of
TRUE/FALSE is boolean. Columns mixing types (or holding text) go through the same text rules as
CSV files, so "n/a" in a column of numbers is missing and other text there is an error.
"""

from __future__ import annotations

import datetime as dt
import io
import zipfile

import openpyxl
import pandas as pd
import pyarrow as pa

from rankscope.tables.errors import InputError
from rankscope.tables.limits import check_columns, check_rows, check_unpacked
from rankscope.tables.raw import Raw


def read_excel(data: bytes, where: str, sheet: str | int | None, max_bytes: int,
               shape: tuple[int | None, int | None] = (None, None)) -> Raw:
    """shape: the most data rows and columns to accept (None: no limit); a sheet beyond
    them is refused while it is read, before all of it is in memory."""
    _check_unpacked_size(data, where, max_bytes)
    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as e:  # openpyxl raises many types for damaged files
        raise InputError(
            f"The Excel workbook could not be opened ({type(e).__name__})",
            where,
            "Open it in Excel and save it again as .xlsx, or save the sheet as CSV",
        ) from None
    try:
        ws, title, notes = _pick_sheet(book, sheet, where)
        where = f"{where}, sheet '{title}'"
        ws.reset_dimensions()
        rows = _rows(ws, where, *shape)
    finally:
        book.close()
    if not rows:
        raise InputError("The sheet is empty", where, "Choose the sheet that holds the table")
    header_row, header = rows[0]
    if header_row > 1:
        notes.append(f"The header was taken from row {header_row}, the first row with content.")
    width = max(k + 1 for _, r in rows for k, v in enumerate(r) if _present(v))
    names = [_name(header[k] if k < len(header) else None) for k in range(width)]
    body = rows[1:]
    columns = []
    for k in range(width):
        cells = [r[k] if k < len(r) else None for _, r in body]
        columns.append(pa.chunked_array([_column(cells)]))
    index = pd.Index([i for i, _ in body], dtype="int64", name="row")
    raw = Raw(names=names, columns=columns, index=index, where=where, notes=notes)
    raw.cell = lambda pos, j: _text(body[pos][1][j]) if j < len(body[pos][1]) else None
    return raw


def _check_unpacked_size(data: bytes, where: str, max_bytes: int) -> None:
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as z:
            unpacked = sum(i.file_size for i in z.infolist())
    except zipfile.BadZipFile:
        return  # openpyxl will say it is damaged
    check_unpacked(unpacked, len(data), where, "workbook")
    if unpacked > max_bytes * 4:
        raise InputError(
            f"The workbook unpacks to {unpacked / 1e6:,.0f} MB, over the limit",
            where,
            "Save the sheet you need as CSV or Parquet, or use a smaller part of it",
        )


def _rows(ws, where: str, max_rows: int | None, max_columns: int | None) -> list:
    """The filled rows of a sheet with their numbers, refused as soon as there are too many
    rows (header included) or the header is too wide."""
    rows: list = []
    for i, r in enumerate(ws.iter_rows(values_only=True), start=1):
        if not _filled(r):
            continue
        if not rows:
            width = max(k + 1 for k, v in enumerate(r) if _present(v))
            check_columns(width, max_columns, where)
        rows.append((i, r))
        if max_rows is not None and len(rows) > max_rows + 1:
            check_rows(len(rows) - 1, max_rows, where, at_least=True)
    return rows


def _pick_sheet(book, sheet, where):
    titles = book.sheetnames
    listed = ", ".join(repr(t) for t in titles)
    notes: list[str] = []
    if isinstance(sheet, str) and sheet.strip().isdigit() and sheet not in titles:
        sheet = int(sheet)  # "1" from a command line or a form means the index
    if sheet is None:
        title = titles[0]
        if len(titles) > 1:
            notes.append(f"Read the first sheet, '{title}', of {len(titles)}: {listed}.")
    elif isinstance(sheet, int) and not isinstance(sheet, bool):
        if not 0 <= sheet < len(titles):
            raise InputError(
                f"There is no sheet number {sheet} (sheets are numbered from 0; "
                f"this workbook has {len(titles)})",
                where,
                f"Choose one of the sheets: {listed}",
            )
        title = titles[sheet]
    elif str(sheet) in titles:
        title = str(sheet)
    else:
        raise InputError(
            f"There is no sheet named {str(sheet)!r}", where, f"Choose one of the sheets: {listed}"
        )
    ws = book[title]
    if not hasattr(ws, "iter_rows"):
        raise InputError(
            f"Sheet '{title}' is a chart, not a table", where, f"Choose one of: {listed}"
        )
    return ws, title, notes


def _present(v) -> bool:
    return v is not None and not (isinstance(v, str) and not v.strip())


def _filled(row) -> bool:
    return any(_present(v) for v in row)


def _name(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    if isinstance(v, dt.datetime | dt.date):
        return v.isoformat()
    return str(v).strip()


def _column(cells: list) -> pa.Array:
    """Cells of one column as an Arrow array: typed when all present cells share a type."""
    present = [v for v in cells if _present(v)]
    if not present:
        return pa.nulls(len(cells))
    if all(isinstance(v, bool) for v in present):
        return pa.array([v if _present(v) else None for v in cells], pa.bool_())
    if all(isinstance(v, int | float) and not isinstance(v, bool) for v in present):
        return pa.array([float(v) if _present(v) else None for v in cells], pa.float64())
    if all(isinstance(v, dt.datetime | dt.date) for v in present):
        return pa.array(
            [pd.Timestamp(v) if _present(v) else None for v in cells], pa.timestamp("us")
        )
    return pa.array([_text(v) for v in cells], pa.string())


def _text(v) -> str | None:
    if not _present(v):
        return None
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float) and v.is_integer() and abs(v) < 1e15:
        return str(int(v))
    if isinstance(v, dt.datetime):
        midnight = (v.hour, v.minute, v.second, v.microsecond) == (0, 0, 0, 0)
        return v.date().isoformat() if midnight else v.isoformat(sep=" ")
    if isinstance(v, dt.date | dt.time):
        return v.isoformat()
    return str(v)
