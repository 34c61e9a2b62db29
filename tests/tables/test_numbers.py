"""Numeric columns without pandas: Arrow buffers to float64, first-seen distinct values, and a
Table whose frame is built only when asked for.

References: pyarrow's ChunkedArray.to_numpy (the conversion the buffer reader replaces),
pandas.unique, pandas.read_csv (values and line numbers of the same file).
"""

from __future__ import annotations

import threading

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest

from rankscope.tables.build import _unique
from rankscope.tables.infer import float_values
from rankscope.tables.read import read_table


@pytest.mark.parametrize("seed", range(40))
def test_float_values_match_pyarrow_to_numpy(seed: int) -> None:
    """Random chunks, some with nulls, some sliced at odd offsets (the validity bitmap then
    starts inside a byte), some empty."""
    rng = np.random.default_rng(seed)
    chunks = []
    for _ in range(int(rng.integers(0, 4))):
        n = int(rng.integers(0, 50))
        mask = rng.random(n) < 0.3 if rng.random() < 0.7 else None
        arr = pa.array(rng.standard_normal(n), mask=mask)
        if n > 3 and rng.random() < 0.5:
            start = int(rng.integers(0, n))
            arr = arr.slice(start, int(rng.integers(0, n - start + 1)))
        chunks.append(arr)
    column = pa.chunked_array(chunks, pa.float64())
    got, want = float_values(column), column.to_numpy()
    assert got.dtype == want.dtype == np.float64 and got.shape == want.shape
    assert np.array_equal(got, want, equal_nan=True)
    # One chunk without missing values: a read-only view of Arrow's buffer (as an Array's
    # to_numpy gives it); otherwise a copy of its own.
    single = len([c for c in column.chunks if len(c)]) == 1 and not column.null_count
    assert got.flags.writeable != single


def test_unique_keeps_first_seen_order_like_pandas() -> None:
    rng = np.random.default_rng(3)
    for _ in range(50):
        values = rng.integers(-3, 4, int(rng.integers(1, 40))).astype(float)
        values[rng.random(len(values)) < 0.2] *= -0.0  # signed zeros count as one value
        got, want = _unique(values), pd.unique(values)
        assert np.array_equal(got, want) and np.array_equal(np.signbit(got), np.signbit(want))


def test_a_numeric_file_builds_its_frame_only_when_asked(tmp_path) -> None:
    rng = np.random.default_rng(8)
    X = rng.standard_normal((30, 3))
    lines = ["a,b,y"]
    for i, row in enumerate(X):
        cells = [repr(float(v)) for v in row]
        if i == 4:
            cells[0] = ""
        lines.append(",".join(cells))
        if i == 10:
            lines.append("")  # lines from here on are one more than 2 + row
    path = tmp_path / "numbers.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    assert table.columns == ["a", "b", "y"] and table.n_rows == 30
    assert table.kinds == dict.fromkeys(["a", "b", "y"], "numeric")
    held = table.numbers("a")
    assert held is not None and np.isnan(held[4]) and table.missing("a").sum() == 1
    frame = table.frame
    want = pd.read_csv(path, skip_blank_lines=True)
    assert np.array_equal(frame.to_numpy(), want.to_numpy(), equal_nan=True)
    assert list(frame.dtypes) == [np.float64] * 3
    lines_seen = [2 + i + (i > 10) for i in range(30)]  # the editor's line of each row
    assert frame.index.name == "line" and list(frame.index) == lines_seen
    assert table.numbers("a") is None  # the frame is now the one copy
    assert table.missing("a").tolist() == frame["a"].isna().tolist()


def test_threads_asking_at_once_share_one_frame(tmp_path) -> None:
    """The server's threads share tables: each sees the columns, the row count and the one
    frame, whichever thread builds it."""
    path = tmp_path / "numbers.csv"
    rng = np.random.default_rng(2)
    lines = ["a,b,y", *(",".join(repr(float(v)) for v in row)
                        for row in rng.standard_normal((50, 3)))]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    for _ in range(20):
        table = read_table(path)
        start = threading.Barrier(6)
        seen: list[tuple[list[str], int, int]] = []

        def ask(table=table, start=start, seen=seen) -> None:
            start.wait()
            seen.append((table.columns, table.n_rows, id(table.frame)))

        threads = [threading.Thread(target=ask) for _ in range(6)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        assert {(tuple(c), n) for c, n, _ in seen} == {(("a", "b", "y"), 50)}
        assert len({f for _, _, f in seen}) == 1
