"""Sources of a session's factor: a reduced factor kept as bytes comes back the same, and the
rows in memory and the streamed reduction of the same file give the same factor for a recipe.

References: the factor before saving (bit for bit), and the in-memory analysis of the same
file and recipe (numpy's rank of the planted design).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from rankscope.core.diagnosis import diagnose_factor
from rankscope.scale.reduced import Reduced, engine_of
from rankscope.scale.sources import ReducedSource, RowsSource, UnkeptSource
from rankscope.scale.stream import stream_factor
from rankscope.tables.errors import InputError
from rankscope.tables.read import read_table
from tests.web.conftest import to_csv, units_table

RECIPE = [{"step": "response", "column": "load"}]


@pytest.fixture(scope="module")
def units(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("sources") / "units.csv"
    path.write_bytes(to_csv(units_table()))
    return path


@pytest.fixture(scope="module")
def reduced(units: Path) -> Reduced:
    F, info = stream_factor(units, RECIPE)
    return Reduced(F, info, str(units), 1, engine="stream")


def test_a_kept_factor_comes_back_bit_for_bit(reduced: Reduced) -> None:
    back = Reduced.from_bytes(reduced.to_bytes())
    assert np.array_equal(back.F.T, reduced.F.T) and back.F.T.dtype == np.float64
    assert back.F.columns == reduced.F.columns and back.F.n == reduced.F.n
    assert back.info == reduced.info
    assert (back.folder, back.files, back.engine) == (reduced.folder, 1, "stream")
    assert engine_of(back.schema()) == "stream"
    with pytest.raises(ValueError):
        Reduced.from_bytes(b"PAR1 not a factor")


def test_rows_and_reduction_give_the_same_factor_for_a_recipe(units: Path,
                                                              reduced: Reduced) -> None:
    steps = [{"step": "drop", "column": "temp_f"}, {"step": "center", "column": "hours"}]
    rows = RowsSource(read_table(units)).factor_for([*RECIPE, *steps])
    # A reduced session's recipe goes on from the reduction's own (RECIPE, already taken).
    factor = ReducedSource(reduced).factor_for(steps)
    assert rows.layout.columns == factor.layout.columns
    assert (rows.rows_total, rows.rows_used) == (factor.rows_total, factor.rows_used)
    a = diagnose_factor(rows.F, response="load", groups=rows.layout.groups).to_dict()
    b = diagnose_factor(factor.F, response="load", groups=factor.layout.groups).to_dict()
    # Reference: 7 design columns, one of them planted exactly (the 1959 pound: mass_kg is
    # a multiple of mass_lb), so rank 6.
    assert len(a["columns"]) == 7 and a["rank"] == b["rank"] == 6
    for col, v in a["vif"].items():
        assert (v is None and b["vif"][col] is None) or np.isclose(v, b["vif"][col], rtol=1e-9)


def test_both_sources_answer_which_steps_need_rows(reduced: Reduced, units: Path) -> None:
    for source in (RowsSource(read_table(units)), ReducedSource(reduced)):
        assert source.takes_without_rows({"step": "drop", "column": "hours"})
        assert source.takes_without_rows({"step": "combine", "method": "sum"})
        assert not source.takes_without_rows({"step": "log", "column": "hours"})
        assert not source.takes_without_rows({"step": "combine", "method": "ratio"})
    assert RowsSource(read_table(units)).rows is not None and ReducedSource(reduced).rows is None
    with pytest.raises(InputError, match="not kept") as e:
        UnkeptSource("dask").factor_for(RECIPE)
    assert "--engine dask" in e.value.todo
