"""Read a user's file into a typed Table: read_table(path) for files, read_bytes for uploads.

The format comes from the content where the content says it (gzip, xlsx, Parquet, images and
other non-tables), else from the extension; see docs/reading.md for the rules.
"""

from __future__ import annotations

import gzip
import io
import mmap
import os
import zlib
from pathlib import Path

from rankscope.tables import sniff
from rankscope.tables.build import build
from rankscope.tables.errors import InputError
from rankscope.tables.kinds import with_kinds
from rankscope.tables.limits import check_cells, check_columns, check_rows, check_unpacked
from rankscope.tables.raw import Raw
from rankscope.tables.table import Table

MAX_BYTES = 2_000_000_000
#: Files from this size on are read into huge pages (see _load).
BIG_FILE = 8_000_000
#: Text files from this size on are offered to plain.read_plain first: pandas shares a file of
#: at least 5 MiB out among threads (its _PARALLEL_READ_MIN_BYTES); below that pyarrow's
#: threaded reader is as fast, and the file's bytes are needed anyway.
PLAIN_FROM = 8_000_000
UNSUPPORTED_EXTS = {
    ".json": "JSON", ".xml": "XML", ".html": "HTML", ".htm": "HTML", ".ods": "OpenDocument",
    ".dta": "Stata", ".sav": "SPSS", ".rds": "R", ".rdata": "R", ".sas7bdat": "SAS",
    ".feather": "Feather", ".arrow": "Arrow", ".docx": "Word", ".doc": "Word", ".pdf": "PDF",
}  # fmt: skip

__all__ = ["read_table", "read_bytes", "missing_summary", "with_kinds", "MAX_BYTES"]


def read_table(
    path: str | os.PathLike,
    *,
    sheet: str | int | None = None,
    max_bytes: int = MAX_BYTES,
    name: str | None = None,
    kinds: dict[str, str] | None = None,
    max_rows: int | None = None,
    max_columns: int | None = None,
) -> Table:
    """Read a CSV/TSV (optionally .gz), .xlsx or Parquet file into a Table.

    sheet: Excel sheet name, or index counting from 0 (default: the first sheet).
    max_bytes: refuse files (and decompressed content) larger than this.
    max_rows, max_columns: refuse tables with more data rows or columns (None: no limit);
        columns are counted as soon as the header is read.
    name: the file name to use in messages and Table.source (default: path as given).
    kinds: declared kinds for some columns ({"zip": "categorical"}); these skip inference.
    Raises InputError for anything a user can fix.
    """
    where = name or str(path)
    p = Path(path)
    try:
        size = p.stat().st_size
        if p.is_dir():
            raise InputError("This is a folder, not a file", where, "Choose a file")
        _check_size(size, max_bytes, where)
        with p.open("rb") as f:
            head = f.read(sniff.SAMPLE_BYTES + 3)
        if sniff.content_kind(head[:16]) == "parquet":
            # Arrow reads a Parquet file from the disk itself: no copy of its bytes in memory.
            return _read(head[:16], p.name, where, sheet, max_bytes, kinds,
                         (max_rows, max_columns), parquet_file=p)
        if size >= PLAIN_FROM:
            table = _read_plain(p, head, where, sheet, kinds, (max_rows, max_columns))
            if table is not None:
                return table
        data = _load(p, size)
    except FileNotFoundError:
        raise InputError(
            "The file does not exist", where, "Check the file name and folder"
        ) from None
    except PermissionError:
        raise InputError(
            "The file cannot be opened (permission denied)", where, "Check its permissions"
        ) from None
    return _read(data, p.name, where, sheet, max_bytes, kinds, (max_rows, max_columns))


def read_bytes(
    data: bytes,
    filename: str,
    *,
    sheet: str | int | None = None,
    max_bytes: int = MAX_BYTES,
    name: str | None = None,
    kinds: dict[str, str] | None = None,
    max_rows: int | None = None,
    max_columns: int | None = None,
) -> Table:
    """Like read_table, for a file's content already in memory (web uploads)."""
    where = name or filename
    _check_size(len(data), max_bytes, where)
    return _read(bytes(data), filename, where, sheet, max_bytes, kinds,
                 (max_rows, max_columns))


def missing_summary(table: Table) -> dict[str, int]:
    """Number of missing values in each column, in column order."""
    return {str(c): int(n) for c, n in table.frame.isna().sum().items()}


def _load(p: Path, size: int) -> bytes | mmap.mmap:
    """The file's bytes. A big file goes into anonymous memory asked for in huge pages: a
    fresh bytes object of 100 MB costs more in page faults than in copying (0.08 s against
    0.03 s on the 2-core machine). Not a map of the file itself, which would crash the
    process if another program shortened the file while it is read."""
    flags = getattr(mmap, "MAP_ANONYMOUS", None)
    if size < max(BIG_FILE, 1) or flags is None or not hasattr(mmap, "MADV_HUGEPAGE"):
        return p.read_bytes()
    buf = mmap.mmap(-1, size, flags=flags | mmap.MAP_PRIVATE)
    buf.madvise(mmap.MADV_HUGEPAGE)
    view, done = memoryview(buf), 0
    with p.open("rb", buffering=0) as f:
        while done < size and (n := f.readinto(view[done:])):
            done += n
        grown = f.read(1)
    view.release()
    if done != size or grown:  # changed since its size was taken: read it as it is now
        buf.close()
        return p.read_bytes()
    return buf


def _check_size(size: int, max_bytes: int, where: str) -> None:
    if size > max_bytes:
        raise InputError(
            f"The file is {_mb(size)}, over the limit of {_mb(max_bytes)}",
            where,
            "Use a smaller file, e.g. only the rows and columns you need",
        )


def _mb(n: int) -> str:
    return f"{n / 1e6:,.1f} MB" if n >= 100_000 else f"{n:,} bytes"


def _read(data: bytes | mmap.mmap, filename: str, where: str, sheet, max_bytes: int, kinds,
          shape: tuple[int | None, int | None], parquet_file: Path | None = None) -> Table:
    """The Table from a file's bytes (or, for a Parquet file on disk, its first bytes and
    its path)."""
    ext, gz = sniff.suffixes(filename)
    notes: list[str] = []
    kind = sniff.content_kind(data[:16])
    if kind == "gzip":
        data = _gunzip(data, where, max_bytes)
        kind = sniff.content_kind(data[:16])
        if kind == "gzip":
            raise InputError("The file is gzip-compressed twice", where,
                             "Decompress it once (gunzip) and open the result")
        if not gz:
            notes.append("The file is gzip-compressed; it was decompressed.")
    elif gz:
        notes.append("The file name ends in .gz but the content is not compressed.")
    fmt = _format(data, kind, ext, where)
    # Each format's reader loads with its first file (openpyxl alone costs a small check
    # a quarter of its time).
    if fmt == "excel":
        from rankscope.tables.excel import read_excel

        raw = read_excel(data, where, sheet, max_bytes, shape)
    elif fmt == "parquet":
        from rankscope.tables.parquet import read_parquet

        raw = read_parquet(data if parquet_file is None else parquet_file, where, shape)
    else:
        from rankscope.tables.delimited import read_text

        raw = read_text(data, where, ext, declared=(kinds or {}).keys(), max_columns=shape[1])
    return _finish(raw, fmt, ext, sheet, kinds, shape, notes)


def _read_plain(p: Path, head: bytes, where: str, sheet, kinds,
                shape: tuple[int | None, int | None]) -> Table | None:
    """The Table of a big plain CSV file through plain.read_plain, without the file's bytes in
    memory; None when that reader declines (the caller reads the file the usual way)."""
    ext, gz = sniff.suffixes(p.name)
    if gz or sniff.content_kind(head[:16]) is not None:
        return None
    fmt = _format(head, None, ext, where)  # the first bytes are all it looks at for text
    if fmt != "text":
        return None
    from rankscope.tables.plain import read_plain

    raw = read_plain(p, head, where, ext, declared=(kinds or {}).keys(), max_columns=shape[1])
    return None if raw is None else _finish(raw, fmt, ext, sheet, kinds, shape)


def _finish(raw: Raw, fmt: str, ext: str, sheet, kinds, shape: tuple[int | None, int | None],
            notes: list[str] | None = None) -> Table:
    """Limits, notes on the format (after those given), and the Table with its kinds."""
    max_rows, max_columns = shape
    check_columns(len(raw.names), max_columns, raw.where)
    check_rows(raw.n_rows, max_rows, raw.where)
    check_cells(raw)
    notes = list(notes or [])
    if fmt != "excel" and sheet is not None:
        notes.append("A sheet was chosen, but only Excel workbooks have sheets; it was ignored.")
    expected = {"excel": sniff.EXCEL_EXTS, "parquet": sniff.PARQUET_EXTS}.get(fmt)
    if expected is not None and ext not in expected:
        label = {"excel": "an Excel workbook", "parquet": "a Parquet file"}[fmt]
        notes.append(f"The file is {label} although its name ends in '{ext}'.")
    raw.notes[:0] = notes
    return build(raw, kinds)


def _format(data: bytes, kind: str | None, ext: str, where: str) -> str:
    if kind == "zip":
        return sniff.zip_kind(data, where)
    if kind == "parquet":
        return "parquet"
    foreign = sniff.foreign_kind(data[:16])
    if foreign:
        todo = f"Save the table as {sniff.SUPPORTED}"
        if "old-style" in foreign:
            todo = "Open it in Excel and save it as .xlsx (without a password) or CSV"
        raise InputError(f"This is {foreign}, not a table rankscope can read", where, todo)
    other = sniff.document_kind(data[: sniff.SAMPLE_BYTES])
    if other and ext not in UNSUPPORTED_EXTS:
        raise InputError(f"This looks like {other}, not a table of rows and columns", where,
                         f"Save the table as {sniff.SUPPORTED}")
    binary = sniff.looks_binary(data[: sniff.SAMPLE_BYTES])
    if ext in sniff.EXCEL_EXTS or ext in sniff.PARQUET_EXTS:
        label = "an Excel workbook" if ext in sniff.EXCEL_EXTS else "a Parquet file"
        looks = "binary data of another kind" if binary else "text (perhaps CSV)"
        raise InputError(
            f"The name ends in '{ext}', but this is not {label}: it holds {looks}",
            where,
            "Check that this is the right file; if it is CSV text, rename it to .csv",
        )
    if ext == ".xls" and binary:
        raise InputError(
            "Old Excel .xls workbooks are not supported", where, "Save it as .xlsx or CSV"
        )
    if ext in UNSUPPORTED_EXTS:
        raise InputError(
            f"{UNSUPPORTED_EXTS[ext]} files ({ext}) are not supported",
            where,
            f"Save the table as {sniff.SUPPORTED}",
        )
    return "text"


def _gunzip(data: bytes, where: str, max_bytes: int) -> bytes:
    # In blocks, so a 'gzip bomb' is refused after the first hundred MB, not at the limit.
    parts: list[bytes] = []
    size = 0
    try:
        with gzip.GzipFile(fileobj=io.BytesIO(data)) as f:
            while size <= max_bytes:
                block = f.read(min(1 << 24, max_bytes + 1 - size))
                if not block:
                    break
                parts.append(block)
                size += len(block)
                check_unpacked(size, len(data), where, "gzip-compressed file")
    except (OSError, EOFError, zlib.error):
        raise InputError(
            "The file is gzip-compressed but damaged or incomplete",
            where,
            "Compress or download the file again",
        ) from None
    out = b"".join(parts)
    if len(out) > max_bytes:
        raise InputError(
            f"The file decompresses to more than the limit of {_mb(max_bytes)}",
            where,
            "Use a smaller file, e.g. only the rows and columns you need",
        )
    return out
