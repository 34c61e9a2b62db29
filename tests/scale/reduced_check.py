"""Shared check for sessions analysed from a reduced factor (Dask or streaming).

Compares a session's diagnosis with the in-memory analysis of the same rows.
"""

from __future__ import annotations

from app.core import diagnose
from app.design.design import Design


def close(a: float | None, b: float | None, rel: float = 1e-10) -> bool:
    return a is None and b is None or (a is not None and b is not None
                                       and abs(a - b) <= rel * max(abs(a), abs(b), 1.0))


def assert_matches_in_memory(client, sid: str, design: Design) -> None:  # noqa: ANN001
    """Rank, columns, VIFs and coefficients of the session equal diagnose() on design to
    1e-10 relative. Reference: the in-memory analysis of the same rows."""
    ref = diagnose(design.X, design.columns, design.y, response=design.response,
                   groups=design.groups).to_dict()
    got = client.get(f"/api/s/{sid}/diagnosis").json()
    assert got["rank"] == ref["rank"] == len(ref["columns"]) - 1
    assert got["columns"] == ref["columns"]
    assert got["vif"].keys() == ref["vif"].keys()
    assert all(close(got["vif"][c], ref["vif"][c]) for c in ref["vif"])
    coef, ref_coef = got["fit"]["coefficients"], ref["fit"]["coefficients"]
    assert coef.keys() == ref_coef.keys()
    assert all(close(coef[c], ref_coef[c]) for c in ref_coef)
