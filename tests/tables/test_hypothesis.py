"""Property tests: random small tables written as CSV read back as pandas reads them.

Reference: pandas.read_csv with the delimiter given explicitly (and the same extra missing
markers), normalised by the documented rules: missing markers and blank text are missing after
trimming spaces, yes/no are booleans, ISO dates are dates. Any outcome other than an equal
table or an InputError is a failure. Example counts come from the profiles in tests/conftest.py.
"""

from __future__ import annotations

import csv
import io
import math

import pandas as pd
from hypothesis import assume, event, given
from hypothesis import strategies as st
from pandas._libs.parsers import STR_NA_VALUES

from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes
from rankscope.tables.text import FALSE_WORDS, MISSING_MARKERS, TRUE_WORDS

EXTRA_MARKERS = [m for m in MISSING_MARKERS if m not in STR_NA_VALUES]
DELIMS = [",", ";", "\t", "|"]
QUOTING = [csv.QUOTE_MINIMAL, csv.QUOTE_ALL, csv.QUOTE_NONNUMERIC, csv.QUOTE_NONE]
LETTERS = "abcxyzABNaEeéü _-.?'\",;|\t\n"

names = st.text(alphabet="abcdefghxyz_0123456789", min_size=1, max_size=5)
numbers = st.one_of(
    st.integers(-(10**6), 10**6),
    st.floats(allow_nan=False, allow_infinity=False, width=64),
)
words = st.one_of(
    st.text(alphabet=LETTERS, min_size=1, max_size=6),
    st.sampled_from(["NA", "n/a", "null", "-", ".", " ", "yes", "No", "TRUE", "false"]),
)
dates = st.dates(pd.Timestamp("1900-01-01").date(), pd.Timestamp("2200-12-31").date()).map(
    lambda d: d.isoformat()
)
missing = st.none()
cell_kinds = {
    "number": st.one_of(numbers, missing),
    "word": st.one_of(words, missing),
    "bool": st.one_of(st.booleans(), missing),
    "date": st.one_of(dates, missing),
    "mixed": st.one_of(numbers, words, st.booleans(), dates, missing),
}


@st.composite
def frames(draw):
    ncols = draw(st.sampled_from([1, 2, 2, 3, 3, 4]))
    nrows = draw(st.integers(0, 6))
    cols = {}
    for _ in range(ncols):
        kind = draw(st.sampled_from(sorted(cell_kinds)))
        cols[draw(names)] = draw(st.lists(cell_kinds[kind], min_size=nrows, max_size=nrows))
    return pd.DataFrame(cols, dtype=object) if cols else pd.DataFrame()


def expected(value, kind: str):
    """What the reader should hold for a value pandas read, by the documented rules."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if isinstance(value, str) and value.strip() in MISSING_MARKERS:
        return None
    if kind == "numeric":
        return float(value)
    if kind == "boolean":
        if isinstance(value, bool):
            return value
        word = value.strip().lower()
        assert word in TRUE_WORDS + FALSE_WORDS
        return word in TRUE_WORDS
    if kind == "date":
        return pd.Timestamp(value)
    return str(value)


def ours(value):
    return None if pd.isna(value) else value


@given(
    df=frames(),
    delim=st.sampled_from(DELIMS),
    quoting=st.sampled_from(QUOTING),
    encoding=st.sampled_from(["utf-8", "utf-8-sig", "latin-1"]),
)
def test_random_csv_reads_like_pandas(df, delim, quoting, encoding):
    if quoting == csv.QUOTE_NONE:
        specials = (delim, '"', "\n")
        assume(
            not any(
                isinstance(v, str) and any(s in v for s in specials) for v in df.to_numpy().ravel()
            )
        )
    # reference writer: pandas.DataFrame.to_csv
    try:
        text = df.to_csv(index=False, sep=delim, quoting=quoting, lineterminator="\n")
    except csv.Error:  # the writer refuses some tables without quoting
        assume(False)
    data = text.encode(encoding)
    if encoding == "utf-8-sig":
        data = b"\xef\xbb\xbf" + text.encode("utf-8")
    try:
        table = read_bytes(data, "random.csv")
    except InputError as e:
        assert e.what and e.todo
        event("InputError: " + e.what.split("'")[0][:25])
        return
    event("read")
    # reference reader: pandas.read_csv with the explicit delimiter
    ref = pd.read_csv(
        io.BytesIO(data),
        sep=delim,
        encoding="utf-8-sig" if encoding != "latin-1" else "latin-1",
        na_values=EXTRA_MARKERS,
    )
    assert table.columns == list(ref.columns)
    assert table.n_rows == len(ref)
    for name in table.columns:
        kind = table.kinds[name]
        got = [ours(v) for v in table.frame[name].tolist()]
        want = [expected(v, kind) for v in ref[name].astype(object).tolist()]
        assert got == want, (name, kind)
        if pd.api.types.is_float_dtype(ref[name]) or pd.api.types.is_integer_dtype(ref[name]):
            assert kind == "numeric"
        if pd.api.types.is_bool_dtype(ref[name]):
            assert kind == "boolean"


@given(
    data=st.binary(max_size=400),
    ext=st.sampled_from([".csv", ".tsv", ".gz", ".parquet", ".xlsx", ""]),
)
def test_arbitrary_bytes_never_crash(data, ext):
    try:
        read_bytes(data, "file" + ext)
    except InputError as e:
        assert e.what


@given(
    text=st.text(alphabet='ab1.,;\t|"\n\r -NAé', max_size=120),
)
def test_arbitrary_text_never_crashes(text):
    try:
        read_bytes(text.encode("utf-8"), "file.csv")
    except InputError as e:
        assert e.what
