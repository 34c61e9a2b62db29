"""Line numbers of CSV rows (Table.frame.index and the 'line N' of messages) in big and odd files.

Reference: Python's csv module reading the same bytes; a record starts on the line after the
last one the reader had consumed (reader.line_num; header = line 1; blank lines skipped). The
reader finds lines from where quotes and line ends are (without the csv module) when quotes
open fields only, and reads big files into anonymous memory (read.BIG_FILE): both are checked
against the reference here, on files larger than one parse block (1 MB).
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from rankscope.tables import delimited, read
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes, read_table


def csv_lines(data: bytes, delimiter: str = ",") -> list[int]:
    """Reference: the line each non-blank data record starts on, by Python's csv module."""
    reader = csv.reader(io.StringIO(data.decode("utf-8"), newline=""), delimiter=delimiter)
    starts, done = [], 0
    for rec in reader:
        if rec:
            starts.append(done + 1)
        done = reader.line_num
    return starts[1:]


def quoted_file(n: int, eol: str = "\n", bad_at: int | None = None) -> bytes:
    """n rows: an id, a note that is sometimes quoted over several lines (with \\n, \\r\\n or a
    doubled quote in it), a number; blank lines between some rows; 'oops' as the number of
    row bad_at."""
    out = [f"id,note,y{eol}"]
    for i in range(n):
        note = ("plain", '"two\nlines"', '"crlf\r\ninside"', '"say ""hi"""', '""')[i % 5]
        y = "oops" if i == bad_at else f"{i * 0.25}"
        out.append(f"{i},{note},{y}{eol}")
        if i % 13 == 0:
            out.append(eol)
    return "".join(out).encode()


@pytest.fixture(params=["bytes", "memory"])
def big_files_in_memory(request, monkeypatch):
    """Read files as bytes (the default below read.BIG_FILE) or through anonymous memory."""
    if request.param == "memory":
        monkeypatch.setattr(read, "BIG_FILE", 1)
    return request.param


def test_bad_cell_in_big_plain_file_names_its_line(tmp_path, big_files_in_memory):
    n, bad = 200_000, 187_654
    rows = [f"{i},{i % 7},{i * 0.5}\n" for i in range(n)]
    rows[bad] = f"{bad},{bad % 7},oops\n"
    path = tmp_path / "big.csv"
    path.write_text("id,g,y\n" + "".join(rows))
    assert path.stat().st_size > 2_000_000  # several parse blocks
    with pytest.raises(InputError) as info:
        read_table(path)
    assert info.value.where == f"{path}, line {bad + 2}, column 'y'"
    assert csv_lines(path.read_bytes())[bad] == bad + 2
    assert "1 cell holds other text: 'oops'" in info.value.what


@pytest.mark.parametrize("eol", ["\n", "\r\n"])
def test_bad_cell_after_quoted_newlines_names_its_line(tmp_path, eol, big_files_in_memory):
    n, bad = 60_000, 59_321
    data = quoted_file(n, eol, bad_at=bad)
    path = tmp_path / "quoted.csv"
    path.write_bytes(data)
    assert len(data) > 1_200_000  # more than one parse block
    want = csv_lines(data)[bad]
    assert want > bad + 2  # the quoted newlines and blank lines moved it down
    with pytest.raises(InputError) as info:
        read_table(path)
    assert info.value.where == f"{path}, line {want}, column 'y'"


@pytest.mark.parametrize("eol", ["\n", "\r\n", "\r"])
def test_index_of_quoted_file_is_the_csv_modules(tmp_path, eol, big_files_in_memory):
    data = quoted_file(30_000, eol)
    path = tmp_path / "quoted.csv"
    path.write_bytes(data)
    table = read_table(path)
    assert table.frame.index.name == "line"
    assert table.frame.index.tolist() == csv_lines(data)
    assert table.n_rows == 30_000


@pytest.mark.parametrize(
    "data",
    [
        b'a,b\n1,x"y\n2,"p\nq"\n3,z\n',  # a quote inside an unquoted field: the csv module's way
        b'a,b\n1, "p"\n2,"x\ny"\n3,z\n',  # a space before a quote: text, not a quoted field
        b'a,b\r1,"p\rq"\r\r2,z\r',  # old Mac line ends, one inside quotes
        b'\n\na,b\n1,"x"\n\n2,y',  # blank lines first, no line end at the end
        b'a,b\n1,""""\n2,"""\n"""\n3,"a""\n""b"\n',  # doubled quotes next to line ends
        b'a;b\n1;"x\n;y"\n2;z\n',  # another delimiter inside quotes
    ],
)
def test_odd_files_number_lines_like_the_csv_module(data):
    delimiter = ";" if b";" in data.split(b"\n")[0] else ","
    table = read_bytes(data, "odd.csv")
    assert table.frame.index.tolist() == csv_lines(data, delimiter)


def test_line_starts_leave_quotes_inside_fields_to_the_csv_module():
    assert delimited._line_starts(b'a,b\n1,x"y\n2,"p\nq"\n', 0, ",") is None
    found = delimited._line_starts(b'a,b\n1,"x,""y"""\n\n2,"p\r\nq"\n3,z', 0, ",")
    assert found.tolist() == [1, 2, 4, 6]


@given(
    rows=st.lists(
        st.tuples(st.integers(0, 99), st.text(alphabet='ab ,"\n\r', min_size=1, max_size=6),
                  st.booleans()),
        min_size=1, max_size=12,
    ),
    eol=st.sampled_from(["\n", "\r\n", "\r"]),
)
def test_random_quoted_text_numbers_lines_like_the_csv_module(rows, eol):
    out = io.StringIO(newline="")
    writer = csv.writer(out, lineterminator=eol)
    writer.writerow(["n", "note"])
    for n, note, blank_after in rows:
        writer.writerow([n, "t" + note])  # text starts with a letter: the column stays text
        if blank_after:
            out.write(eol)
    data = out.getvalue().encode()
    try:
        table = read_bytes(data, "random.csv")
    except InputError as e:  # e.g. a cell of spaces only on a line of its own
        assert e.what
        return
    assert table.frame.index.tolist() == csv_lines(data)


def test_many_categories_after_the_first_block_are_all_kept(tmp_path):
    """A text column with few values at first and thousands later (more than the reader lets
    pyarrow dictionary-encode) gets every value as a category, sorted; markers are missing."""
    rng = np.random.default_rng(3)
    n = 120_000
    labels = [f"g{k}" for k in rng.integers(0, 4, n)]
    late = n - 5_000
    labels[late:] = [f"id{k:05d}" for k in range(n - late)]
    labels[10] = " NA "
    labels[-1] = "n/a"
    lines = "".join(f"{i},{g}\n" for i, g in enumerate(labels))
    path = tmp_path / "cats.csv"
    path.write_text("x,g\n" + lines)
    table = read_table(path)
    assert table.kinds["g"] == "categorical"
    want = sorted(set(labels) - {" NA ", "n/a"})
    assert list(table.frame["g"].cat.categories) == want
    assert table.frame["g"].isna().sum() == 2
    assert table.frame["g"].iloc[11] == labels[11]


def test_long_cell_in_a_few_valued_column_is_refused_with_its_line():
    rows = "".join(f"{i},a\n" for i in range(50))
    data = f"x,g\n{rows}50,{'b' * 1_000_001}\n51,a\n".encode()
    with pytest.raises(InputError) as info:
        read_bytes(data, "long.csv")
    assert info.value.where == "long.csv, line 52, column 'g'"


@pytest.mark.parametrize("told", [-10, 10])
def test_a_file_that_changed_size_since_its_size_was_taken_is_read_as_it_is(tmp_path, told,
                                                                              monkeypatch):
    monkeypatch.setattr(read, "BIG_FILE", 1)
    path = tmp_path / "t.csv"
    path.write_bytes(b"a,b\n" + b"1,2\n" * 100)
    got = read._load(path, path.stat().st_size + told)
    assert bytes(got) == path.read_bytes()
