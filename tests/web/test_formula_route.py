"""The columns page's formula box: POST /api/s/{id}/formula opens a new session whose
design is the formula's (the one `inspect(..., formula=)` diagnoses), and the usual changes
then work on its columns."""

from __future__ import annotations

import pytest

import rankscope
from rankscope.design.formula import formula_design
from tests.web.conftest import step

FORMULA = "load ~ temp_c + temp_f + mass_lb + C(region) + hours:region"


def _diagnosis(client, session: str) -> dict:
    r = client.get(f"/api/s/{session}/diagnosis")
    assert r.status_code == 200, r.text
    return r.json()


def test_formula_opens_a_session_on_its_design(client, sid):
    r = client.post(f"/api/s/{sid}/formula", json={"formula": FORMULA})
    assert r.status_code == 201, r.text
    new = r.json()["session"]
    assert new != sid and r.json()["url"] == f"/s/{new}"
    got = _diagnosis(client, new)
    # Reference: the same formula on the session's table through the design layer.
    table = client.app.state.analyst.session(sid).table
    design = formula_design(table, FORMULA)
    expected = rankscope.inspect(table, formula=FORMULA)
    assert got["columns"] == design.columns
    assert [d["equation"] for d in got["dependencies"]] == [
        d["equation"] for d in expected.dependencies]  # °F = 32 + 1.8·°C, in the formula's names
    for c, v in expected.vif.items():
        assert (got["vif"][c] is None) == (v is None)
        assert v is None or got["vif"][c] == pytest.approx(v, rel=1e-9)
    # The usual controls work on the formula's columns: drop the Fahrenheit copy.
    r = step(client, new, {"step": "drop", "column": "temp_f"})
    assert r.status_code == 200, r.text
    after = _diagnosis(client, new)
    assert after["full_rank"] and "temp_f" not in after["columns"]
    # The session it came from is unchanged.
    assert "C(region)[T.south]" not in _diagnosis(client, sid)["columns"]


@pytest.mark.parametrize(("formula", "part"), [
    ("load ~ temp_cc", 'formula, character 8: the table has no column named "temp_cc"'),
    ("load ~ (temp_c", "formula, character 8: the formula cannot be read"),
    ("", "the formula is empty"),
])
def test_bad_formula_is_a_message_and_makes_no_session(client, sid, formula, part):
    before = len(client.get("/api/sessions").json())
    r = client.post(f"/api/s/{sid}/formula", json={"formula": formula})
    assert r.status_code == 400 and part in r.json()["error"]
    assert len(client.get("/api/sessions").json()) == before
