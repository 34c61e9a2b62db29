"""Writes the hostile-input corpus: malformed, misnamed and malicious tables, deterministically.

Small files are committed beside this script (run `python -m tests.data.hostile.make_corpus`
to write them again); big ones (a 10 MB cell, bombs) are made at test time by big_files().
What each file must give is in expected.json.
"""

from __future__ import annotations

import gzip
import io
import json
import random
import zipfile
import zlib
from collections.abc import Callable
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

HERE = Path(__file__).resolve().parent
GOOD = b"x,y,z\n1,2,3\n4,5,7\n7,8,8\n2,1,5\n"
#: One PNG signature and header chunk: enough for anything that sniffs the first bytes.
PNG = bytes.fromhex("89504e470d0a1a0a0000000d4948445200000001000000010806000000") + b"\0" * 64


def _rows(n: int, seed: int) -> bytes:
    rng = random.Random(seed)
    lines = ["a,b,c"] + [f"{rng.randint(0, 99)},{rng.random():.6f},{rng.randint(0, 9)}"
                         for _ in range(n)]
    return ("\n".join(lines) + "\n").encode()


def _parquet() -> bytes:
    table = pa.table({"x": [1.0, 2.0, 3.0, 4.0], "y": [2.0, 1.0, 4.0, 3.0],
                      "z": [5.0, 3.0, 1.0, 0.5]})
    out = io.BytesIO()
    pq.write_table(table, out, compression="none")
    return out.getvalue()


def _xlsx(rows: list[list[object]]) -> bytes:
    import openpyxl

    book = openpyxl.Workbook()
    for row in rows:
        book.active.append(row)
    out = io.BytesIO()
    book.save(out)
    return _fixed_times(out.getvalue())


def _fixed_times(data: bytes) -> bytes:
    """The same zip with every member dated 1980-01-01, so the bytes do not depend on today."""
    src = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        for info in src.infolist():
            body = src.read(info.filename)
            if info.filename == "docProps/core.xml":
                body = b'<?xml version="1.0" encoding="UTF-8"?><cp:coreProperties ' \
                       b'xmlns:cp="http://schemas.openxmlformats.org/package/2006/' \
                       b'metadata/core-properties"/>'
            z.writestr(zipfile.ZipInfo(info.filename, (1980, 1, 1, 0, 0, 0)), body,
                       zipfile.ZIP_DEFLATED)
    return out.getvalue()


def _gzip(data: bytes) -> bytes:
    return gzip.compress(data, mtime=0)


def small_files() -> dict[str, bytes]:
    """The committed corpus: file name -> content."""
    rng = random.Random(7)
    good_gz = _gzip(_rows(200, 3))
    parquet = _parquet()
    files: dict[str, bytes] = {
        # encodings
        "utf16le_bom.csv": "\ufeffx,y,z\n1,2,3\n4,5,7\n7,8,8\n".encode("utf-16-le"),
        "utf16be_bom.csv": "\ufeffx,y,z\n1,2,3\n4,5,7\n7,8,8\n".encode("utf-16-be"),
        "utf16le_no_bom.csv": "x,y,z\n1,2,3\n4,5,7\n7,8,8\n".encode("utf-16-le"),
        "utf32_bom.csv": "x,y,z\n1,2,3\n4,5,7\n".encode("utf-32"),
        "latin1.csv": "città,température,z\n1,2,3\n4,5,7\n7,8,8\n".encode("latin-1"),
        "broken_utf8.csv": b"name,y,z\nab\xc3(,2,3\ncd\xff,5,7\nef,8,8\n",
        "mixed_utf8_latin1.csv": "name,y,z\ncafé,2,3\n".encode() + "thé,5,7\n".encode(
            "latin-1") + b"x,8,8\n",
        "utf8_bom_header_only.csv": b"\xef\xbb\xbfx,y,z\n",
        # empty and nearly empty
        "empty.csv": b"",
        "only_bom.csv": b"\xef\xbb\xbf",
        "only_whitespace.csv": b"   \t  \t \n  ",
        "only_newlines.csv": b"\n\n\r\n\n\r\r\n",
        "header_only.csv": b"x,y,z\n",
        "only_delimiters.csv": b",,,\n,,,\n,,,\n",
        "one_column.csv": b"score\n1\n2\n3\n",
        # header trouble
        "duplicate_names.csv": b"x,y,x\n1,2,3\n4,5,6\n",
        "blank_name.csv": b"x,,z\n1,2,3\n4,5,6\n",
        "script_in_names.csv": b'<script>alert(1)</script>,"<img src=x onerror=alert(2)>",y\n'
                               b'1,2,3\n4,5,7\n7,8,8\n2,9,1\n',
        "long_header_name.csv": b"x," + b"n" * 200_000 + b"\n1,2\n3,4\n5,7\n",
        "newline_in_name.csv": b'"first\nname",y\n1,2\n3,5\n4,4\n',
        "control_chars_in_names.csv": b"\x1b[31mred\x1b[0m,y\n1,2\n3,5\n4,4\n",
        # shape trouble
        "ragged.csv": b"a,b,c\n1,2,3\n4,5\n6,7,8\n",
        "too_many_fields.csv": b"a,b\n1,2\n3,4,5,6\n",
        "unbalanced_quote.csv": b'a,b\n"1,2\n3,4\n5,6\n',
        "nested_quotes.csv": b'a,b\n"""""""""""""""""x""""""""""""""""",1\n"""",2\n"' + b'"' * 501
                             + b'",3\n',
        "quote_in_unquoted_field.csv": b'a,b\n1,x"y"z\n2,w\n3,v\n',
        "unterminated_quote_at_end.csv": b'a,b\n1,2\n3,"4\n',
        "nul_bytes.csv": b"a,b\n1,2\x00\n3,4\n",
        "cr_only_line_endings.csv": b"x,y,z\r1,2,3\r4,5,7\r7,8,8\r",
        "mixed_line_endings.csv": b"x,y,z\r\n1,2,3\n4,5,7\r7,8,8\r\n",
        "blank_lines_between.csv": b"x,y,z\n\n1,2,3\n\n\n4,5,7\n7,8,8\n\n",
        "trailing_delimiters.csv": b"x,y,z,\n1,2,3,\n4,5,7,\n7,8,8,\n",
        # values
        "formula_cells.csv": b"label,y,z\n=1+1,1,2\n@SUM(A1:A9),2,3\n+cmd|' /C calc'!A0,3,5\n"
                             b"-2+3,4,4\n=HYPERLINK(\"http://x\"),5,1\n",
        "script_in_cells.csv": b"label,y,z\n<script>alert(1)</script>,1,2\n"
                               b"</textarea><svg onload=alert(1)>,2,3\n{{ 7*7 }},3,5\n",
        "nan_inf_strings.csv": b"x,y,z\n1,NaN,3\n2,Inf,4\n3,-Inf,5\n4,nan,6\n5,inf,2\n6,2,1\n",
        "huge_numbers.csv": b"x,y,z\n1e308,1,2\n-1e308,2,3\n1.7976931348623157e308,3,5\n0,4,4\n",
        "overflowing_numbers.csv": b"x,y,z\n1e309,1,2\n2,2,3\n3,3,5\n4,4,4\n",
        "negative_overflow.csv": b"x,y,z\n1,1,2\n-1e400,2,3\n3,3,5\n4,4,4\n",
        "tiny_numbers.csv": b"x,y,z\n1e-320,1,2\n5e-324,2,3\n1e-400,3,5\n0,4,4\n",
        "all_missing_column.csv": b"x,y,empty\n1,2,\n3,5,\n4,4,NA\n6,1,\n",
        "constant_column.csv": b"x,y,k\n1,2,7\n3,5,7\n4,4,7\n6,1,7\n",
        "text_in_numbers.csv": b"x,y,z\n1,2,3\n4,5,7\n7,eight,8\n2,1,5\n1,2,3\n4,5,7\n"
                               b"7,8,8\n2,1,5\n",
        # not what the name says
        "csv_named.xlsx": GOOD,
        "png_named.csv": PNG,
        "random_bytes.csv": bytes(rng.randrange(256) for _ in range(4096)),
        "json_named.csv": b'{"x": [1, 2, 3], "y": [4, 5, 6]}\n',
        "json_array_named.csv": b'[{"x": 1, "y": 2}, {"x": 3, "y": 4}]\n',
        "html_named.csv": b"<!DOCTYPE html><html><body><table><tr><td>1</td></tr></table>"
                          b"</body></html>\n",
        "page.html": b"<html><body><table><tr><th>x</th><th>y</th></tr></table></body></html>",
        "sqlite_named.csv": b"SQLite format 3\x00" + b"\x00" * 200,
        "pdf_named.xlsx": b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n1 0 obj\n<<>>\nendobj\n",
        "zip_of_csv_named.xlsx": _zip({"data.csv": GOOD}),
        # damaged containers
        "truncated.parquet": parquet[: len(parquet) // 2],
        "wrong_magic.parquet": b"PAR0" + parquet[4:],
        "parquet_footer_only.parquet": b"PAR1" + b"\x00" * 8 + b"PAR1",
        "parquet_named.csv": parquet,
        "truncated.csv.gz": good_gz[: len(good_gz) // 2],
        "gzip_of_garbage.csv.gz": _gzip(bytes(rng.randrange(256) for _ in range(2048))),
        "gzip_not_compressed.csv.gz": GOOD,
        "double_gzip.csv.gz": _gzip(_gzip(GOOD)),
        "truncated.xlsx": _xlsx([["x", "y"], [1, 2], [3, 4]])[:300],
        "xlsx_real.xlsx": _xlsx([["x", "y", "z"], [1, 2, 3], [4, 5, 7], [7, 8, 8]]),
        "xlsx_formula_text.xlsx": _xlsx([["label", "y", "z"], ["=1+1", 2, 3], ["@SUM(A1)", 5, 7],
                                         ["<script>x</script>", 8, 8]]),
    }
    return files


def _zip(members: dict[str, bytes]) -> bytes:
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        for name, body in members.items():
            z.writestr(zipfile.ZipInfo(name, (1980, 1, 1, 0, 0, 0)), body, zipfile.ZIP_DEFLATED)
    return out.getvalue()


def _wide(columns: int) -> bytes:
    header = ",".join(f"c{j}" for j in range(columns))
    rows = [",".join(str((i * 7 + j) % 10) for j in range(columns)) for i in range(3)]
    return ("\n".join([header, *rows]) + "\n").encode()


def _huge_cell() -> bytes:
    return b"label,y,z\n" + b"A" * 10_000_000 + b",1,2\nb,2,3\nc,3,5\n"


def _zip_bomb_xlsx() -> bytes:
    """An .xlsx-shaped zip whose sheet unpacks to 200 MB of one repeated byte (~200 KB)."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr(zipfile.ZipInfo("[Content_Types].xml", (1980, 1, 1, 0, 0, 0)), b"<Types/>")
        info = zipfile.ZipInfo("xl/worksheets/sheet1.xml", (1980, 1, 1, 0, 0, 0))
        info.compress_type = zipfile.ZIP_DEFLATED
        with z.open(info, "w", force_zip64=True) as f:
            block = b" " * (1 << 20)
            for _ in range(200):
                f.write(block)
    return out.getvalue()


def _gzip_bomb() -> bytes:
    """A gzip whose content is 300 MB of one short row repeated (~300 KB compressed)."""
    c = zlib.compressobj(9, zlib.DEFLATED, 31)
    parts = [c.compress(b"x,y\n")]
    block = b"1,1\n" * (1 << 18)
    for _ in range(300):
        parts.append(c.compress(block))
    parts.append(c.flush())
    return b"".join(parts)


#: Files made at test time (too big to commit): name -> maker.
BIG: dict[str, Callable[[], bytes]] = {
    "wide_10000_columns.csv": lambda: _wide(10_000),
    "huge_cell_10mb.csv": _huge_cell,
    "zip_bomb.xlsx": _zip_bomb_xlsx,
    "gzip_bomb.csv.gz": _gzip_bomb,
    "rows_over_limit.csv": lambda: _rows(5_000, 11),
    "long_header_line.csv": lambda: (",".join(f"column_{j:06d}" for j in
                                              range(60_000)) + "\n").encode() + b"1\n",
}


def big_files(folder: Path) -> dict[str, Path]:
    """Write the big files into folder; name -> path."""
    out = {}
    for name, make in BIG.items():
        path = folder / name
        path.write_bytes(make())
        out[name] = path
    return out


def main() -> None:
    for name, data in small_files().items():
        (HERE / name).write_bytes(data)
    names = sorted(small_files()) + sorted(BIG)
    print(json.dumps(names))


if __name__ == "__main__":
    main()
