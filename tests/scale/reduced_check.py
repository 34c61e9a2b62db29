"""Shared check for sessions analysed from a reduced factor (Dask or streaming).

Compares a session's diagnosis with the in-memory analysis of the same rows.
"""

from __future__ import annotations

from rankscope.core import diagnose
from rankscope.design.design import Design


def close(a: float | None, b: float | None, rel: float = 1e-10) -> bool:
    return a is None and b is None or (a is not None and b is not None
                                       and abs(a - b) <= rel * max(abs(a), abs(b), 1.0))


def reference(design: Design) -> dict:
    """diagnose() on the design's rows: the in-memory analysis the reduced one must equal."""
    return diagnose(design.X, design.columns, design.y, response=design.response,
                    groups=design.groups).to_dict()


def assert_matches_in_memory(client, sid: str, design: Design) -> None:  # noqa: ANN001
    """Rank, columns, VIFs and coefficients of the session equal diagnose() on design to
    1e-10 relative. Reference: the in-memory analysis of the same rows."""
    ref = reference(design)
    got = client.get(f"/api/s/{sid}/diagnosis").json()
    assert got["rank"] == ref["rank"] == len(ref["columns"]) - 1
    assert got["columns"] == ref["columns"]
    assert got["vif"].keys() == ref["vif"].keys()
    assert all(close(got["vif"][c], ref["vif"][c]) for c in ref["vif"])
    coef, ref_coef = got["fit"]["coefficients"], ref["fit"]["coefficients"]
    assert coef.keys() == ref_coef.keys()
    assert all(close(coef[c], ref_coef[c]) for c in ref_coef)


def _close_map(got: dict, ref: dict) -> bool:
    return got.keys() == ref.keys() and all(close(got[k], ref[k]) for k in ref)


def assert_same_diagnosis(got: dict, ref: dict) -> None:
    """Columns, rank, basis, relations, condition numbers (and indices when of full rank),
    VIFs, coefficients and standard errors agree to 1e-10 relative. ref: reference(design),
    the in-memory analysis of the same rows."""
    for key in ("columns", "response", "rank", "full_rank", "basis"):
        assert got[key] == ref[key], key
    assert [d["column"] for d in got["dependencies"]] == [d["column"] for d in
                                                          ref["dependencies"]]
    for d, r in zip(got["dependencies"], ref["dependencies"], strict=True):
        assert _close_map(d["combination"], r["combination"]), (d, r)
    assert _close_map(got["condition_number"], ref["condition_number"])
    if ref["full_rank"]:  # else the last index is rounding noise on both sides
        assert all(close(a, b) for a, b in zip(got["condition_indices"],
                                               ref["condition_indices"], strict=True))
    assert _close_map(got["vif"], ref["vif"])
    for key in ("coefficients", "std_errors"):
        assert _close_map(got["fit"][key], ref["fit"][key]), key
