"""CSV/TSV bytes -> Raw: pyarrow.csv for speed, Python's csv module where pyarrow gives up.

Does not decide kinds (infer.py does) beyond pyarrow's own number/date parsing.

Line numbers are those of a text editor as Python's csv module counts them (header = line 1, a
quoted field with newlines spanning several lines): 2 + row when each row has a line of its
own, else from where the quotes and line ends are, else (quotes inside fields) from the csv
module itself, which also finds a cell's text again for a message.
"""

from __future__ import annotations

import csv
import io
import mmap
import re
from collections.abc import Iterable, Iterator

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.types as pat

from rankscope.tables import sniff
from rankscope.tables.build import one_column
from rankscope.tables.errors import InputError
from rankscope.tables.limits import check_columns
from rankscope.tables.raw import Raw, RowNumbers
from rankscope.tables.text import MISSING_MARKERS

csv.field_size_limit(max(csv.field_size_limit(), 1 << 26))
#: The file's content: bytes, or for a big file, a buffer in memory (read.py's _load).
Bytes = bytes | mmap.mmap
NON_SPACE = re.compile(rb"\S")
#: Most distinct values in one parse block (about 1 MB) for which pyarrow dictionary-encodes a
#: text column; a column with more (free text, IDs) falls back to plain text in pyarrow and is
#: encoded once, later. Our choice: categories rarely have more, and the cost of a failed try
#: is one block's encoding.
DICT_LEVELS = 1000


class _Legacy(Exception):
    """The file turned out not to be UTF-8 after all."""


def read_text(data: Bytes, where: str, ext: str, declared: Iterable[str] = (),
              max_columns: int | None = None) -> Raw:
    """Read delimited text (already decompressed) into a Raw table of Arrow columns.
    max_columns: refuse a header with more names as soon as it is read (None: no limit)."""
    notes: list[str] = []
    data, off = _unbom(data, notes, where)
    if not NON_SPACE.search(data, off):
        raise InputError(
            "The file is empty", where, "Choose a file with a header row and data rows"
        )
    sample = data[off : off + sniff.SAMPLE_BYTES]
    if sniff.looks_binary(sample):
        raise InputError(
            "The file holds binary data, not text" + _first_control(sample, off),
            where,
            f"Choose a table saved as {sniff.SUPPORTED}",
        )
    text, encoding = sniff.decode_sample(sample)
    if encoding != "utf-8":
        data, off = _transcode(data, off, notes)
    delimiter = sniff.sniff_delimiter(text, ext)
    if delimiter is None:
        first = next(iter(records(text, ",")), [""])
        raise one_column(where, first[0])
    decimal = sniff.sniff_decimal(text, delimiter)
    header = next(iter(records(text, delimiter)), [])
    # The sample may cut a very long header short: its count is then a lower bound.
    check_columns(len(header), max_columns, where, at_least=not re.search("[\r\n]", text))
    has_quotes = data.find(b'"', off) >= 0  # memchr: a fraction of the parse's time
    if has_quotes:
        _check_quotes(data, off, delimiter, where)
    try:
        table, one_line_rows = _arrow(data, off, delimiter, decimal, header, set(declared),
                                      has_quotes)
    except _Legacy:
        data, off = _transcode(data, off, notes)
        table, one_line_rows = _arrow(data, off, delimiter, decimal, header, set(declared),
                                      has_quotes)
    if table is not None:
        names, columns = table.column_names, table.columns
        if one_line_rows:
            index = RowNumbers(range(2, table.num_rows + 2), "line")
        else:
            index = _line_index(data, off, table.num_rows, delimiter)
    else:
        names, columns, index = _python(data, off, delimiter, where, notes)
    if note := dialect_note(delimiter, decimal):
        notes.append(note)
    return Raw(
        names=list(names),
        columns=list(columns),
        index=index,
        where=where,
        decimal=decimal,
        cell=lambda pos, j: cell_text(data, off, delimiter, pos, j),
        notes=notes,
    )


def dialect_note(delimiter: str, decimal: str) -> str | None:
    """The note on a delimiter other than a comma or a decimal comma (None for neither)."""
    if delimiter == "," and decimal != ",":
        return None
    mark = " and ',' as the decimal mark" if decimal == "," else ""
    return f"Read as {sniff.DELIMITER_NAMES[delimiter]}-separated text{mark}."


def _first_control(sample: bytes, off: int) -> str:
    """Where the first byte that text does not hold is (sample starts at byte off + 1)."""
    pos = next((i for i, b in enumerate(sample) if b in sniff.CONTROL_BYTES), None)
    if pos is None:
        return ""
    what = "a NUL byte" if sample[pos] == 0 else f"the control character 0x{sample[pos]:02X}"
    line = sample.count(b"\n", 0, pos) + 1
    return f" ({what} at byte {off + pos + 1:,}, on line {line:,})"


def _unbom(data: Bytes, notes: list[str], where: str) -> tuple[Bytes, int]:
    head = data[:4]
    if head.startswith(b"\xef\xbb\xbf"):
        return data, 3
    if head.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):
        encoding, label = "utf-32", "UTF-32"
    elif head.startswith((b"\xff\xfe", b"\xfe\xff")):
        encoding, label = "utf-16", "UTF-16"
    else:
        encoding = utf16_without_bom(data[: sniff.SAMPLE_BYTES])
        if encoding is None:
            return data, 0
        label = "UTF-16 (without a byte order mark)"
    try:
        text = data[:].decode(encoding)
    except UnicodeDecodeError as e:
        if head.startswith((b"\xff\xfe", b"\xfe\xff", b"\x00\x00\xfe\xff")):
            raise InputError(f"The file is marked as {label} text but byte {e.start + 1:,} "
                             "is not valid there (the file may be cut short or damaged)",
                             where, "Save the file again, preferably as UTF-8") from None
        return data, 0  # not UTF-16 after all: the binary check will say what it is
    notes.append(f"The file is {label} text; it was converted to UTF-8.")
    return text.lstrip("\ufeff").encode("utf-8"), 0


def utf16_without_bom(sample: bytes) -> str | None:
    """'utf-16-le' or 'utf-16-be' for mostly-ASCII UTF-16 text without a byte order mark
    (every other byte NUL), else None."""
    sample = sample[: len(sample) // 2 * 2]
    if len(sample) < 4:
        return None
    even, odd = sample[0::2], sample[1::2]
    for enc, zeros, chars in (("utf-16-le", odd, even), ("utf-16-be", even, odd)):
        if zeros.count(0) >= 0.9 * len(zeros) and chars.count(0) <= 0.1 * len(chars):
            return enc
    return None


def _check_quotes(data: Bytes, off: int, delimiter: str, where: str) -> None:
    """Refuse a file that ends inside a quoted field: pyarrow would read the rest of the file
    into one cell. An odd number of quotes is the cheap sign; the scan finds the line."""
    if _count(data, b'"', off) % 2 == 0:
        return
    text = data[off:].decode("utf-8", errors="replace")
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"',
                        strict=True)
    start = 1
    try:
        for _ in reader:
            start = reader.line_num + 1
    except csv.Error as e:
        if "unexpected end of data" not in str(e):
            return  # another quirk, which pyarrow reads leniently; not this one
        raise InputError(
            f'A quote (") opened on line {start} is never closed, so the rest of the file '
            "would be read as one cell",
            f"{where}, line {start}",
            'Close the quote, or double a quote that is part of the text ("")',
        ) from None


def _transcode(data: Bytes, off: int, notes: list[str]) -> tuple[bytes, int]:
    text, encoding = sniff.legacy_decode(data[off:])
    name = {"cp1252": "Windows-1252 (Latin-1)", "latin-1": "Latin-1"}[encoding]
    notes.append(f"The file is not UTF-8; it was read as {name} text.")
    return text.encode("utf-8"), 0


def _arrow(data, off, delimiter, decimal, header, declared,
           has_quotes: bool) -> tuple[pa.Table | None, bool]:
    """The table via pyarrow (None when pyarrow cannot parse this dialect), and whether each
    data row is known to sit on its own line (no quotes, no blank lines: line = 2 + row).

    Text columns come back dictionary-encoded where they have few distinct values: pyarrow
    encodes each block on the thread that parses it, so inference does not hash every cell
    again on one core."""
    types = {name: pa.string() for name in declared}
    one_line_rows = not has_quotes  # then blank lines are kept as rows, and checked for
    for _ in range(len(header) + 2):
        parse = pacsv.ParseOptions(
            delimiter=delimiter,
            quote_char='"',
            double_quote=True,
            newlines_in_values=has_quotes,
            ignore_empty_lines=not one_line_rows,
        )
        convert = convert_options(decimal, types)
        try:
            table = pacsv.read_csv(
                pa.BufferReader(pa.py_buffer(data).slice(off)),
                parse_options=parse,
                convert_options=convert,
            )
        except UnicodeDecodeError:
            raise _Legacy() from None
        except pa.ArrowInvalid as e:
            # pyarrow before 15 fixes a column's type from the first block; later text fails.
            m = re.search(r"In CSV column #(\d+)", str(e))
            if m and int(m.group(1)) < len(header) and "conversion error" in str(e):
                types[header[int(m.group(1))]] = pa.string()
                continue
            if one_line_rows:
                one_line_rows = False
                continue
            return None, False
        if any(pat.is_binary(_values(f.type)) for f in table.schema):
            raise _Legacy()
        if one_line_rows and _has_empty_rows(table):  # blank lines came through as rows
            one_line_rows = False
            continue
        return table, one_line_rows
    return None, False


def convert_options(decimal: str, types: dict[str, pa.DataType] | None = None,
                    dictionaries: bool = True) -> pacsv.ConvertOptions:
    """How pyarrow turns a CSV's cells into values: the missing markers, true/false words and
    decimal mark of docs/reading.md; text dictionary-encoded in each parse block when it has
    few distinct values (dictionaries)."""
    return pacsv.ConvertOptions(
        null_values=list(MISSING_MARKERS),
        true_values=["true", "True", "TRUE"],
        false_values=["false", "False", "FALSE"],
        strings_can_be_null=True,
        quoted_strings_can_be_null=True,
        decimal_point=decimal,
        column_types=types or {},
        auto_dict_encode=dictionaries,
        auto_dict_max_cardinality=DICT_LEVELS,
    )


def _values(t: pa.DataType) -> pa.DataType:
    return t.value_type if pat.is_dictionary(t) else t


def _has_empty_rows(table: pa.Table) -> bool:
    empty = None
    for col in table.columns:
        nulls = col.is_null()
        empty = nulls if empty is None else pc.and_(empty, nulls)
        if not pc.any(empty).as_py():
            return False
    return empty is not None


def records(text: str, delimiter: str) -> Iterator[list[str]]:
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"')
    try:
        for rec in reader:
            if rec:
                yield rec
    except csv.Error:
        return


def _scan(data: Bytes, off: int, delimiter: str) -> Iterator[tuple[int, list[str]]]:
    """(first line, fields) of each non-blank record; the header is the first."""
    text = data[off:].decode("utf-8", errors="replace")
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"')
    done = 0
    for rec in reader:
        start, done = done + 1, reader.line_num
        if rec:
            yield start, rec


def _line_index(data: Bytes, off: int, n_rows: int, delimiter: str) -> RowNumbers:
    """Editor line of each data row: 2 + i when the file has one line per row; when blank lines
    or quoted newlines make more lines than rows, the lines are found from where the quotes
    and line ends are (_line_starts), or by Python's csv module when quotes sit inside fields."""
    end = len(data)
    while end > off and data[end - 1] in b"\r\n":
        end -= 1
    has_cr, has_lf = data.find(b"\r", off, end) >= 0, data.find(b"\n", off, end) >= 0
    if not (has_cr and has_lf):  # one kind of line end (\r\n files take the longer way)
        lines = _count(data, b"\r" if has_cr else b"\n", off, end) + 1
        if lines == n_rows + 1 and data[off : off + 1] not in (b"\r", b"\n"):
            return RowNumbers(range(2, n_rows + 2), "line")
    found = _line_starts(data, off, delimiter)
    if found is None:
        starts = np.array([start for start, _ in _scan(data, off, delimiter)][1:], np.int64)
    else:
        starts = found[1:]
    if len(starts) != n_rows:  # the two parsers disagree; fall back to plain numbering
        return RowNumbers(range(2, n_rows + 2), "line")
    return RowNumbers(np.asarray(starts, dtype=np.int64), "line")


def _line_starts(data: Bytes, off: int, delimiter: str,
                 block: int = 1 << 22) -> np.ndarray | None:
    """The line on which each non-blank record starts (header first), as Python's csv module
    counts them (lines end in \\n, \\r\\n or \\r; a quoted field may span lines), without
    running it: a line end is inside a quoted field when an odd number of quotes come before
    it. That holds only while every quote that opens a field follows a delimiter, a line end or
    another quote ("" in a quoted field); otherwise (a quote inside an unquoted field, which
    the csv module keeps as text) None, and the caller runs the csv module itself.
    The file is looked at in blocks, so no mask or list of quotes is as big as the file."""
    buf = np.frombuffer(data, np.uint8)[off:]
    n = len(buf)
    after = np.frombuffer(b'\n\r"' + delimiter.encode(), np.uint8)
    ends, outside, odd = [], [], 0  # odd: whether the quotes so far are an odd number
    for i in range(0, n, block):
        seg = buf[i : i + block]
        quotes = np.flatnonzero(seg == ord('"')) + i
        opens = quotes[odd::2]
        if not ((opens == 0) | np.isin(buf[np.maximum(opens - 1, 0)], after)).all():
            return None
        lf = np.flatnonzero(seg == ord("\n")) + i
        cr = np.flatnonzero(seg == ord("\r")) + i
        cr = cr[(cr + 1 >= n) | (buf[np.minimum(cr + 1, n - 1)] != ord("\n"))]  # lone \r
        last = np.sort(np.concatenate([lf, cr])) if len(cr) else lf  # last byte of a line end
        ends.append(last)
        outside.append((np.searchsorted(quotes, last) + odd) % 2 == 0)
        odd = (odd + len(quotes)) % 2
    if odd or not ends:
        return None  # a quote left open: refused earlier unless the csv module reads it so
    last = np.concatenate(ends)
    crlf = (last > 0) & (buf[last] == ord("\n")) & (buf[np.maximum(last - 1, 0)] == ord("\r"))
    first = last - crlf
    k = np.flatnonzero(np.concatenate(outside))
    # Line end number k (from 0) closes line k + 1; what follows it starts on line k + 2.
    starts = np.concatenate([[0], last[k] + 1])
    stops = np.concatenate([first[k], [n]])
    lines = np.concatenate([[1], k + 2])
    return lines[stops > starts]  # blank lines are records of no bytes


def _count(data: Bytes, byte: bytes, start: int = 0, end: int | None = None) -> int:
    """data.count(byte, start, end), also for a memory buffer (which has no count)."""
    if isinstance(data, bytes):
        return data.count(byte, start, end)
    buf = np.frombuffer(data, np.uint8)[start:end]
    block = 1 << 24
    return sum(int(np.count_nonzero(buf[i : i + block] == byte[0]))
               for i in range(0, len(buf), block))


def _python(data: Bytes, off: int, delimiter: str, where: str, notes: list[str]):
    """Parse with Python's csv module: names, Arrow string columns, line index.

    Forgives one quirk of spreadsheet exports: a delimiter at the end of the header only, or
    at the end of every row only (the extra field must be empty); a note says so."""
    records = _scan(data, off, delimiter)
    try:
        _, names = next(records)
    except StopIteration:
        raise InputError("The file is empty", where, "Choose a file with a header row") from None
    width = len(names)
    short_ok = width > 1 and names[-1].strip() == ""
    columns: list[list[str | None]] = [[] for _ in names]
    lines: list[int] = []
    forgiven, first_extra = 0, None
    for line, rec in records:
        if len(rec) != width:
            if short_ok and len(rec) == width - 1:
                rec = [*rec, ""]
            elif len(rec) == width + 1 and rec[-1] == "" and forgiven == len(lines):
                first_extra = first_extra or (line, rec)
                rec = rec[:-1]
                forgiven += 1
            else:
                raise ragged(where, line, width, rec, delimiter)
        for col, value in zip(columns, rec, strict=True):
            col.append(value if value != "" else None)
        lines.append(line)
    if first_extra and forgiven < len(lines):
        raise ragged(where, first_extra[0], width, first_extra[1], delimiter)
    if forgiven:
        notes.append("Every row ends with an extra delimiter; the empty last field was ignored.")
    arrays = [pa.chunked_array([pa.array(col, pa.string())]) for col in columns]
    return names, arrays, RowNumbers(np.asarray(lines, dtype=np.int64), "line")


def ragged(where: str, line: int, expected: int, rec: list[str], delimiter: str) -> InputError:
    name = sniff.DELIMITER_NAMES[delimiter]
    if any("\n" in f or "\r" in f for f in rec):
        return InputError(
            f'A quote (") opened on line {line} is not closed where expected, so the row '
            f"runs on over several lines",
            f"{where}, line {line}",
            'Close the quote, or double a quote that is part of the text ("")',
        )
    return InputError(
        f"Line {line} has {len(rec)} fields but the header has {expected}",
        f"{where}, line {line}",
        f"Give every row {expected} fields separated by {name}s; put a field in double quotes "
        f"if it contains a {name}",
    )


def cell_text(data: Bytes, off: int, delimiter: str, pos: int, j: int) -> str | None:
    """The text of data row pos, column j, as written in the file (for messages)."""
    for k, (_, rec) in enumerate(_scan(data, off, delimiter)):
        if k == pos + 1:
            return rec[j] if j < len(rec) else None
    return None
