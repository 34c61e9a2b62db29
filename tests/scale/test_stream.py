"""Streaming a file block by block gives the in-memory analysis; progress, cancel, bad input.

Every equality check names its reference beside it.
"""

from __future__ import annotations

import gzip
import threading
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from rankscope.scale import stream_source
from rankscope.scale.stream import Cancelled, stream_factor
from rankscope.tables.errors import InputError
from tests.scale.stream_compare import differences, in_memory, streamed

N = 1800
BLOCK = 250  # rows per block: every file below spans several blocks


def frame(seed: int = 0, n: int = N) -> pd.DataFrame:
    """Numeric columns with a planted exact relation (s = a + 2b - 1), a near one (t),
    a categorical with a level that occurs only near the end, gaps in m, a response."""
    rng = np.random.default_rng(seed)
    a = rng.normal(4.0, 2.0, n)
    b = rng.normal(-1.0, 3.0, n)
    t = 0.5 * a - b + rng.normal(0, 0.05, n)
    g = rng.choice(["north", "south", "east"], n)
    g[-40:] = rng.choice(["west", "north"], 40)  # "west" first appears in the last block
    m = rng.normal(10, 2, n)
    m[rng.choice(n, 90, replace=False)] = np.nan
    y = 1.5 * a - 2 * b + 0.3 * m + rng.normal(0, 1, n)
    return pd.DataFrame({"a": a, "b": b, "s": a + 2 * b - 1, "t": t, "g": g, "m": m,
                         "pos": rng.uniform(1, 9, n), "y": y})


@pytest.fixture(scope="module")
def csv_path(tmp_path_factory) -> Path:
    p = tmp_path_factory.mktemp("stream") / "planted.csv"
    frame().to_csv(p, index=False)
    return p


RECIPES = {
    "defaults": [],
    "response": [{"step": "response", "column": "y"}],
    "statistics on the factor": [
        {"step": "response", "column": "y"},
        {"step": "center", "column": "a"},
        {"step": "standardize", "column": "b", "keep": True},
        {"step": "unit_length", "column": "t"},
        {"step": "multiply", "column": "a (centered)", "by": 2.5},
        {"step": "combine", "columns": ["m", "pos"], "method": "mean", "name": "mp"},
    ],
    "row-wise steps": [
        {"step": "response", "column": "y"},
        {"step": "log", "column": "pos", "base": 10},
        {"step": "power", "column": "a", "exponent": 2, "keep": True},
        {"step": "product", "columns": ["b", "t"], "name": "b x t"},
        {"step": "combine", "columns": ["a", "log10(pos)"], "method": "ratio", "name": "a/lp"},
        {"step": "indicators", "column": "g", "reference": "south"},
    ],
    "component, all levels, standardized response": [
        {"step": "response", "column": "y"},
        {"step": "combine", "columns": ["a", "t"], "method": "first_component", "name": "size"},
        {"step": "indicators", "column": "g", "reference": "all"},
        {"step": "standardize", "column": "y"},
        {"step": "drop", "column": "s"},
    ],
    "drop_column policy": [
        {"step": "response", "column": "y"},
        {"step": "missing", "column": "m", "policy": "drop_column"},
        {"step": "intercept", "include": False},
        # Without s: s = a + 2b - 1 puts the constant in the span only implicitly, and the
        # centered VIFs of such a design are rounding noise in any analysis.
        {"step": "drop", "column": "s"},
    ],
    "held-back sum of statistics": [
        {"step": "center", "column": "a"},
        {"step": "standardize", "column": "b"},
        {"step": "combine", "columns": ["a (centered)", "b (standardized)"], "method": "sum",
         "name": "ab"},
        {"step": "multiply", "column": "pos", "by": 0.001, "name": "pos (k)"},
        {"step": "combine", "columns": ["t", "pos (k)"], "method": "difference", "name": "t-p"},
        {"step": "drop", "column": "m"},
        {"step": "restore", "column": "m"},
    ],
}


@pytest.mark.parametrize("name", list(RECIPES))
def test_stream_equals_in_memory(csv_path: Path, name: str) -> None:
    steps = RECIPES[name]
    ref, design = in_memory(csv_path, steps)
    got, info = streamed(csv_path, steps, block_rows=BLOCK)
    assert info.blocks > 3
    # Reference: the in-memory analysis diagnose(build_design(read_table(path), recipe)).
    assert differences(got, ref) == []
    # Reference: the same in-memory build_design: listwise deletion counts and design names.
    assert (info.layout.rows_total, info.layout.rows_used) == (design.rows_total,
                                                               design.rows_used)
    assert info.layout.dropped_by == design.dropped_by
    assert info.groups == design.groups
    assert sorted(info.layout.notes) == sorted(design.notes)


def test_statistic_before_a_row_step_takes_a_second_pass(csv_path: Path) -> None:
    """Center, then square and multiply the centered columns: the classic way to tame a
    polynomial's collinearity. The means must be known before any row is squared."""
    steps = [
        {"step": "response", "column": "y"},
        {"step": "center", "column": "a"},
        {"step": "center", "column": "b"},
        {"step": "power", "column": "a (centered)", "exponent": 2, "keep": True},
        {"step": "product", "columns": ["a (centered)", "b (centered)"], "name": "ab"},
        {"step": "standardize", "column": "ab"},
        {"step": "log", "column": "ab (standardized)", "shift": 50},
    ]
    ref, _ = in_memory(csv_path, steps)
    got, info = streamed(csv_path, steps, block_rows=BLOCK)
    assert info.passes == 3  # means, then the product's spread, then the factor
    # Reference: the in-memory analysis of the same file and recipe.
    assert differences(got, ref) == []


def test_matches_numpy_on_the_raw_arrays(csv_path: Path) -> None:
    """Against numpy alone, not the project's own reader or core."""
    df = frame()
    keep = df["m"].notna().to_numpy()
    X = np.column_stack([np.ones(keep.sum()), df.loc[keep, ["a", "b", "t", "m"]].to_numpy()])
    y = df.loc[keep, "y"].to_numpy()
    steps = [{"step": "response", "column": "y"}, {"step": "drop", "column": "s"},
             {"step": "drop", "column": "g"}, {"step": "drop", "column": "pos"}]
    got, _ = streamed(csv_path, steps, block_rows=BLOCK)
    beta = np.linalg.lstsq(X, y, rcond=None)[0]
    # Reference: numpy.linalg.lstsq on the rows kept.
    assert np.allclose(list(got["fit"]["coefficients"].values()), beta, rtol=1e-10, atol=0)
    # Reference: numpy.linalg.matrix_rank of the same matrix.
    assert got["rank"] == np.linalg.matrix_rank(X)
    Xe = X / np.linalg.norm(X, axis=0)
    # Reference: numpy.linalg.cond of the unit-length columns.
    assert got["condition_number"]["equilibrated"] == pytest.approx(np.linalg.cond(Xe), rel=1e-9)


def test_parquet_and_gzip_give_the_same_as_in_memory(tmp_path: Path) -> None:
    df = frame(seed=3)
    pq_path = tmp_path / "planted.parquet"
    df.to_parquet(pq_path, row_group_size=400)
    gz_path = tmp_path / "planted.csv.gz"
    with gzip.open(gz_path, "wt") as f:
        df.to_csv(f, index=False)
    steps = RECIPES["statistics on the factor"]
    for path in (pq_path, gz_path):
        ref, _ = in_memory(path, steps)
        got, _ = streamed(path, steps, block_rows=BLOCK)
        # Reference: the in-memory analysis of the same file.
        assert differences(got, ref) == [], path.name


def test_text_rules_far_from_the_sample(tmp_path: Path, monkeypatch) -> None:
    """A semicolon file with decimal commas, and cells only the readers' text rules read
    (spaces around a number, a padded missing marker) in the last block, far past a small
    sample: the fast parse meets them, and the column is read again as text."""
    monkeypatch.setattr(stream_source, "SAMPLE_BYTES", 4096)
    df = frame(seed=5, n=900)[["a", "b", "t", "pos"]]
    lines = ["a;b;t;pos"] + [";".join(f"{v:.12g}".replace(".", ",") for v in row)
                           for row in df.to_numpy()]
    lines[-3] = lines[-3].replace(";", "; ", 1)
    parts = lines[-2].split(";")
    parts[2] = "NA "
    lines[-2] = ";".join(parts)
    p = tmp_path / "comma.csv"
    p.write_text("\n".join(lines) + "\n")
    steps = [{"step": "response", "column": "pos"}, {"step": "center", "column": "t"}]
    ref, design = in_memory(p, steps)
    got, info = streamed(p, steps, block_rows=200)
    assert "b" in stream_source.open_source(p).kinds and info.passes == 1
    assert design.rows_used == len(df) - 1
    # Reference: the in-memory analysis (read_table on the whole file).
    assert differences(got, ref) == []
    assert info.layout.rows_used == design.rows_used


def test_kind_steps_and_dates(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    n = 1200
    df = pd.DataFrame({
        "store": rng.integers(1, 6, n), "flag": rng.choice(["yes", "no"], n),
        "day": pd.date_range("2024-01-01", periods=n, freq="h").strftime("%Y-%m-%d %H:%M"),
        "x": rng.normal(size=n), "y": rng.normal(size=n),
    })
    p = tmp_path / "kinds.csv"
    df.to_csv(p, index=False)
    steps = [{"step": "response", "column": "y"},
             {"step": "kind", "column": "store", "to": "categorical"},
             {"step": "kind", "column": "flag", "to": "numeric"}]
    ref, design = in_memory(p, steps)
    got, info = streamed(p, steps, block_rows=150)
    # Reference: the in-memory analysis; the date column is left out with a note there too.
    assert differences(got, ref) == []
    assert sorted(info.layout.notes) == sorted(design.notes)
    steps.append({"step": "kind", "column": "day", "to": "numeric"})
    ref, _ = in_memory(p, steps)
    got, _ = streamed(p, steps, block_rows=150)
    assert differences(got, ref) == []  # Reference: the in-memory analysis.


def test_progress_and_cancel(csv_path: Path) -> None:
    calls: list[tuple[int, int, int]] = []
    stream_factor(csv_path, [], block_rows=BLOCK, progress=lambda *a: calls.append(a))
    rows = [c[0] for c in calls]
    assert rows == sorted(rows) and rows[-1] == N  # N rows were written by pandas
    assert calls[-1][1] == calls[-1][2] == csv_path.stat().st_size  # the file's size on disk
    stop = threading.Event()

    def halt(rows: int, done: int, total: int) -> None:
        stop.set()

    with pytest.raises(Cancelled, match="stopped at row"):
        stream_factor(csv_path, [], block_rows=BLOCK, progress=halt, cancel=stop)


def _error(path: Path, steps: list[dict], **kw) -> InputError:
    with pytest.raises(InputError) as info:
        stream_factor(path, steps, **kw)
    e = info.value
    assert e.what and e.where and e.todo is not None
    return e


def test_bad_input_says_what_where_and_what_to_do(tmp_path: Path, csv_path: Path,
                                                  monkeypatch) -> None:
    monkeypatch.setattr(stream_source, "SAMPLE_BYTES", 4096)  # the bad cells lie past it
    df = frame(seed=9, n=600)
    df["b"] = df["b"].map(lambda v: f"{v:.6f}")
    df.loc[550, "b"] = "twelve"
    p = tmp_path / "late_text.csv"
    df.to_csv(p, index=False)
    e = _error(p, [], block_rows=100)
    assert "row 552" in e.where and "'b'" in e.where  # pandas row 550 + header + 1-based

    e = _error(csv_path, [{"step": "indicators", "column": "g", "reference": "nowhere"}],
               block_rows=BLOCK)
    assert e.where == "recipe step 1 (indicators)" and "nowhere" in e.what

    df = frame(seed=4, n=600)
    df.loc[580, "pos"] = -2.0
    p = tmp_path / "late_negative.csv"
    df.to_csv(p, index=False)
    e = _error(p, [{"step": "log", "column": "pos"}], block_rows=100)
    assert "row 582" in e.where and "positive" in e.what  # file row of pandas row 580

    df["c"] = 3.0
    df.to_csv(p, index=False)
    e = _error(p, [{"step": "standardize", "column": "c"}], block_rows=100)
    assert "no spread" in e.what and e.where == "recipe step 1 (standardize)"

    e = _error(tmp_path / "absent.csv", [])
    assert "does not exist" in e.what
    (tmp_path / "book.xlsx").write_bytes(b"PK\x03\x04" + b"\0" * 64)
    e = _error(tmp_path / "book.xlsx", [])
    assert "CSV" in e.todo


def test_quoted_line_breaks_across_pieces(tmp_path: Path, monkeypatch) -> None:
    """Text values holding line breaks and quotes, with the file cut into pieces of a few
    hundred bytes: a piece must end at a record's end, never inside a quoted value."""
    monkeypatch.setattr(stream_source, "MIN_CHUNK", 300)
    monkeypatch.setattr(stream_source, "SAMPLE_BYTES", 2048)
    rng = np.random.default_rng(13)
    n = 400
    notes = np.array(['plain', 'two\nlines', 'say "hi"\nthen go', 'a, b'])[rng.integers(0, 4, n)]
    df = pd.DataFrame({"x": rng.normal(size=n), "note": notes, "y": rng.normal(size=n)})
    p = tmp_path / "quoted.csv"
    df.to_csv(p, index=False)
    ref, design = in_memory(p, [])
    got, info = streamed(p, [], block_rows=40)
    assert info.blocks > 10
    # Reference: the in-memory analysis (pandas wrote the file; read_table reads it whole).
    assert differences(got, ref) == []
    assert info.groups == design.groups


def test_legacy_and_utf16_text(tmp_path: Path) -> None:
    df = frame(seed=8, n=500)[["a", "b", "y"]].dropna()
    df["place"] = np.where(df["a"] > 4, "Zürich", "Genève")
    for enc in ("cp1252", "utf-16"):
        p = tmp_path / f"{enc}.csv"
        df.to_csv(p, index=False, encoding=enc)
        ref, _ = in_memory(p, [{"step": "response", "column": "y"}])
        got, info = streamed(p, [{"step": "response", "column": "y"}], block_rows=100)
        # Reference: the in-memory analysis of the same file.
        assert differences(got, ref) == [], enc
        assert info.groups == {"place": ["place[Zürich]"]}  # the level names pandas wrote


def test_offsets_cost_no_digits_when_streamed(tmp_path: Path) -> None:
    """A timestamp beside the hours it was built from, and a Kelvin column beside a small
    range: the streamed factor keeps the centred digits the in-memory one keeps."""
    rng = np.random.default_rng(7)
    n = 1500
    hours = rng.uniform(0, 100, n)
    temp = 290.0 + rng.normal(0, 0.01, n)  # 290 K with a spread of 0.01
    other = rng.normal(size=n)
    df = pd.DataFrame({"stamp": 1.7e9 + 3600.0 * hours, "hours": hours, "temp": temp,
                       "other": other + 0.2 * (temp - 290) * 100,
                       "y": 2 * hours + 30 * temp + rng.normal(size=n)})
    path = tmp_path / "offsets.csv"
    df.to_csv(path, index=False, float_format="%.17g")
    steps = [{"step": "response", "column": "y"}]
    ref, _ = in_memory(path, steps)
    got, _ = streamed(path, steps, block_rows=BLOCK)
    # Reference: the in-memory analysis of the same file (textbook: stamp is affine in hours).
    assert [d["column"] for d in ref["dependencies"]] == ["hours"]
    assert differences(got, ref) == []
    # Reference: statsmodels' auxiliary regression for the VIF of temp on [1, stamp, other].
    from statsmodels.stats.outliers_influence import variance_inflation_factor

    X = np.column_stack([np.ones(n), df["stamp"], df["temp"], df["other"]])
    assert np.isclose(got["vif"]["temp"], variance_inflation_factor(X, 2), rtol=1e-9)
