"""Round trips: a DataFrame written by a reference writer, read back with read_table."""

from __future__ import annotations

import gzip

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from rankscope.tables.read import read_bytes, read_table


@pytest.fixture
def df() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "y": [1.5, -2.25, 3.0, np.nan, 5.125, 6.0],
            "count": [1, 2, 3, 4, 5, 7],
            "region": ["north", "south", "north", "east", None, "south"],
            "treated": [True, False, True, True, False, None],
            "day": pd.to_datetime(
                ["2024-01-01", "2024-01-02", None, "2024-02-29", "2024-03-01", "2024-03-02"]
            ),
        }
    )


KINDS = {
    "y": "numeric",
    "count": "numeric",
    "region": "categorical",
    "treated": "boolean",
    "day": "date",
}


def plain(values) -> list:
    """Values as a list with every kind of missing as None."""
    return [None if pd.isna(v) else v for v in values]


def check(table, df: pd.DataFrame) -> None:
    assert table.kinds == KINDS
    f = table.frame
    assert list(f.columns) == list(df.columns)
    np.testing.assert_array_equal(f["y"].to_numpy(), df["y"].to_numpy())
    np.testing.assert_array_equal(f["count"].to_numpy(), df["count"].to_numpy(dtype=float))
    assert f["region"].dtype == "category"
    assert list(f["region"].cat.categories) == ["east", "north", "south"]
    assert plain(f["region"]) == plain(df["region"])
    assert str(f["treated"].dtype) == "boolean"
    assert f["treated"].tolist()[:5] == [True, False, True, True, False]
    assert pd.isna(f["treated"].iloc[5])
    assert str(f["day"].dtype) == "datetime64[ns]"
    pd.testing.assert_series_equal(
        f["day"].reset_index(drop=True), df["day"].astype("datetime64[ns]"), check_names=False
    )


def test_csv(tmp_path, df):
    path = tmp_path / "t.csv"
    df.to_csv(path, index=False)  # reference writer: pandas.DataFrame.to_csv
    table = read_table(path)
    check(table, df)
    assert table.frame.index.name == "line"
    assert list(table.frame.index) == [2, 3, 4, 5, 6, 7]
    assert table.source == str(path)


def test_tsv(tmp_path, df):
    path = tmp_path / "t.tsv"
    df.to_csv(path, index=False, sep="\t")  # reference writer: pandas.DataFrame.to_csv
    check(read_table(path), df)


@pytest.mark.parametrize("sep", [";", "|"])
def test_other_delimiters(tmp_path, df, sep):
    path = tmp_path / "t.csv"
    df.to_csv(path, index=False, sep=sep)  # reference writer: pandas.DataFrame.to_csv
    check(read_table(path), df)


def test_semicolon_decimal_comma(tmp_path, df):
    path = tmp_path / "t.csv"
    df.to_csv(path, index=False, sep=";", decimal=",")  # reference: pandas, European style
    table = read_table(path)
    check(table, df)
    assert any("decimal mark" in n for n in table.notes)


def test_decimal_comma_with_thousands(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("a;b\n1.234,5;1\n2,5;2\n-3,75;3\n")
    table = read_table(path)
    assert table.frame["a"].tolist() == [1234.5, 2.5, -3.75]


def test_gzip(tmp_path, df):
    path = tmp_path / "t.csv.gz"
    df.to_csv(path, index=False, compression="gzip")  # reference writer: pandas, gzip
    check(read_table(path), df)


def test_gzip_tsv_via_bytes(df):
    data = gzip.compress(df.to_csv(index=False, sep="\t").encode())  # reference: pandas + gzip
    check(read_bytes(data, "upload.tsv.gz"), df)


def test_utf8_bom_and_unicode(tmp_path, df):
    df = df.assign(region=df["region"].replace({"north": "nörd", "east": "øst"}))
    path = tmp_path / "t.csv"
    df.to_csv(path, index=False, encoding="utf-8-sig")  # reference: pandas with BOM
    table = read_table(path)
    assert table.columns[0] == "y"
    assert set(table.frame["region"].cat.categories) == {"nörd", "øst", "south"}


def test_latin1_fallback(tmp_path):
    path = tmp_path / "t.csv"
    pd.DataFrame({"city": ["Köln", "Zürich", "Málaga"], "n": [1, 2, 3]}).to_csv(
        path, index=False, encoding="latin-1"
    )  # reference writer: pandas, Latin-1
    table = read_table(path)
    assert plain(table.frame["city"]) == ["Köln", "Zürich", "Málaga"]
    assert any("not UTF-8" in n for n in table.notes)


def test_quoted_newlines_keep_editor_lines(tmp_path):
    path = tmp_path / "t.csv"
    pd.DataFrame({"note": ["one\nline two", "plain", "x,y"], "v": [1.0, 2.0, 3.0]}).to_csv(
        path, index=False
    )  # reference writer: pandas quotes fields with newlines and commas
    table = read_table(path)
    assert plain(table.frame["note"]) == ["one\nline two", "plain", "x,y"]
    assert list(table.frame.index) == [2, 4, 5]


def test_blank_lines_skipped_and_counted(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("a,b\n1,2\n\n3,4\n\n\n5,6\n\n")
    table = read_table(path)
    assert table.frame["a"].tolist() == [1.0, 3.0, 5.0]
    assert list(table.frame.index) == [2, 4, 7]


def test_crlf_line_endings(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes(b"a,b\r\n1,x\r\n2,y\r\n")
    table = read_table(path)
    assert plain(table.frame["b"]) == ["x", "y"]


def test_parquet(tmp_path, df):
    path = tmp_path / "t.parquet"
    df.to_parquet(path, index=False)  # reference writer: pandas -> pyarrow.parquet
    table = read_table(path)
    check(table, df)
    assert table.frame.index.name == "record"


def test_parquet_types_respected(tmp_path):
    path = tmp_path / "t.parquet"
    tbl = pa.table(
        {
            "code": pa.array(["1", "2", "2"]),  # text in the file stays categorical
            "level": pa.array(["a", "b", "a"]).dictionary_encode(),
            "dec": pa.array([1, 2, 3], pa.decimal128(5, 2)),
            "tags": pa.array([[1], [2], []], pa.list_(pa.int64())),
        }
    )
    pq.write_table(tbl, path)  # reference writer: pyarrow.parquet
    table = read_table(path)
    assert table.kinds == {"code": "categorical", "level": "categorical", "dec": "numeric"}
    assert any("'tags'" in n and "left out" in n for n in table.notes)


def test_xlsx_first_sheet_by_default(tmp_path, df):
    path = tmp_path / "t.xlsx"
    with pd.ExcelWriter(path) as w:  # reference writer: pandas -> openpyxl
        df.to_excel(w, sheet_name="Data", index=False)
        df.head(2).to_excel(w, sheet_name="Other", index=False)
    table = read_table(path)
    check(table, df)
    assert table.frame.index.name == "row"
    assert list(table.frame.index) == [2, 3, 4, 5, 6, 7]
    assert any("first sheet" in n for n in table.notes)


@pytest.mark.parametrize("sheet", ["Other", 1, "1"])
def test_xlsx_chosen_sheet(tmp_path, df, sheet):
    path = tmp_path / "t.xlsx"
    with pd.ExcelWriter(path) as w:  # reference writer: pandas -> openpyxl
        df.head(2).to_excel(w, sheet_name="Data", index=False)
        df.to_excel(w, sheet_name="Other", index=False)
    table = read_table(path, sheet=sheet)
    check(table, df)
    assert "sheet 'Other'" in table.source


def test_xlsx_text_cells_follow_text_rules(tmp_path):
    path = tmp_path / "t.xlsx"
    pd.DataFrame({"x": [1.5, "n/a", 3, None], "g": ["a", "b", "a", "b"]}).to_excel(
        path, index=False
    )  # reference writer: pandas -> openpyxl; "n/a" is a text cell among numbers
    table = read_table(path)
    assert table.kinds == {"x": "numeric", "g": "categorical"}
    assert np.isnan(table.frame["x"].iloc[1])


def test_read_bytes_uses_name_in_messages(df):
    table = read_bytes(df.to_csv(index=False).encode(), "upload.csv", name="my data.csv")
    assert table.source == "my data.csv"
    check(table, df)


def test_xlsx_content_with_csv_name(tmp_path, df):
    path = tmp_path / "t.xlsx"
    df.to_excel(path, index=False)  # reference writer: pandas -> openpyxl
    table = read_bytes(path.read_bytes(), "export.csv")
    check(table, df)
    assert any("Excel workbook although" in n for n in table.notes)


def test_all_empty_row_is_a_row_of_missing(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("a,b\n1,2\n,\n3,4\n")
    table = read_table(path)
    assert table.n_rows == 3
    assert list(table.frame.index) == [2, 3, 4]
    assert table.frame["a"].isna().tolist() == [False, True, False]
