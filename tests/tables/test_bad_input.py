"""Each kind of bad input gives an InputError that says what, where and what to do."""

from __future__ import annotations

import gzip
import io
import os
import zipfile

import numpy as np
import pandas as pd
import pytest

from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes, read_table


def error(data: bytes, filename: str = "data.csv", **kw) -> InputError:
    with pytest.raises(InputError) as info:
        read_bytes(data, filename, **kw)
    return info.value


@pytest.mark.parametrize("data", [b"", b"   \n\n  \r\n", b"\xef\xbb\xbf"])
def test_empty_file(data):
    e = error(data)
    assert "empty" in e.what
    assert e.where == "data.csv"
    assert e.todo


def test_header_only():
    e = error(b"x,y,z\n")
    assert "no data rows" in e.what
    assert "header" in e.what
    assert "data.csv" in e.where


def test_single_column_names_it_and_explains_design_needs_two():
    e = error(b"score\n1\n2\n3\n")
    assert "only one column ('score')" in e.what
    assert "at least 2" in e.what
    assert "commas, semicolons, tabs or |" in e.todo


def test_space_separated_file_is_one_column_with_hint():
    e = error(b"x y z\n1 2 3\n4 5 6\n")
    assert "only one column" in e.what
    assert "spaces" in e.todo


def test_ragged_row_names_line_and_counts():
    e = error(b"a,b,c\n1,2,3\n4,5\n6,7,8\n")
    assert e.where == "data.csv, line 3"
    assert "has 2 fields but the header has 3" in e.what
    assert "3 fields" in e.todo


def test_ragged_row_after_quoted_newline_counts_editor_lines():
    e = error(b'a,b\n"x\ny",1\n2,3,4\n')
    assert e.where == "data.csv, line 4"
    assert "has 3 fields but the header has 2" in e.what


def test_unclosed_quote():
    e = error(b'a,b\n1,2\n"oops,3\n4,5\n')
    assert e.where == "data.csv, line 3"
    assert "quote" in e.what
    assert "Close the quote" in e.todo


def test_duplicate_column_names():
    e = error(b"x,y,x\n1,2,3\n")
    assert "'x' is used 2 times" in e.what
    assert "columns 1, 3" in e.what
    assert "header" in e.where
    assert "different name" in e.todo


def test_blank_column_name_with_data():
    e = error(b"x,,z\n1,2,3\n")
    assert "Column 2" in e.what and "no name" in e.what
    assert e.where == "data.csv, header, column 2"
    assert "name" in e.todo


def test_blank_named_empty_column_is_dropped_with_note():
    table = read_bytes(b"x,y,\n1,2,\n3,4,\n", "data.csv")
    assert table.columns == ["x", "y"]
    assert any("empty column" in n for n in table.notes)


def test_missing_markers_in_numeric_column_are_missing():
    data = b"x,y\n1,2\n2,n/a\n3,NA\n4,-\n5,.\n6, \n7,null\n8,9\n"
    table = read_bytes(data, "data.csv")
    assert table.kinds["y"] == "numeric"
    assert np.isnan(table.frame["y"].to_numpy()[1:7]).all()
    assert table.frame["y"].iloc[-1] == 9


def test_stray_text_in_numeric_column_names_first_line_and_value():
    rows = "".join(f"{i},{i * 2}\n" for i in range(20))
    data = f"x,dose\n{rows}".encode() + b"20,<0.5\n21,n.d.\n22,n.d.\n"
    e = error(data)
    assert e.where == "data.csv, line 22, column 'dose'"
    assert "holds numbers" in e.what
    assert "3 cells hold other text" in e.what
    assert "'<0.5'" in e.what and "'n.d.'" in e.what
    assert "categorical" in e.todo and "NA" in e.todo


def test_stray_text_column_declared_categorical_reads():
    rows = "".join(f"{i},{i}\n" for i in range(20))
    data = f"x,code\n{rows}21,V58\n".encode()
    table = read_bytes(data, "data.csv", kinds={"code": "categorical"})
    assert table.kinds["code"] == "categorical"
    assert "V58" in table.frame["code"].cat.categories


def test_mostly_text_column_is_categorical():
    table = read_bytes(b"x,g\n1,a\n2,b\n3,1\n4,c\n", "data.csv")
    assert table.kinds["g"] == "categorical"


def test_all_missing_column_is_kept_with_note():
    table = read_bytes(b"x,y,empty\n1,2,\n3,4,NA\n", "data.csv")
    assert table.kinds["empty"] == "numeric"
    assert table.frame["empty"].isna().all()
    assert any("'empty' is empty" in n for n in table.notes)


def test_only_one_column_with_data():
    e = error(b"x,,\n1,,\n2,,\n")
    assert "only one column ('x')" in e.what


def test_constant_column_is_a_note():
    table = read_bytes(b"x,k,g\n1,3,a\n2,3,a\n3,3,a\n", "data.csv")
    notes = " ".join(table.notes)
    assert "Column 'k' is constant (every value is 3)" in notes
    assert "Column 'g' is constant (every value is 'a')" in notes


@pytest.mark.parametrize("value", ["1e400", "inf", "-Infinity"])
def test_infinite_value_names_line_and_column(value):
    e = error(f"x,y\n1,2\n3,{value}\n".encode())
    assert e.where == "data.csv, line 3, column 'y'"
    assert repr(value) in e.what
    assert "infinite or too large" in e.what
    assert "finite number" in e.todo


def test_infinite_in_text_column_after_quoted_newline():
    e = error(b'note,y\n"a\nb",1\nc,1e999\n')
    assert e.where == "data.csv, line 4, column 'y'"


def test_random_bytes_are_binary():
    rng = np.random.default_rng(1)
    e = error(rng.integers(0, 256, 5000, dtype=np.uint8).tobytes())
    assert "binary" in e.what
    assert "CSV" in e.todo


def test_png_renamed_csv():
    png = b"\x89PNG\r\n\x1a\n" + bytes(range(256))
    e = error(png, "photo.csv")
    assert "PNG image" in e.what
    assert "CSV" in e.todo


def test_word_document():
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("word/document.xml", "<w:document/>")
    e = error(buf.getvalue(), "report.docx")
    assert "Word document" in e.what
    assert "xlsx" in e.todo


def test_parquet_name_with_text_content():
    e = error(b"a,b\n1,2\n", "data.parquet")
    assert "not a Parquet file" in e.what
    assert "text" in e.what
    assert ".csv" in e.todo


def test_truncated_parquet(tmp_path):
    pd.DataFrame({"a": [1.0, 2.0], "b": [3.0, 4.0]}).to_parquet(tmp_path / "t.parquet")
    data = (tmp_path / "t.parquet").read_bytes()
    e = error(data[: len(data) // 2], "t.parquet")
    assert "damaged or incomplete" in e.what


def test_xlsx_name_with_text_content():
    e = error(b"a,b\n1,2\n", "data.xlsx")
    assert "not an Excel workbook" in e.what


def test_old_xls():
    e = error(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(600), "old.xls")
    assert "old-style" in e.what
    assert ".xlsx" in e.todo


def test_unsupported_extension_with_text():
    e = error(b'{"a": 1}', "data.json")
    assert "JSON" in e.what


def test_file_over_size_limit(tmp_path):
    path = tmp_path / "big.csv"
    path.write_bytes(b"a,b\n" + b"1,2\n" * 1000)
    with pytest.raises(InputError) as info:
        read_table(path, max_bytes=1000)
    assert "over the limit of 1,000 bytes" in info.value.what
    assert "smaller" in info.value.todo
    e = error(path.read_bytes(), "big.csv", max_bytes=1000)
    assert "over the limit" in e.what


def test_gzip_over_size_limit_when_decompressed():
    data = gzip.compress(b"a,b\n" + b"1,2\n" * 100_000)
    e = error(data, "big.csv.gz", max_bytes=len(data) + 10)
    assert "decompresses to more than the limit" in e.what


def test_damaged_gzip():
    data = gzip.compress(b"a,b\n" + b"1,2\n" * 1000)
    e = error(data[:40], "t.csv.gz")
    assert "damaged or incomplete" in e.what


def test_missing_file(tmp_path):
    with pytest.raises(InputError) as info:
        read_table(tmp_path / "nope.csv")
    assert "does not exist" in info.value.what
    assert info.value.where.endswith("nope.csv")


def test_folder(tmp_path):
    with pytest.raises(InputError) as info:
        read_table(tmp_path)
    assert "folder" in info.value.what


@pytest.mark.skipif(os.geteuid() == 0, reason="root can read any file")
def test_unreadable_file(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("a,b\n1,2\n")
    path.chmod(0)
    with pytest.raises(InputError):
        read_table(path)


def test_unknown_sheet_lists_sheets(tmp_path):
    path = tmp_path / "t.xlsx"
    pd.DataFrame({"a": [1], "b": [2]}).to_excel(path, sheet_name="Data", index=False)
    for sheet in ("Dta", 3):
        with pytest.raises(InputError) as info:
            read_table(path, sheet=sheet)
        assert "'Data'" in info.value.todo


def test_excel_stray_text_names_sheet_row():
    buf = io.BytesIO()
    pd.DataFrame({"x": [1.0, 2.0, 3.0, 4.0, 5.0, "#DIV/0!"], "g": list("abcabc")}).to_excel(
        buf, sheet_name="S1", index=False
    )
    e = error(buf.getvalue(), "book.xlsx")
    assert e.where == "book.xlsx, sheet 'S1', row 7, column 'x'"
    assert "'#DIV/0!'" in e.what


def test_mostly_dates_with_text():
    rows = "".join(f"2024-01-{d:02d},{d}\n" for d in range(1, 20))
    e = error(f"day,v\n{rows}soon,20\n".encode())
    assert "holds dates" in e.what
    assert e.where == "data.csv, line 21, column 'day'"


def test_impossible_date():
    e = error(b"day,v\n2024-02-28,1\n2024-02-30,2\n")
    assert "does not exist" in e.what
    assert e.where == "data.csv, line 3, column 'day'"


def test_unknown_declared_kind_and_column():
    e = error(b"a,b\n1,2\n", kinds={"c": "numeric"})
    assert "no column 'c'" in e.what and "'a'" in e.todo
    e = error(b"a,b\n1,2\n", kinds={"a": "integer"})
    assert "Unknown kind" in e.what and "numeric" in e.todo


def test_message_has_all_three_parts():
    e = error(b"a,b\n1,2\n3,4,5\n")
    assert e.message == (
        "data.csv, line 3: Line 3 has 3 fields but the header has 2. Give every row 2 fields "
        "separated by commas; put a field in double quotes if it contains a comma."
    )


def test_trailing_delimiter_on_header_only_is_forgiven():
    table = read_bytes(b"a,b,\n1,2\n3,4\n", "data.csv")
    assert table.columns == ["a", "b"]


def test_trailing_delimiter_on_every_row_is_forgiven():
    table = read_bytes(b"a;b\n1;2;\n3;4;\n", "data.csv")
    assert table.frame["b"].tolist() == [2.0, 4.0]
    assert any("extra delimiter" in n for n in table.notes)


def test_trailing_delimiter_on_some_rows_is_ragged():
    e = error(b"a;b\n1;2\n3;4;\n5;6\n")
    assert e.where == "data.csv, line 3"
    assert "separated by semicolons" in e.todo
