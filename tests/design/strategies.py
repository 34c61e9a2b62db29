"""Hypothesis strategies: small random tables and random step sequences over their columns.

Random data only; nothing here is a fixture value that a test compares against.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import strategies as st

from rankscope.design.steps import COMBINE_METHODS, KIND_TARGETS, MISSING_POLICIES, SPECS
from rankscope.tables.table import Table
from tests.design.tables import table

NUMERIC = ["x1", "x2", "x3"]
CATEGORICAL = ["g1", "g2"]
LEVELS = ["a", "b", "c", "d"]
# Names that appear only after some steps, and one that never exists.
LATER = ["x1 (centered)", "log(x1)", "x2^2", "new", "pc", "nope"]

values = st.one_of(
    st.sampled_from([0.0, 1.0, -1.0, 2.0, 0.5]),
    st.floats(-50, 50, allow_nan=False, allow_infinity=False, width=32),
)


@st.composite
def tables(draw: st.DrawFn, with_bool: bool = True, missing: bool = True) -> Table:
    n = draw(st.integers(3, 12))
    frame: dict[str, object] = {}
    for name in NUMERIC[: draw(st.integers(1, 3))]:
        col = draw(st.lists(values, min_size=n, max_size=n))
        frame[name] = [np.nan if missing and draw(st.integers(0, 9)) == 0 else v for v in col]
    for name in CATEGORICAL[: draw(st.integers(0, 2))]:
        labels = draw(st.lists(st.sampled_from(LEVELS), min_size=n, max_size=n))
        frame[name] = pd.Categorical(
            [None if missing and draw(st.integers(0, 9)) == 0 else v for v in labels]
        )
    if with_bool and draw(st.booleans()):
        frame["f"] = pd.array(draw(st.lists(st.booleans(), min_size=n, max_size=n)), "boolean")
    return table(pd.DataFrame(frame))


def _columns(tab: Table) -> st.SearchStrategy[str]:
    # Mostly columns that exist, so that recipes get past the first step.
    existing = st.sampled_from(tab.columns)
    return st.one_of(*[existing] * 7, st.sampled_from(LATER))


def steps_for(tab: Table) -> st.SearchStrategy[dict]:
    """One step; mostly well formed, sometimes with a field of the wrong type."""
    col = _columns(tab)
    name = st.sampled_from(["new", "pc", "x2^2", "other"])
    keep = st.booleans()
    single = st.fixed_dictionaries({"column": col}, optional={"name": name, "keep": keep})
    return st.one_of(
        st.fixed_dictionaries({"step": st.just("response"), "column": st.one_of(st.none(), col)}),
        st.fixed_dictionaries({"step": st.just("intercept"), "include": st.booleans()}),
        st.fixed_dictionaries({"step": st.sampled_from(["drop", "restore"]), "column": col}),
        st.fixed_dictionaries(
            {"step": st.just("indicators"), "column": col},
            optional={"reference": st.sampled_from([*LEVELS, "all", "zz"])},
        ),
        single.map(lambda d: {"step": "center", **d}),
        single.map(lambda d: {"step": "standardize", **d}),
        single.map(lambda d: {"step": "unit_length", **d}),
        st.tuples(single, st.sampled_from([1000, -2, 0.001, 1e300])).map(
            lambda t: {"step": "multiply", **t[0], "by": t[1]}
        ),
        st.tuples(single, st.sampled_from([{}, {"base": 10}, {"shift": 1}, {"base": 3}])).map(
            lambda t: {"step": "log", **t[0], **t[1]}
        ),
        st.tuples(single, st.sampled_from([2, 3, 0.5, -1, 0, 400])).map(
            lambda t: {"step": "power", **t[0], "exponent": t[1]}
        ),
        st.fixed_dictionaries(
            {
                "step": st.just("product"),
                "columns": st.lists(col, min_size=2, max_size=2),
                "name": name,
            }
        ),
        st.fixed_dictionaries(
            {
                "step": st.just("combine"),
                "columns": st.lists(col, min_size=2, max_size=3),
                "method": st.sampled_from(COMBINE_METHODS),
                "name": name,
            }
        ),
        st.fixed_dictionaries(
            {"step": st.just("missing"), "column": col, "policy": st.sampled_from(MISSING_POLICIES)}
        ),
        st.fixed_dictionaries(
            {"step": st.just("kind"), "column": col, "to": st.sampled_from(KIND_TARGETS)}
        ),
        # Malformed steps: unknown names and fields of the wrong type.
        st.fixed_dictionaries(
            {"step": st.sampled_from([*SPECS, "dorp"]), "column": st.sampled_from([3, None, ""])}
        ),
    )


@st.composite
def tables_and_steps(draw: st.DrawFn, max_steps: int = 6, **kw: bool) -> tuple[Table, list[dict]]:
    tab = draw(tables(**kw))
    steps = draw(st.lists(steps_for(tab), min_size=1, max_size=max_steps))
    return tab, steps
