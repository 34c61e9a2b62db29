"""Big plain CSV files (no quotes, one line per row) read by pandas' threaded C reader.

Must give delimited.read_text's result or none (None: that reader then reads the file, and
words every message); raises nothing for a bad file and decides no kinds (infer.py does).

Why: pandas 3.1 parses a file of 5 MiB or more in threads, which on the 2-core machine took
about 0.7 of pyarrow's time (docs/speed.md), and most tables are such files. What keeps the
result equal to read_text's:
- the same missing markers; numbers and true/false words parsed by both into the same values
  (both parse numbers with correctly rounded fast_float; integers become float64 the same way);
- text columns checked against pyarrow itself: their distinct values parsed by pyarrow with
  read_text's options must stay text, else pyarrow would have read a date, a time or 'NAN';
  a sample parsed first declines files with such columns before pandas starts;
- no quotes anywhere (pandas reads them as text here, so one would show in a text column or a
  name), the header's names unchanged (pandas renames blank and repeated ones), and every row
  as many fields as the header: pandas fills a short row with missing cells, so when the last
  column has a missing cell the delimiters are counted (a blank line is a short row too).
Then row i sits on line i + 2, as read_text numbers it for such files. One difference is left:
in a column of whole numbers one of which is written with a '+' (pyarrow then reads the column
as floats, pandas still as integers), a '-0' is -0.0 there and 0.0 here (equal as numbers).

Trade-off: pandas maps the file into memory to share it among its threads (read.py's _load
copies a file instead), so a program that shortens the file while it is being read can stop
this process with SIGBUS, as it can pandas.read_csv itself.
"""

from __future__ import annotations

import csv
import os
import re
import time
import warnings
from collections.abc import Collection
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.types as pat

from rankscope.tables import sniff
from rankscope.tables.delimited import (
    cell_text,
    convert_options,
    dialect_note,
    records,
    utf16_without_bom,
)
from rankscope.tables.raw import Raw
from rankscope.tables.text import MISSING_MARKERS

#: The first pandas this way is used with: from 3.1 on pandas parses every float with one
#: correctly rounded converter (its read_csv docstring: 'All float precision modes now use the
#: same converter'; before, the default could differ from pyarrow in the last bit) and splits a
#: big file among threads (before, one thread: slower than pyarrow's reader on 2 cores).
PANDAS_FROM = (3, 1)
#: Column types a sample may show for the file to be read here (what pandas' reader also gives).
PLAIN_TYPES = (pat.is_integer, pat.is_floating, pat.is_boolean, pat.is_null, pat.is_string,
               pat.is_large_string)
#: Bytes counted at a time when the delimiters are counted.
COUNT_BLOCK = 1 << 22
_pool: ThreadPoolExecutor | None = None


def _forget_pool() -> None:
    global _pool
    _pool = None  # a forked child has none of the parent's threads: it starts its own pool


os.register_at_fork(after_in_child=_forget_pool)


def read_plain(path: Path, head: bytes, where: str, ext: str, declared: Collection[str] = (),
               max_columns: int | None = None,
               timings: dict[str, float] | None = None) -> Raw | None:
    """The Raw table of the CSV file at path (head: its first bytes, at least
    sniff.SAMPLE_BYTES + 3 of them), or None when the file is not plain or the result could
    differ from delimited.read_text's. timings: if given, gets the seconds each stage took
    (for the read benchmark)."""
    if _version(pd.__version__) < PANDAS_FROM:
        return None
    lap = _Laps(timings)
    off = 3 if head.startswith(b"\xef\xbb\xbf") else 0
    sample = head[off : off + sniff.SAMPLE_BYTES]
    if b'"' in sample or sniff.looks_binary(sample) or utf16_without_bom(sample):
        return None
    text, encoding = sniff.decode_sample(sample)
    delimiter = sniff.sniff_delimiter(text, ext) if encoding == "utf-8" else None
    if delimiter is None or sniff.sniff_decimal(text, delimiter) != ".":
        return None
    complete = text[: max(text.rfind("\n"), text.rfind("\r"))]  # whole lines only
    rows = list(records(complete, delimiter))
    if not rows:
        return None
    header = rows[0]
    if (
        (max_columns is not None and len(header) > max_columns)
        or any(len(r) != len(header) for r in rows[1:])
        or len(set(header)) < len(header)
        or not all(header)
        or not _plain_types(complete, delimiter)
    ):
        return None
    lap("sniff")
    frame = _pandas(path, delimiter, [n for n in declared if n in header])
    lap("parse")
    if frame is None or list(frame.columns) != header or len(frame) == 0:
        return None
    index = frame.index
    if not (isinstance(index, pd.RangeIndex) and index.start == 0 and index.step == 1):
        return None  # a first row longer than the header becomes pandas' index
    columns = [_arrow(frame.iloc[:, j]) for j in range(len(header))]
    if any(c is None for c in columns):
        return None
    texts = [j for j, c in enumerate(columns) if pat.is_large_string(c.type)]
    encoded_texts = _encode([columns[j] for j in texts])
    lap("text codes")
    for j, encoded in zip(texts, encoded_texts, strict=True):
        uniques = encoded.dictionary
        if pc.any(pc.match_substring(uniques, '"')).as_py():
            return None
        if header[j] not in declared and not _stays_text(uniques, delimiter):
            return None
        columns[j] = encoded
    if _has_missing(columns[-1]) and not _fields_ok(path, off, delimiter, len(frame), len(header)):
        return None
    lap("checks")
    note = dialect_note(delimiter, ".")
    return Raw(
        names=header,
        columns=columns,
        index=pd.RangeIndex(2, len(frame) + 2, name="line"),
        where=where,
        decimal=".",
        cell=lambda pos, j: cell_text(path.read_bytes(), off, delimiter, pos, j),
        notes=[note] if note else [],
    )


def _version(text: str) -> tuple[int, ...]:
    """(major, minor) of a version string such as '3.1.1' or '3.2.0.dev0+12'."""
    return tuple(int(n) for n in re.findall(r"\d+", text)[:2])


class _Laps:
    """Seconds since the last lap, by name, into a dict (nothing without one)."""

    def __init__(self, into: dict[str, float] | None) -> None:
        self.into, self.last = into, time.perf_counter()

    def __call__(self, name: str) -> None:
        if self.into is not None:
            now = time.perf_counter()
            self.into[name] = now - self.last
            self.last = now


def _plain_types(text: str, delimiter: str) -> bool:
    """Whether pyarrow reads the sample's columns as numbers, true/false, text or nothing only
    (not dates or times, which pandas would leave as text)."""
    try:
        table = pacsv.read_csv(
            pa.BufferReader(text.encode("utf-8")),
            parse_options=pacsv.ParseOptions(delimiter=delimiter, quote_char=False),
            convert_options=convert_options(".", dictionaries=False),
        )
    except (pa.ArrowInvalid, UnicodeDecodeError):
        return False
    return all(any(is_type(f.type) for is_type in PLAIN_TYPES) for f in table.schema)


def _pandas(path: Path, delimiter: str, declared: list[str]) -> pd.DataFrame | None:
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # mixed types in a column: declined below
            return pd.read_csv(
                path,
                sep=delimiter,
                # None, not an empty dict, when no column is declared: pandas takes any dict
                # as a reason to build the frame column by column (a tenth of the parse).
                dtype=dict.fromkeys(declared, "str") or None,
                na_values=list(MISSING_MARKERS),
                keep_default_na=False,
                skip_blank_lines=False,
                quoting=csv.QUOTE_NONE,
                encoding="utf-8",
            )
    except (ValueError, UnicodeError, OverflowError):  # ParserError is a ValueError
        return None


def _arrow(column: pd.Series) -> pa.Array | pa.ChunkedArray | None:
    """A pandas column as the Arrow column pyarrow would have read (float columns without a
    copy, NaN standing for a missing cell); None for a type pyarrow would not give."""
    values = column.array
    if isinstance(column.dtype, pd.StringDtype) and column.dtype.storage == "pyarrow":
        arr = pa.array(values)
        return arr if isinstance(arr, pa.ChunkedArray) else pa.chunked_array([arr])
    if column.dtype in (np.float64, np.int64, np.bool_):
        return pa.array(column.to_numpy())
    if column.dtype == object and pd.api.types.infer_dtype(values, skipna=True) == "boolean":
        missing = column.isna().to_numpy()
        return pa.array(column.where(~missing, False).to_numpy(bool), mask=missing)
    return None


def _encode(columns: list[pa.ChunkedArray]) -> list[pa.DictionaryArray]:
    """Each text column as one dictionary array (a missing cell: a null entry of the
    dictionary), its values sorted, a column per task on all cores (pyarrow lets go of the
    GIL). Every cell is looked up in the values of the column's first chunk, in one call for
    the whole column (a lookup per chunk cost a quarter more on the read benchmark, loaded);
    a column with a value its first chunk lacks is encoded chunk by chunk instead."""
    pool = _threads()
    whole = [pool.submit(_known, col) for col in columns]
    encoded = [task.result() for task in whole]
    rest = [j for j, enc in enumerate(encoded) if enc is None]
    for j, enc in zip(rest, _encode_chunks([columns[j] for j in rest]), strict=True):
        encoded[j] = enc
    return encoded


def _threads() -> ThreadPoolExecutor:
    global _pool
    if _pool is None:
        _pool = ThreadPoolExecutor(max(1, min(os.cpu_count() or 1, 4)))
    return _pool


def _known(column: pa.ChunkedArray) -> pa.DictionaryArray | None:
    """The column encoded by the distinct values of its first chunk, or None when a later
    chunk holds another. The values are sorted before the lookup, so its positions are the
    codes themselves (no translation per cell); a missing cell points past them."""
    known = pc.unique(column.chunk(0)).drop_null()
    known = known.take(pc.array_sort_indices(known))
    indices = pc.index_in(column, value_set=known)
    if indices.null_count != column.null_count:
        return None
    if indices.null_count:
        indices = pc.fill_null(indices, len(known))
        known = pa.concat_arrays([known, pa.nulls(1, known.type)])
    return pa.DictionaryArray.from_arrays(indices.combine_chunks(), known, safe=False)


def _encode_chunks(columns: list[pa.ChunkedArray]) -> list[pa.DictionaryArray]:
    """Each text column as one dictionary array, as _encode gives it. A column's first chunk
    is hashed; its other chunks are looked up in those values (a chunk with a new value is
    hashed itself), a chunk per task on all cores. The chunks' values are then merged and
    their codes translated, without copying the chunks together."""
    pool = _threads()
    firsts = [pool.submit(_codes, col.chunk(0)) for col in columns]
    tasks = [[first] + [pool.submit(_codes, c, first.result()[0]) for c in col.chunks[1:]]
             for col, first in zip(columns, firsts, strict=True)]
    return [_merge([t.result() for t in col]) for col in tasks]


def _codes(chunk: pa.Array, known: pa.Array | None = None) -> tuple[pa.Array, np.ndarray, bool]:
    """A chunk's distinct values (known ones, if every cell is one of them), its codes into
    them (-1: missing), and whether any is -1."""
    if known is not None:
        indices = pc.index_in(chunk, value_set=known)
        if indices.null_count == chunk.null_count:  # missing cells only: every value known
            codes = pc.fill_null(indices, -1) if indices.null_count else indices
            return known, codes.to_numpy(), indices.null_count > 0
    enc = pc.dictionary_encode(chunk)
    indices = enc.indices
    codes = pc.fill_null(indices, -1) if indices.null_count else indices
    return enc.dictionary, codes.to_numpy(), indices.null_count > 0


def _merge(parts: list[tuple[pa.Array, np.ndarray, bool]]) -> pa.DictionaryArray:
    merged = pc.dictionary_encode(pa.concat_arrays([d for d, _, _ in parts]))
    # In sorted order, which categories keep: their codes then need no second lookup.
    order = pc.array_sort_indices(merged.dictionary).to_numpy()
    rank = np.empty(len(order), np.int32)
    rank[order] = np.arange(len(order), dtype=np.int32)
    uniques, where = merged.dictionary.take(order), rank[merged.indices.to_numpy()]
    missing = len(uniques)  # the code of a missing cell, if there is one
    codes = np.empty(sum(len(c) for _, c, _ in parts), np.int32)
    start = stop = 0
    for d, c, _ in parts:
        to = np.append(where[start : start + len(d)], missing).astype(np.int32)
        np.take(to, c, out=codes[stop : stop + len(c)])  # -1 takes the last entry: missing
        start, stop = start + len(d), stop + len(c)
    if any(gap for _, _, gap in parts):
        uniques = pa.concat_arrays([uniques, pa.nulls(1, uniques.type)])
    return pa.DictionaryArray.from_arrays(pa.array(codes), uniques, safe=False)


def _stays_text(uniques: pa.Array, delimiter: str) -> bool:
    """Whether pyarrow, given these distinct values (no quotes, delimiters or line ends in
    them) as one column, reads it as text."""
    values = uniques.drop_null().to_pylist()
    data = "\n".join(["v", *values]).encode("utf-8")
    try:
        table = pacsv.read_csv(
            pa.BufferReader(data),
            parse_options=pacsv.ParseOptions(delimiter=delimiter, quote_char=False,
                                             ignore_empty_lines=False),
            convert_options=convert_options(".", dictionaries=False),
        )
    except pa.ArrowInvalid:
        return False
    t = table.schema.field(0).type
    return (pat.is_string(t) or pat.is_large_string(t)) and table.num_rows == len(values)


def _has_missing(column: pa.Array | pa.ChunkedArray) -> bool:
    if pat.is_floating(column.type):
        return bool(np.isnan(column.to_numpy(zero_copy_only=False)).any())
    if pat.is_dictionary(column.type):  # pandas fills a short row's text fields with ''
        values = column.dictionary
        return values.null_count > 0 or bool(pc.any(pc.equal(values, "")).as_py())
    return column.null_count > 0


def _fields_ok(path: Path, off: int, delimiter: str, n_rows: int, n_columns: int) -> bool:
    """Whether the file holds exactly as many delimiters as n_rows full rows and the header:
    pandas refuses a row with too many fields, so then none has too few."""
    byte = ord(delimiter)
    count = 0
    buf = np.empty(COUNT_BLOCK, np.uint8)
    with path.open("rb", buffering=0) as f:
        f.seek(off)
        while n := f.readinto(buf):
            count += int(np.count_nonzero(buf[:n] == byte))
    return count == (n_rows + 1) * (n_columns - 1)
