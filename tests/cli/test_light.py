"""A check of a numeric CSV or Parquet file never loads pandas (the reader hands float64
arrays straight to the design); a file with a text column still does, which shows the probe
sees pandas when it is there.

Reference: Python's sys.modules in a fresh interpreter for what was imported (the other heavy
modules a plain check must not load are checked in test_extras.py).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from tests.cli.runner import loaded_modules


def _columns(n: int = 300) -> dict[str, np.ndarray]:
    """Random columns, y planted on two of them."""
    rng = np.random.default_rng(21)
    cols = {f"x{j}": rng.standard_normal(n) for j in range(4)}
    cols["y"] = cols["x0"] - 2 * cols["x2"] + rng.standard_normal(n)
    return cols


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("light")
    cols = _columns()
    names = list(cols)
    lines = [",".join(names)]
    for i in range(len(cols["y"])):
        cells = [repr(float(cols[c][i])) for c in names]
        if i == 7:
            cells[1] = ""  # a missing cell: the row is deleted, the note names it
        lines.append(",".join(cells))
        if i == 50:
            lines.append("")  # a blank line: rows no longer sit on line 2 + row
    (out / "numbers.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    nulls = np.zeros(len(cols["y"]), dtype=bool)
    nulls[3] = True
    table = pa.table({c: pa.array(v, mask=nulls if c == "x3" else None) for c, v in cols.items()})
    pq.write_table(table, out / "numbers.parquet", row_group_size=100)
    with_text = [lines[0] + ",site"] + [
        line + ("," + "nsew"[k % 4] if line else "") for k, line in enumerate(lines[1:])]
    (out / "with_text.csv").write_text("\n".join(with_text) + "\n", encoding="utf-8")
    return out


@pytest.mark.parametrize("name", ["numbers.csv", "numbers.parquet"])
@pytest.mark.parametrize("options", [(), ("--json",)])
def test_a_numeric_file_is_checked_without_pandas(folder: Path, name: str,
                                                  options: tuple[str, ...]) -> None:
    modules = loaded_modules("check", str(folder / name), "--response", "y", *options)
    assert "pandas" not in modules
    assert "rankscope.core.diagnosis" in modules  # the check ran to its end


def test_a_text_column_still_loads_pandas(folder: Path) -> None:
    assert "pandas" in loaded_modules("check", str(folder / "with_text.csv"), "--response", "y")
