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


def test_a_wide_design_lists_the_remedies_past_the_preview_budget(client) -> None:
    """Past the preview budget (rankscope.report.remedies.previews_allowed) the panel
    previews the first remedies and lists the rest with an Apply button each; applying a
    listed one gives the analysis its steps describe (reference: the changes route)."""
    import io

    import numpy as np
    import pandas as pd

    rng = np.random.default_rng(5)
    n, k = 480, 400
    df = pd.DataFrame(rng.normal(size=(n, k)), columns=[f"c{i:03d}" for i in range(k)])
    df["total"] = df.c000 + df.c001
    for i in range(4):
        df[f"twin{i}"] = df[f"c{10 + i:03d}"] + rng.normal(0, 1e-3, n)
    df["y"] = rng.normal(size=n)
    buf = io.StringIO()
    df.to_csv(buf, index=False, float_format="%.17g")
    r = client.post("/api/upload", files={"file": ("wide.csv", buf.getvalue().encode(),
                                                   "text/csv")})
    assert r.status_code == 201, r.text
    sid = r.json()["session"]
    assert step(client, sid, {"step": "response", "column": "y"}).status_code in (200, 201)
    data = client.get(f"/api/s/{sid}/remedies").json()
    shown, rest = data["remedies"], data["remedies_not_previewed"]
    assert shown and rest
    assert "not previewed" in data["html"]
    listed = re.findall(r'<li class="remedy-unpreviewed"', data["html"])
    assert len(listed) == len(rest)
    drop = next(x for x in rest if x["kind"] == "drop" and len(x["steps"]) == 1)
    before = _state(client, sid)
    assert step(client, sid, drop["steps"][0]).status_code in (200, 201)
    after = _state(client, sid)
    assert len(after["columns"]) == len(before["columns"]) - 1
