"""Server-side faults answered in words, in process: a full disk is 507, another fault of the
server (an I/O error, a busy database, short memory) 503 with Retry-After, a bug 500 with a
reference; as JSON for scripts and as a page for a browser; never blamed on the user's change.
(The real full disk, on a tmpfs, is tests/live/test_disk_full.py.)

References: RFC 4918 §11.5 (507), RFC 9110 §15.6.4 (503) and §10.2.3 (Retry-After); the
messages SQLite and the kernel give (sqlite3 "database or disk is full", errno ENOSPC).
"""

from __future__ import annotations

import errno
import sqlite3

import pytest
from fastapi.testclient import TestClient

from rankscope.store import Store
from rankscope.web.faults import fault_of
from tests.web.conftest import to_csv, units_table


@pytest.mark.parametrize("exc,status", [
    (sqlite3.OperationalError("database or disk is full"), 507),
    (OSError(errno.ENOSPC, "No space left on device"), 507),
    (OSError("[Errno 28] Error writing bytes to file. Detail: No space left on device"), 507),
    (sqlite3.OperationalError("disk I/O error"), 503),
    (sqlite3.OperationalError("database is locked"), 503),
    (OSError(errno.EROFS, "Read-only file system"), 503),
    (MemoryError(), 503),
    (ValueError("a bug"), None),
    (OSError("a reader's complaint without an error number"), None),
])
def test_faults_are_told_from_bugs(exc: BaseException, status: int | None) -> None:
    fault = fault_of(exc)
    assert (fault and fault.status) == status
    if fault is not None:
        assert "intact" in fault.message and "Error" not in fault.message


def test_a_failed_rollback_does_not_hide_a_full_disk() -> None:
    try:
        try:
            raise sqlite3.OperationalError("database or disk is full")
        except sqlite3.Error:
            raise sqlite3.OperationalError("cannot rollback - no transaction is active")  # noqa: B904
    except sqlite3.Error as e:
        assert fault_of(e).status == 507


def breaking(monkeypatch: pytest.MonkeyPatch, name: str, exc: BaseException) -> None:
    def broken(*args: object, **kwargs: object) -> None:
        raise exc

    monkeypatch.setattr(Store, name, broken)


def test_a_full_disk_on_a_change_is_507_not_a_user_error(client: TestClient, sid: str,
                                                          monkeypatch) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    breaking(monkeypatch, "apply_change", sqlite3.OperationalError("database or disk is full"))
    r = client.post(f"/api/s/{sid}/changes?html=0", json={
        "kind": "step", "payload": {"step": "drop", "column": "hours"}, "change_id": "c"})
    assert r.status_code == 507, r.text
    assert "disk is full" in r.json()["error"] and "report" not in r.json()["error"]
    monkeypatch.undo()
    assert client.get(f"/api/s/{sid}/history").json() == before
    # Not an answer to the change id: the retry, with room again, is saved.
    r = client.post(f"/api/s/{sid}/changes?html=0", json={
        "kind": "step", "payload": {"step": "drop", "column": "hours"}, "change_id": "c"})
    assert r.status_code == 200 and r.json()["repeated"] is False


def test_other_faults_are_503_with_retry_after_as_json_or_a_page(client: TestClient, sid: str,
                                                                  monkeypatch) -> None:
    breaking(monkeypatch, "rename", sqlite3.OperationalError("disk I/O error"))
    r = client.post(f"/api/s/{sid}/title", json={"title": "new"})
    assert r.status_code == 503 and r.headers["retry-after"] == "5"
    assert "read or write error" in r.json()["error"]
    breaking(monkeypatch, "load", MemoryError())
    page = client.get(f"/s/{sid}", headers={"accept": "text/html"})
    assert page.status_code == 503 and page.headers["content-type"].startswith("text/html")
    assert "short of memory" in page.text
    # The guard's headers are on these answers too.
    assert "content-security-policy" in page.headers


def test_a_bug_is_a_worded_500_with_a_reference(monkeypatch) -> None:
    from rankscope.web.app import create_app

    client = TestClient(create_app(), raise_server_exceptions=False)
    breaking(monkeypatch, "list_recent", ZeroDivisionError("division by zero"))
    r = client.get("/api/sessions")
    assert r.status_code == 500
    text = r.json()["error"]
    assert "reference" in text and "ZeroDivisionError" not in text and "division" not in text


def test_an_upload_that_cannot_be_finished_leaves_no_session(client: TestClient,
                                                             monkeypatch) -> None:
    breaking(monkeypatch, "update_settings", sqlite3.OperationalError("database or disk is full"))
    r = client.post("/api/upload", files={"file": ("units.csv", to_csv(units_table()),
                                                   "text/csv")})
    assert r.status_code == 507, r.text
    assert client.get("/api/sessions").json() == []  # told "nothing saved": nothing is
