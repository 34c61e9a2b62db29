"""The plain-CSV path (plain.read_plain, pandas' C reader) gives the Table the pyarrow path gives.

References: the pyarrow path of the same reader (delimited.read_text, read.PLAIN_FROM raised
out of reach) on the same bytes: kinds, values (float64 bits, NaN included, except the sign
of a zero in the one case plain.py names), line numbers, notes, or the same message for a bad
file; and pandas.read_csv and
pyarrow.csv.read_csv themselves for the number columns of a file big enough for pandas to
parse in threads (its parallel read starts at 5 MiB).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.csv as pacsv
import pytest
from hypothesis import event, given
from hypothesis import strategies as st

from rankscope.tables import plain, read
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_table

# Cells that read alike or not at all in the two parsers' eyes: numbers in many spellings,
# missing markers, words pyarrow reads as numbers ('NAN') or integers ('0x10'), dates, times,
# true/false words, text, quotes and spaces.
NUMBERS = ["0", "1", "-0", "+1", "007", "2.5", "-0.0", "1e5", "1E+05", ".5", "5.", "1e-400",
           "0.1000000000000000055511151231257827", "9007199254740993", "9223372036854775808",
           "18446744073709551616", " 1", "2 ", "\t3"]
ODD = ["inf", "-Infinity", "1e500", "NAN", "Nan", "0x10", "1_000", "1d5", "1e", "abc", "١"]
MISSING = ["", "NA", "nan", "-", ".", "?", "NULL", " NA", "N/A"]
WORDS = ["true", "False", "TRUE", "yes", "no", "x", "Home Office", "P001", "é", "a;b", "a|b"]
DATES = ["2020-01-01", "2020-02-30", "2020-01-01 10:00", "2020-01-01T10", "12:34:56",
         "2020-01-01T10:00:00+02:00"]
QUOTED = ['"q"', 'a"b', '"x,y"']
POOLS = {"number": NUMBERS, "odd": NUMBERS + ODD, "word": WORDS, "bool": WORDS[:5],
         "date": DATES[:2], "mixed": NUMBERS + ODD + WORDS + DATES + QUOTED}


def read_both(path: Path, **kw):
    """(plain path's Table or message, pyarrow path's, whether the plain path answered)."""
    answered = []
    real = plain.read_plain

    def spy(*a, **k):
        raw = real(*a, **k)
        answered.append(raw is not None)
        return raw

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(read, "PLAIN_FROM", 0)
        mp.setattr(plain, "read_plain", spy)
        fast = _outcome(path, kw)
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(read, "PLAIN_FROM", 1 << 62)
        slow = _outcome(path, kw)
    return fast, slow, bool(answered and answered[0])


def _outcome(path: Path, kw):
    try:
        return read_table(path, **kw)
    except InputError as e:
        return e.message


def assert_same(a, b) -> None:
    if isinstance(a, str) or isinstance(b, str):
        assert a == b
        return
    assert a.kinds == b.kinds
    assert a.notes == b.notes
    assert a.frame.index.equals(b.frame.index) and a.frame.index.name == b.frame.index.name
    for name in a.frame.columns:
        x, y = a.frame[name], b.frame[name]
        assert x.dtype == y.dtype, name
        if x.dtype == np.float64:
            u, v = x.to_numpy(), y.to_numpy()
            assert np.array_equal(u, v, equal_nan=True), name
            nonzero = u != 0  # the one known difference: see plain.py on '-0'
            assert np.array_equal(u[nonzero].view(np.int64), v[nonzero].view(np.int64)), name
        else:
            assert x.equals(y), name


@st.composite
def csv_files(draw):
    """Tidy files (numbers, words or true/false words, now and then an odd cell) half the
    time, which the plain path mostly answers; else any pools and odd rows and names."""
    tidy = draw(st.booleans())
    width = draw(st.integers(2, 4))
    names = [f"c{j}" for j in range(width)]
    if not tidy and draw(st.integers(0, 4)) == 0:  # a blank, repeated or quoted name
        names[-1] = draw(st.sampled_from(["", "c0", '"c"', " c9 "]))
    kinds = ["number", "word", "bool"] if tidy else sorted(POOLS)
    pools = [POOLS[draw(st.sampled_from(kinds))] for _ in names]
    rare = ODD + DATES + QUOTED
    rows = []
    for _ in range(draw(st.integers(1, 12))):
        cells = [draw(st.sampled_from(pool + MISSING[:3])) for pool in pools]
        if tidy and draw(st.integers(0, 9)) == 0:
            cells[draw(st.integers(0, width - 1))] = draw(st.sampled_from(rare + MISSING))
        odd = 9 if tidy else draw(st.integers(0, 9))
        if odd == 0:
            cells = cells[:-1]  # a short row
        elif odd == 1:
            cells = [*cells, "9"]  # a long row
        elif odd == 2:
            cells = []  # a blank line
        rows.append(",".join(cells))
    eol = draw(st.sampled_from(["\n", "\r\n"]))
    bom = draw(st.sampled_from(["", "\ufeff"]))
    return (bom + eol.join([",".join(names), *rows]) + draw(st.sampled_from(["", eol]))).encode()


@given(csv_files())
def test_plain_path_reads_as_the_pyarrow_path(data):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "t.csv"
        path.write_bytes(data)
        fast, slow, answered = read_both(path)
    event(f"plain path answered: {answered}")
    assert_same(fast, slow)


def frame(n: int, seed: int = 0) -> pd.DataFrame:
    """Random columns: floats at full precision (1% missing in one), integers, words."""
    rng = np.random.default_rng(seed)
    out = pd.DataFrame({f"x{i}": rng.normal(i, 1 + i, n) for i in range(4)})
    out.loc[rng.random(n) < 0.01, "x3"] = np.nan
    out["k"] = rng.integers(0, 90, n)
    out["region"] = rng.choice(["north", "south", "Home Office"], n)
    out["member"] = rng.choice(["yes", "no"], n)
    return out


@pytest.fixture(scope="module")
def big(tmp_path_factory) -> tuple[Path, str]:
    """A plain CSV of about 9 MB (pandas parses it in threads), and its text."""
    path = tmp_path_factory.mktemp("plain") / "big.csv"
    text = frame(110_000).to_csv(index=False)
    path.write_text(text)
    assert path.stat().st_size > 8_000_000
    return path, text


def test_big_plain_file_takes_the_plain_path_and_matches_pandas_and_pyarrow(big):
    path, _ = big
    fast, slow, answered = read_both(path)
    assert answered
    assert_same(fast, slow)
    assert fast.kinds == {"x0": "numeric", "x1": "numeric", "x2": "numeric", "x3": "numeric",
                          "k": "numeric", "region": "categorical", "member": "boolean"}
    by_pandas, by_arrow = pd.read_csv(path), pacsv.read_csv(path)
    for name in ["x0", "x1", "x2", "x3", "k"]:
        ours = fast.frame[name].to_numpy()
        np.testing.assert_array_equal(ours, by_pandas[name].to_numpy(np.float64))
        np.testing.assert_array_equal(ours, by_arrow[name].to_numpy().astype(np.float64))
    assert list(fast.frame.index[:2]) == [2, 3] and fast.frame.index[-1] == len(by_pandas) + 1


@pytest.mark.parametrize(
    ("change", "declined"),
    [
        ("short row", True),  # pandas would fill it with missing cells
        ("blank line", True),
        ("long row", True),  # pandas refuses it; the pyarrow path words the message
        ("quote", True),
        ("NAN", True),  # pyarrow reads it as a number, pandas as text
        ("date", False),  # a date among words is text to both
        ("inf", False),  # both read it as infinite: the same message
        ("text", False),  # text among numbers: the same message, same line
        ("fraction", False),  # a fraction among whole numbers: pyarrow's first block said int
        ("empty last", False),  # missing cells in the last column: delimiters counted
    ],
)
def test_big_file_with_a_late_oddity_reads_as_the_pyarrow_path(big, tmp_path, change, declined):
    _, text = big
    lines = text.splitlines(keepends=True)
    at = len(lines) - 7  # past the sample and pandas' first chunks
    row = lines[at].rstrip("\n").split(",")
    if change == "short row":
        row = row[:-1]
    elif change == "blank line":
        lines.insert(at, "\n")
    elif change == "long row":
        row.append("1")
    elif change == "quote":
        row[5] = '"north"'
    elif change in ("NAN", "inf", "text", "fraction"):
        row[4] = {"NAN": "NAN", "inf": "inf", "text": "oops", "fraction": "2.5"}[change]
    elif change == "date":
        row[5] = "2020-01-01"
    elif change == "empty last":
        row[6] = ""
    lines[at + (change == "blank line")] = ",".join(row) + "\n"
    path = tmp_path / "odd.csv"
    path.write_text("".join(lines))
    fast, slow, answered = read_both(path)
    assert answered is not declined
    assert_same(fast, slow)
    if change in ("inf", "text"):
        assert f"line {at + 1}" in fast and "column 'k'" in fast


def test_declared_kinds_on_the_plain_path(big):
    path, _ = big
    fast, slow, answered = read_both(path, kinds={"k": "categorical", "member": "categorical"})
    assert answered
    assert_same(fast, slow)
    assert fast.kinds["k"] == "categorical"


def test_a_forked_child_hashes_text_with_its_own_threads(big):
    """A pool made before a fork has no threads in the child; the child must not wait on it."""
    import multiprocessing

    path, _ = big
    read_table(path)  # the parent's pool exists now
    ctx = multiprocessing.get_context("fork")
    with ctx.Pool(1) as pool:
        kinds = pool.apply_async(_kinds, (path,)).get(timeout=120)
    assert kinds["region"] == "categorical"


def _kinds(path: Path) -> dict[str, str]:
    return read_table(path).kinds


def test_text_with_new_values_in_later_chunks_and_missing_cells(tmp_path):
    """pandas' chunks of a text column are looked up in the first chunk's values; a chunk with
    values of its own is hashed itself. Reference: the pyarrow path on the same file."""
    rng = np.random.default_rng(1)
    n = 400_000
    table = pd.DataFrame({"x": rng.normal(size=n), "t": [f"v{i // 20_000}" for i in range(n)],
                          "u": rng.choice(["a", "b", ""], n)})
    path = tmp_path / "levels.csv"
    table.to_csv(path, index=False)
    fast, slow, answered = read_both(path)
    assert answered
    assert_same(fast, slow)
    assert len(fast.frame["t"].cat.categories) == 20
    assert fast.frame["u"].isna().sum() == (table["u"] == "").sum()


@pytest.mark.parametrize("numbers_first", [True, False])
def test_numbers_then_words_keep_their_text(tmp_path, numbers_first):
    """pandas' chunks of one column may read numbers in some and text in others; the column's
    categories must still be the cells' text as written ('007', '+1', '1.50'), as pyarrow
    gives them. Reference: the pyarrow path on the same file."""
    rng = np.random.default_rng(2)
    n = 400_000
    numbers = rng.choice(["007", "+1", "1.50"], int(n * 0.6))
    words = rng.choice(["alpha", "beta"], n - len(numbers))
    parts = [numbers, words] if numbers_first else [words, numbers]
    path = tmp_path / "mixed.csv"
    pd.DataFrame({"x": rng.normal(size=n), "c": np.concatenate(parts)}).to_csv(path, index=False)
    fast, slow, answered = read_both(path)
    # Numbers first: pandas reads the column again as text. Words first: pandas mixes text
    # and numbers in one object column, which the plain path declines.
    assert answered is numbers_first
    assert_same(fast, slow)
    assert list(fast.frame["c"].cat.categories) == ["+1", "007", "1.50", "alpha", "beta"]


def test_an_older_pandas_is_not_used(big, monkeypatch):
    """Before pandas 3.1 its default float parser could differ from pyarrow's in the last bit,
    and it read in one thread: the plain path declines."""
    path, _ = big
    head = path.read_bytes()[:70_000]
    assert plain.read_plain(path, head, "big.csv", ".csv") is not None
    monkeypatch.setattr(plain, "PANDAS_FROM", (99, 0))
    assert plain.read_plain(path, head, "big.csv", ".csv") is None
    assert plain._version("3.2.0.dev0+12") == (3, 2) and plain._version("2.2.3") < (3, 1)
