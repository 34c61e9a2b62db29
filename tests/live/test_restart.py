"""A real server killed with SIGKILL and started again on the same data folder: the session is
intact to its last acknowledged change, and its title, pins and pages come back.

References: the sequence of changes the server acknowledged (200 with the version it saved
each as) before it died, RFC 9110 for status codes, and numpy's rank of the design.
"""

from __future__ import annotations

import signal
import time

import httpx
import numpy as np
import pytest

from tests.live.conftest import Writer, upload
from tests.web.conftest import to_csv, units_table

ACKS_BEFORE_KILL = 25
#: The writer gives up after this long whatever happens (a bounded request loop).
WRITER_SECONDS = 60.0


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")
def test_session_survives_sigkill_to_its_last_acknowledged_change(serve, tmp_path) -> None:
    table = units_table()
    first = serve()
    client = httpx.Client(base_url=first.url, timeout=10)
    sid = upload(client, "units.csv", to_csv(table))
    assert client.post(f"/api/s/{sid}/changes?html=0", json={
        "kind": "step", "payload": {"step": "response", "column": "load"},
        "base_version": 0, "change_id": "setup-0"}).status_code == 200
    assert client.post(f"/api/s/{sid}/title", json={"title": "Cold room, week 12"}
                       ).status_code == 200
    assert client.post(f"/api/s/{sid}/pins?html=0", json={"label": "before"}).status_code == 201

    # Drop and restore temp_f for ever, each change on the version the last one got.
    writer = Writer(first.url, sid, 1, lambda i: {
        "kind": "step", "payload": {"step": "restore" if i % 2 else "drop", "column": "temp_f"}},
        seconds=WRITER_SECONDS)
    assert writer.wait_for(ACKS_BEFORE_KILL, WRITER_SECONDS), \
        f"the server acknowledged too few changes: {writer.failures}"
    first.kill()  # while the writer is sending the next change
    writer.join()
    assert first.proc.returncode == -signal.SIGKILL and not writer.failures
    client.close()
    acked = writer.acked

    second = serve()  # the same data folder
    with httpx.Client(base_url=second.url, timeout=10) as again:
        h = again.get(f"/api/s/{sid}/history")
        assert h.status_code == 200, h.text
        entries = h.json()["entries"]
        ids = [(e["version"], e["change_id"]) for e in entries if e["change_id"].startswith("w-")]
        # Reference: the acknowledged sequence is a prefix of what is saved (the change in
        # flight at the kill may be saved too, unacknowledged), and versions run 1, 2, 3...
        assert ids[:len(acked)] == acked
        assert len(ids) <= len(acked) + 1
        assert [e["version"] for e in entries] == list(range(1, len(entries) + 1))
        # Reference: the saved changes replayed by hand: response, then drop, restore, ...
        expected = [{"step": "response", "column": "load"}] + [
            {"step": "restore" if k % 2 else "drop", "column": "temp_f"} for k in range(len(ids))]
        assert h.json()["recipe"] == expected
        dropped = len(ids) % 2 == 1
        # Title and pin came back; the start page lists the session under its title.
        assert "Cold room, week 12" in again.get("/").text
        page = again.get(f"/s/{sid}/inspect")
        assert page.status_code == 200 and "before" in page.text
        d = again.get(f"/api/s/{sid}/diagnosis").json()
        cols = ["temp_c", "mass_lb", "mass_kg", "hours"] + ([] if dropped else ["temp_f"])
        region = np.asarray(table["region"])
        X = np.column_stack([np.ones(len(region)), *(np.asarray(table[c]) for c in cols),
                             region == "south", region == "west"]).astype(float)
        # Reference: numpy.linalg.matrix_rank of the design the saved recipe describes.
        assert d["rank"] == np.linalg.matrix_rank(X)


def _reduced_session(url: str, seconds: float = 60.0) -> str:
    """The session id a streamed reduction ends with, read from its progress JSON."""
    deadline = time.monotonic() + seconds
    with httpx.Client(base_url=url, timeout=10) as client:
        while time.monotonic() < deadline:
            status = client.get("/api/reducing").json()
            assert status["state"] in ("running", "done"), status
            if status["state"] == "done":
                return status["session"]
            time.sleep(0.1)
    raise AssertionError("the reduction did not finish")


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")
def test_reduced_session_survives_sigkill_with_its_factor(serve, tmp_path) -> None:
    """A session reduced by streaming comes back after SIGKILL under a plain `serve` on the
    same data folder: its factor, its changes, and the refusal of a change needing rows."""
    csv = tmp_path / "units.csv"
    csv.write_bytes(to_csv(units_table()))
    first = serve(str(csv), "--engine", "stream", "--response", "load")
    sid = _reduced_session(first.url)
    with httpx.Client(base_url=first.url, timeout=10) as client:
        r = client.post(f"/api/s/{sid}/changes?html=0", json={
            "kind": "step", "payload": {"step": "drop", "column": "temp_f"},
            "base_version": 0, "change_id": "drop-0"})
        assert r.status_code == 200, r.text
        before = client.get(f"/api/s/{sid}/diagnosis").json()
    first.kill()

    second = serve()  # the memory engine, the same data folder
    with httpx.Client(base_url=second.url, timeout=10) as again:
        d = again.get(f"/api/s/{sid}/diagnosis")
        assert d.status_code == 200, d.text
        after = d.json()
        # Reference: the diagnosis the first server gave of the same factor and change.
        assert after["columns"] == before["columns"] and "temp_f" not in after["columns"]
        assert after["rank"] == before["rank"]
        assert after["vif"] == before["vif"]
        page = again.get(f"/s/{sid}/inspect")
        assert page.status_code == 200 and "Reduced without holding the rows" in page.text
        # A step that needs the rows is refused in words (RFC 9110: a 4xx, never a 500).
        r = again.post(f"/api/s/{sid}/changes?html=0", json={
            "kind": "step", "payload": {"step": "log", "column": "hours"},
            "base_version": 1, "change_id": "log-1"})
        assert 400 <= r.status_code < 500 and "rows" in r.text, r.text
        # Reference: numpy.linalg.matrix_rank of the design the saved recipe describes
        # (intercept, the numeric columns but temp_f, the region indicators but one).
        table = units_table()
        region = np.asarray(table["region"])
        X = np.column_stack([np.ones(len(region)), *(np.asarray(table[c]) for c in (
            "temp_c", "mass_lb", "mass_kg", "hours")), region == "south", region == "west"])
        assert after["rank"] == np.linalg.matrix_rank(X.astype(float))
