"""The views opened on request: previewed remedies and the rows behind the conditioning.

Reference for the previews: the same change applied through the changes route and analysed
again (what the user sees after clicking Apply); for the rows: the core's own leave-one-out,
itself checked against brute-force deletion in tests/core/test_influence.py.
"""

from __future__ import annotations

import re

from fastapi.testclient import TestClient

from tests.web.conftest import step


def _state(client: TestClient, sid: str) -> dict:
    return client.get(f"/api/s/{sid}/diagnosis").json()


def test_remedies_fragment_lists_every_remedy_with_its_preview(client, sid) -> None:
    r = client.get(f"/api/s/{sid}/remedies")
    assert r.status_code == 200, r.text
    data = r.json()
    rows = data["remedies"]
    labels = [x["label"] for x in rows]
    assert "Drop temp_f" in labels and "Drop mass_kg" in labels
    assert 'id="remedy-table"' in data["html"] and "Apply" in data["html"]
    # Reference: apply the best single-step remedy and read the analysis after it.
    best = next(x for x in rows if len(x["steps"]) == 1)
    assert step(client, sid, best["steps"][0]).status_code in (200, 201)
    after = _state(client, sid)
    assert after["rank"] == best["rank"] and len(after["columns"]) == best["columns"]
    assert sorted(c for c, v in after["vif"].items() if v is None) == sorted(
        best["infinite_vif"])


def test_rows_fragment_lists_rows_with_their_values(client, sid) -> None:
    r = client.get(f"/api/s/{sid}/influence")
    assert r.status_code == 200, r.text
    data = r.json()
    assert data["figure"]["data"], "a chart of the change by row"
    rows = re.findall(r'data-row="(\d+)"', data["html"])
    assert rows and all(1 <= int(x) <= 60 for x in rows)
    assert "a diagnosis, not a remedy" in data["html"]


def test_unknown_session_gets_a_message(client) -> None:
    r = client.get("/api/s/nope/remedies")
    assert r.status_code in (400, 404) and "error" in r.json()
