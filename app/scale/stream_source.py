"""A CSV/TSV (optionally gzipped) or Parquet file as a sequence of typed row blocks.

Holds one block (plus the reader's read-ahead) in memory; knows nothing of recipes or factors.
"""

from __future__ import annotations

import codecs
import gzip
import re
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq
import pyarrow.types as pat

from rankscope.tables import sniff
from rankscope.tables.build import build
from rankscope.tables.delimited import convert_options
from rankscope.tables.errors import InputError
from rankscope.tables.parquet import unreadable
from rankscope.tables.raw import Raw
from rankscope.tables.read import read_bytes
from rankscope.tables.table import Table
from rankscope.tables.text import MISSING_MARKERS

#: Bytes of a text file read to decide delimiter, decimal mark and column kinds.
SAMPLE_BYTES = 1 << 20
#: Smallest piece of text parsed at once (smaller pieces cost more than they save).
MIN_CHUNK = 1 << 20
#: Rows of a Parquet file read for the same purpose.
SAMPLE_ROWS = 10_000
#: Notes of the sample that describe its values, not the file: left out (they may be false).
SAMPLE_FACTS = re.compile(r"is constant \(|is empty \(every|holds only the whole numbers")


class Retype(Exception):
    """A column read as numbers by the fast path holds text further down: read it as text."""

    def __init__(self, column: str) -> None:
        super().__init__(column)
        self.column = column


@dataclass
class Block:
    """Rows [start, start + table.n_rows) of the file, typed with the sample's kinds."""

    table: Table
    start: int
    bytes_done: int


@dataclass
class Source:
    """What the sample decided about a file, and how to read it block by block.

    kinds: column name -> kind, decided on the sample (or declared by the caller).
    bytes_total: the file's size on disk; progress is measured against it.
    """

    path: Path
    where: str
    fmt: str  # "csv" or "parquet"
    kinds: dict[str, str]
    bytes_total: int
    notes: list[str] = field(default_factory=list)
    delimiter: str = ","
    decimal: str = "."
    encoding: str = "utf8"
    gzipped: bool = False
    raw_names: dict[str, str] = field(default_factory=dict)  # stripped name -> header text
    as_text: set[str] = field(default_factory=set)  # columns parsed as text, not natively
    header: list[str] = field(default_factory=list)  # the header's fields as written
    row_bytes: float = 64.0  # bytes per row in the sample
    newline: bytes = b"\n"

    @property
    def columns(self) -> list[str]:
        return list(self.kinds)

    def blocks(self, rows: int) -> Iterator[Block]:
        """The file's rows in blocks of at most `rows` rows, in file order."""
        if self.fmt == "parquet":
            yield from self._parquet_blocks(rows)
        else:
            yield from self._csv_blocks(rows)

    # ---- Parquet -----------------------------------------------------------------------------
    def _parquet_blocks(self, rows: int) -> Iterator[Block]:
        pf = _parquet_file(self.path, self.where)
        total = max(pf.metadata.num_rows, 1)
        start = 0
        for batch in pf.iter_batches(batch_size=rows):
            table = parquet_table(batch, start, self.where, self.kinds)
            start += batch.num_rows
            # Parquet decodes whole column chunks; bytes are estimated from the rows read.
            yield Block(table, start - batch.num_rows, int(self.bytes_total * start / total))

    # ---- CSV ---------------------------------------------------------------------------------
    def _csv_blocks(self, rows: int) -> Iterator[Block]:
        # pyarrow's streaming reader reads ahead without bound on a file (measured: RSS near
        # the file's size), so the file is cut into chunks of whole records here and each
        # chunk is streamed on its own: memory is bounded by one chunk.
        size = int(min(max(rows * self.row_bytes, MIN_CHUNK), 64 << 20))
        start = 0
        with open(self.path, "rb") as raw:
            for first, chunk in self._chunks(raw, size):
                read = pacsv.ReadOptions(column_names=None if first else self.header,
                                         block_size=1 << 22)
                try:  # the reader parses its first block when it opens
                    reader = pacsv.open_csv(pa.py_buffer(chunk), read_options=read,
                                            parse_options=self._parse_options(),
                                            convert_options=self._convert_options())
                    parsed = reader.read_all()
                except pa.ArrowInvalid as e:
                    raise self._parse_error(e, start) from None
                del chunk
                # Blocks of `rows` rows, not the reader's smaller batches: per-block work
                # (one recipe replay, one QR merge) is then a small share of the time.
                for lo in range(0, parsed.num_rows, rows):
                    part = parsed.slice(lo, rows)
                    table = self._csv_table(part, start)
                    start += part.num_rows
                    yield Block(table, start - part.num_rows, raw.tell())

    def _chunks(self, raw: BinaryIO, size: int) -> Iterator[tuple[bool, bytes]]:
        """UTF-8 text in pieces of about `size` bytes, each ending at a record's end: the
        last line break with an even number of quotes before it (a break inside a quoted
        field is part of the value)."""
        stream = gzip.GzipFile(fileobj=raw) if self.gzipped else raw
        if self.encoding == "utf8":
            read = stream.read
        else:
            text = codecs.getreader(self.encoding)(stream, errors="replace")
            read = lambda n: text.read(n).encode("utf-8")  # noqa: E731
        carry, first = b"", True
        while True:
            data = read(size)
            buf = carry + data
            if not data:
                if buf.strip():
                    yield first, buf
                return
            cut = _record_end(buf, self.newline)
            if cut < 0:
                carry = buf  # no whole record yet: read more
                continue
            carry = buf[cut + 1:]
            yield first, buf[: cut + 1]
            first = False

    def _parse_options(self) -> pacsv.ParseOptions:
        return pacsv.ParseOptions(
            delimiter=self.delimiter, quote_char='"', double_quote=True, newlines_in_values=True
        )

    def _convert_options(self) -> pacsv.ConvertOptions:
        types = {}
        for name, kind in self.kinds.items():
            native = name not in self.as_text
            if kind == "numeric" and native:
                t = pa.float64()
            elif kind == "boolean" and native:
                t = pa.bool_()
            else:
                t = pa.string()
            types[self.raw_names.get(name, name)] = t
        # The whole-file reader's options, without its dictionaries: the stream's blocks are
        # built one at a time and would each get dictionaries of their own.
        return convert_options(self.decimal, types, dictionaries=False)

    def _csv_table(self, part: pa.Table, start: int) -> Table:
        index = pd.RangeIndex(start + 2, start + 2 + part.num_rows, name="row")
        raw = Raw(names=list(part.schema.names), columns=list(part.columns), index=index,
                  where=self.where, decimal=self.decimal)
        return conform(build(raw, self.kinds), self.kinds, self.where, start)

    def _parse_error(self, e: pa.ArrowInvalid, start: int) -> Exception:
        text = str(e)
        m = re.search(r"In CSV column #(\d+)", text)
        if m and "conversion error" in text:
            names = list(self.raw_names)
            j = int(m.group(1))
            if j < len(names) and names[j] not in self.as_text:
                return Retype(names[j])
        first = text.splitlines()[0][:200] if text else "unreadable text"
        return InputError(
            f"The file could not be read past row {start + 1} ({first})",
            self.where,
            "Check that every row has as many fields as the header, and that quotes are closed",
        )


def _record_end(buf: bytes, newline: bytes) -> int:
    """Position of the last line break outside quotes, or -1."""
    quotes = buf.count(b'"')
    pos = len(buf)
    while True:
        pos = buf.rfind(newline, 0, pos)
        if pos < 0:
            return -1
        if quotes == 0 or (quotes - buf.count(b'"', pos)) % 2 == 0:
            return pos


def conform(table: Table, kinds: dict[str, str], where: str, start: int) -> Table:
    """The block with the sample's columns and kinds; an all-missing column takes the kind
    the sample gave it (a block of empty cells reads as numeric)."""
    if table.columns != list(kinds):
        raise InputError(
            f"The columns change at row {start + 2}: {table.columns[:8]} instead of "
            f"{list(kinds)[:8]}",
            where,
            "Check the file: every part must have the same columns",
        )
    frame = table.frame
    for name, kind in kinds.items():
        got = table.kinds[name]
        if got == kind:
            continue
        if not frame[name].isna().all():
            raise InputError(
                f"Column '{name}' holds {got} values from row {start + 2} on, but the first "
                f"rows made it {kind}",
                where,
                f"Declare the kind of '{name}' (kinds={{'{name}': '{got}'}}) or read the file "
                "without streaming",
            )
        frame = frame.assign(**{name: empty(kind, len(frame))})
    return Table(frame=frame, kinds=dict(kinds), source=table.source)


def empty(kind: str, n: int):
    """An all-missing column of the given kind."""
    if kind == "categorical":
        return pd.Categorical([None] * n, categories=pd.Index([], dtype="str"))
    if kind == "boolean":
        return pd.array([None] * n, dtype="boolean")
    if kind == "date":
        return np.full(n, np.datetime64("NaT", "ns"))
    return np.full(n, np.nan)


def parquet_table(batch: pa.RecordBatch, start: int, where: str,
                  kinds: dict[str, str] | None) -> Table:
    """A Parquet record batch as a Table (types from the file, as the in-memory reader)."""
    keep = [i for i, n in enumerate(batch.schema.names) if not n.startswith("__index_level_")]
    raw = Raw(
        names=[batch.schema.names[i] for i in keep],
        columns=[pa.chunked_array([batch.column(i)]) for i in keep],
        index=pd.RangeIndex(start + 1, start + 1 + batch.num_rows, name="record"),
        where=where, typed=True,
    )
    table = build(raw)
    return table if kinds is None else conform(table, kinds, where, start)


def _parquet_file(path: Path, where: str) -> pq.ParquetFile:
    try:
        return pq.ParquetFile(path)
    except (pa.ArrowException, OSError, ValueError) as e:
        raise unreadable(e, where) from None


def open_source(path: str | Path, *, name: str | None = None,
                kinds: dict[str, str] | None = None) -> Source:
    """Look at the start of the file: its format, and each column's kind (from a sample).

    kinds: declared kinds for some columns; they skip inference, as in read_table.
    """
    p = Path(path)
    where = name or str(path)
    if p.is_dir():
        raise InputError("This is a folder, not a file", where, "Choose a file")
    try:
        size = p.stat().st_size
        with open(p, "rb") as f:
            head = f.read(16)
    except FileNotFoundError:
        raise InputError("The file does not exist", where,
                         "Check the file name and folder") from None
    except PermissionError:
        raise InputError("The file cannot be opened (permission denied)", where,
                         "Check its permissions") from None
    kind = sniff.content_kind(head)
    if kind == "parquet":
        return _parquet_source(p, where, size, kinds)
    if kind == "zip":
        raise InputError(
            "Streaming reads CSV/TSV text (optionally .gz) and Parquet, not workbooks",
            where,
            "Save the sheet as CSV, or check the file without streaming",
        )
    return _csv_source(p, where, size, kind == "gzip", kinds)


def _parquet_source(p: Path, where: str, size: int, kinds) -> Source:
    pf = _parquet_file(p, where)
    if pf.metadata.num_rows == 0:
        raise InputError("The table has a header row but no data rows", where,
                         "Add the data below the header row")
    batch = next(pf.iter_batches(batch_size=SAMPLE_ROWS))
    table = parquet_table(batch, 0, where, None)
    if kinds:
        from rankscope.tables.kinds import with_kinds

        table = with_kinds(table, kinds)
    notes = [n for n in table.notes if not SAMPLE_FACTS.search(n)]
    return Source(path=p, where=where, fmt="parquet", kinds=dict(table.kinds),
                  bytes_total=size, notes=notes)


def _csv_source(p: Path, where: str, size: int, gzipped: bool, kinds) -> Source:
    with (gzip.open(p, "rb") if gzipped else open(p, "rb")) as f:
        try:
            sample = f.read(SAMPLE_BYTES + 1)
        except (OSError, EOFError):
            raise InputError("The file is gzip-compressed but damaged or incomplete", where,
                             "Compress or download the file again") from None
    whole = len(sample) <= SAMPLE_BYTES
    if not whole:
        cut = max(sample.rfind(b"\n", 0, SAMPLE_BYTES), sample.rfind(b"\r", 0, SAMPLE_BYTES))
        if cut <= 0:
            raise InputError("The first line of the file is longer than 1 MB", where,
                             "Check that this is a table with one row per line")
        sample = sample[: cut + 1]
    ext, _ = sniff.suffixes(p.name)
    fname = p.name[:-3] if p.name.lower().endswith(".gz") else p.name
    table = read_bytes(sample, fname, name=where, kinds=kinds)
    text, encoding = sniff.decode_sample(sample[: sniff.SAMPLE_BYTES].lstrip(b"\xef\xbb\xbf"))
    if sample.startswith((b"\xff\xfe", b"\xfe\xff")):
        encoding = "utf-16"
        text = sample.decode("utf-16", errors="replace")
    delimiter = sniff.sniff_delimiter(text, ext) or ","
    decimal = sniff.sniff_decimal(text, delimiter)
    src = Source(path=p, where=where, fmt="csv", kinds=dict(table.kinds), bytes_total=size,
                 delimiter=delimiter, decimal=decimal,
                 encoding="utf8" if encoding == "utf-8" else encoding, gzipped=gzipped)
    src.notes = [n for n in table.notes if not SAMPLE_FACTS.search(n)]
    src.raw_names, src.as_text, src.header = _probe(sample, src)
    src.row_bytes = max(len(sample) / max(table.n_rows, 1), 8.0)
    src.newline = b"\n" if b"\n" in sample or b"\r" not in sample else b"\r"
    if not whole:
        src.notes.append(
            f"Column kinds were decided on the first {table.n_rows:,} rows "
            "(the file was read block by block)."
        )
    return src


def _probe(sample: bytes, src: Source) -> tuple[dict[str, str], set[str], list[str]]:
    """Header names as written, and the columns that pyarrow's own parsing does not read as
    numbers or booleans in the sample (the readers' text rules convert those instead)."""
    try:
        probe = pacsv.read_csv(
            pa.py_buffer(sample),
            read_options=pacsv.ReadOptions(encoding=src.encoding),
            parse_options=src._parse_options(),
            convert_options=pacsv.ConvertOptions(
                null_values=list(MISSING_MARKERS),
                true_values=["true", "True", "TRUE"],
                false_values=["false", "False", "FALSE"],
                strings_can_be_null=True,
                quoted_strings_can_be_null=True,
                decimal_point=src.decimal,
            ),
        )
    except (pa.ArrowInvalid, UnicodeDecodeError):
        raise InputError(
            "The file could not be read block by block (its rows do not parse as one table)",
            src.where,
            "Check the file without streaming, which gives the exact row",
        ) from None
    raw = {n.strip(): n for n in probe.column_names if n.strip()}
    text = set()
    for name, kind in src.kinds.items():
        t = probe.schema.field(raw[name]).type if name in raw else pa.string()
        numeric = pat.is_integer(t) or pat.is_floating(t) or pat.is_null(t)
        if (kind == "numeric" and not numeric) or (kind == "boolean" and not pat.is_boolean(t)):
            text.add(name)
    return raw, text, list(probe.column_names)
