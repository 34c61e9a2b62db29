"""Work out what a file is from its bytes: format, text encoding, delimiter, decimal mark.

No parsing of whole tables here; only the file's first bytes and a small text sample.
"""

from __future__ import annotations

import csv
import io
import re
import zipfile
from pathlib import PurePath

from rankscope.tables.errors import InputError

SAMPLE_BYTES = 64 * 1024
DELIMITERS = (",", "\t", ";", "|")
DELIMITER_NAMES = {",": "comma", "\t": "tab", ";": "semicolon", "|": "vertical bar |"}

TEXT_EXTS = {".csv", ".tsv", ".txt", ".tab", ".dat", ".psv", ""}
EXCEL_EXTS = {".xlsx", ".xlsm"}
PARQUET_EXTS = {".parquet", ".pq", ".parq"}

# First bytes of file types a user may upload by mistake -> what a person calls them.
MAGIC = [
    (b"\x89PNG\r\n\x1a\n", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF87a", "a GIF image"),
    (b"GIF89a", "a GIF image"),
    (b"%PDF", "a PDF document"),
    (
        b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1",
        "an old-style Office file (.xls or .doc) or a password-protected workbook",
    ),
    (b"BZh", "a bzip2-compressed file"),
    (b"\xfd7zXZ\x00", "an xz-compressed file"),
    (b"7z\xbc\xaf\x27\x1c", "a 7-Zip archive"),
    (b"Rar!\x1a\x07", "a RAR archive"),
    (b"\x28\xb5\x2f\xfd", "a zstd-compressed file"),
    (b"SQLite format 3\x00", "an SQLite database"),
    (b"ARROW1", "an Arrow/Feather file"),
    (b"\x7fELF", "a program (ELF executable)"),
]
SUPPORTED = "CSV or TSV text (optionally .gz), Excel .xlsx, or Parquet"


def suffixes(filename: str) -> tuple[str, bool]:
    """The table extension of a file name (lower case) and whether it ends in .gz."""
    p = PurePath(filename)
    ext = p.suffix.lower()
    if ext == ".gz":
        return PurePath(p.stem).suffix.lower(), True
    return ext, False


def zip_kind(data: bytes, where: str = "") -> str:
    """'excel' for an .xlsx workbook, else raise naming what the ZIP holds."""
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as z:
            names = z.namelist()
            mimetype = z.read("mimetype").decode("ascii", "replace") if "mimetype" in names else ""
    except (zipfile.BadZipFile, EOFError, ValueError) as e:
        raise _damaged("a ZIP-based file (such as .xlsx)", where) from e
    if any(n.startswith("xl/") for n in names):
        return "excel"
    if any(n.startswith("word/") for n in names):
        what = "a Word document"
    elif any(n.startswith("ppt/") for n in names):
        what = "a PowerPoint presentation"
    elif "spreadsheet" in mimetype:
        what = "an OpenDocument spreadsheet (.ods)"
    elif "opendocument" in mimetype:
        what = "an OpenDocument file"
    else:
        what = "a ZIP archive"
    raise InputError(
        f"This is {what}, not a table rankscope can read",
        where,
        f"Save the table as {SUPPORTED}",
    )


def _damaged(what: str, where: str) -> InputError:
    return InputError(
        f"The file looks like {what} but is damaged or incomplete",
        where,
        "Save or download the file again",
    )


def content_kind(head: bytes) -> str | None:
    """'gzip', 'zip', 'parquet', 'utf16' or None (text or unknown) from the first bytes."""
    if head.startswith(b"\x1f\x8b"):
        return "gzip"
    if head.startswith((b"PK\x03\x04", b"PK\x05\x06")):
        return "zip"
    if head.startswith(b"PAR1"):
        return "parquet"
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        return "utf16"
    return None


def foreign_kind(head: bytes) -> str | None:
    """What a person would call a non-table file, from its first bytes."""
    for magic, what in MAGIC:
        if head.startswith(magic):
            return what
    return None


DOCUMENT_STARTS = [
    (("<!doctype html", "<html", "<head", "<body", "<table"), "an HTML page"),
    (("<?xml",), "an XML document"),
    (('{"', "{\n", "{\r", "[{", "[[", '["', "[\n", "[\r"), "JSON data"),
]


def document_kind(sample: bytes) -> str | None:
    """'an HTML page', 'an XML document' or 'JSON data' for text that is one of these rather
    than delimited rows (judged by how it starts; a CSV header never starts so)."""
    head = sample[:64].lstrip(b"\xef\xbb\xbf \t\r\n").decode("latin-1").lower()
    for starts, what in DOCUMENT_STARTS:
        if head.startswith(starts):
            return what
    return None


CONTROL_BYTES = bytes([*range(0, 9), 11, *range(14, 32), 127])


def looks_binary(sample: bytes) -> bool:
    """True for bytes that are not text: NUL bytes or many control characters."""
    if not sample:
        return False
    if b"\x00" in sample:
        return True
    controls = len(sample) - len(sample.translate(None, CONTROL_BYTES))
    return controls > max(2, len(sample) // 100)


# ---- text: encoding, delimiter and decimal mark -------------------------------------------------


def decode_sample(sample: bytes) -> tuple[str, str]:
    """(text, encoding) of a text sample; encoding is 'utf-8', 'cp1252' or 'latin-1'."""
    cut = sample
    for _ in range(4):  # a multi-byte character may be cut at the end of the sample
        try:
            return cut.decode("utf-8"), "utf-8"
        except UnicodeDecodeError as e:
            if e.start < len(cut) - 3:
                break
            cut = cut[:-1]
    return legacy_decode(sample)


def legacy_decode(data: bytes) -> tuple[str, str]:
    """Windows-1252 where it decodes (a superset of Latin-1's printable range), else Latin-1."""
    try:
        return data.decode("cp1252"), "cp1252"
    except UnicodeDecodeError:
        return data.decode("latin-1"), "latin-1"


NUM_POINT = re.compile(r"^[+-]?\d*\.\d+([eE][+-]?\d+)?$")
NUM_COMMA = re.compile(r"^[+-]?(\d+|\d{1,3}(\.\d{3})+),\d+([eE][+-]?\d+)?$")


def _records(text: str, delimiter: str, limit: int = 200) -> list[list[str]]:
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"')
    out: list[list[str]] = []
    try:
        for rec in reader:
            if rec:
                out.append(rec)
            if len(out) >= limit:
                break
    except csv.Error:
        pass
    return out


def sniff_delimiter(text: str, ext: str) -> str | None:
    """The delimiter among , tab ; | that splits the header into 2+ fields and the rows alike.

    Scores each candidate by the share of sampled rows with as many fields as the header; ties go
    to the extension's usual delimiter (tab for .tsv/.tab, | for .psv) and then to , tab ; |.
    None when no candidate splits the header (a single column, or an unsupported delimiter).
    """
    if len(text) > SAMPLE_BYTES:
        text = text[:SAMPLE_BYTES]
    last_nl = max(text.rfind("\n"), text.rfind("\r"))
    if last_nl > 0:
        text = text[:last_nl]
    preferred = {".tsv": "\t", ".tab": "\t", ".psv": "|"}.get(ext, ",")
    best: tuple | None = None
    choice = None
    for rank, d in enumerate(DELIMITERS):
        recs = _records(text, d)
        if not recs or len(recs[0]) < 2:
            continue
        width = len(recs[0])
        rows = recs[1:]
        share = sum(len(r) == width for r in rows) / len(rows) if rows else 1.0
        score = (share, d == preferred, -rank)
        if best is None or score > best:
            best, choice = score, d
    return choice


def sniff_decimal(text: str, delimiter: str) -> str:
    """',' when the sample's numbers are written with a decimal comma (never for ',' files)."""
    if delimiter == ",":
        return "."
    comma = point = 0
    for rec in _records(text[:SAMPLE_BYTES], delimiter)[1:]:
        for cell in rec:
            cell = cell.strip()
            if NUM_COMMA.match(cell):
                comma += 1
            elif NUM_POINT.match(cell):
                point += 1
    return "," if comma > point else "."
