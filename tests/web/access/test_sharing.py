"""Sharing: a view-only token changes nothing on any mutating route; with sharing on, a request
without a valid token is refused; tokens are kept hashed; links leave their key in a cookie.

References: RFC 9110 (status codes), RFC 6265 (cookie attributes), FIPS 180-4 SHA-256 via
hashlib for the stored hashes, and the store's own saved state before and after.
"""

from __future__ import annotations

import hashlib
import re
import sqlite3
from pathlib import Path
from urllib.parse import parse_qs, urlsplit

import pytest
from fastapi.testclient import TestClient
from starlette.routing import Route

from rankscope.web.app import create_app
from tests.web.conftest import step, to_csv

SAFE = {"GET", "HEAD", "OPTIONS"}  # RFC 9110 §9.2.1: the methods defined as safe


def upload(client: TestClient, table: dict, **kw) -> str:
    r = client.post("/api/upload", files={"file": ("units.csv", to_csv(table), "text/csv")},
                    **kw)
    assert r.status_code == 201, r.text  # RFC 9110 §15.3.2
    return r.json()["session"]


def tokens(client: TestClient, sid: str, **kw) -> dict[str, str]:
    r = client.get(f"/api/s/{sid}/links", **kw)
    assert r.status_code == 200, r.text
    return {role: parse_qs(urlsplit(url).query)["t"][0]
            for role in ("edit", "view") if (url := r.json()[role])}


def saved_state(client: TestClient, sid: str, token: str) -> dict:
    """Everything a change could touch, as the session reports it."""
    head = {"X-Rankscope-Token": token}
    history = client.get(f"/api/s/{sid}/history", headers=head).json()
    listed = {s["session"]: s for s in create_list(client)}
    page = client.get(f"/s/{sid}/workspace", headers=head).text
    pins = re.findall(r'data-unpin="(\d+)"', page)
    return {"history": history, "title": listed[sid]["title"], "pins": pins}


def create_list(client: TestClient) -> list[dict]:
    return client.get("/api/sessions").json()


def mutating_routes(app) -> list[tuple[str, str]]:
    """(method, path) of every route that is not read-only, from the app's own table
    (included routers are walked into, whichever way the framework wraps them)."""
    out = []

    def walk(routes, prefix: str) -> None:
        for route in routes:
            inner = getattr(route, "original_router", None)
            if inner is not None:
                walk(inner.routes, prefix + route.include_context.prefix)
            elif isinstance(route, Route):
                for method in sorted((route.methods or set()) - SAFE):
                    out.append((method, prefix + route.path))

    walk(app.routes, "")
    return out


def fill(path: str, sid: str) -> str:
    return path.replace("{session_id}", sid).replace("{pin_id}", "1").replace("{kind}", "report")


BODIES = {
    "/api/s/{session_id}/changes": {"json": {"kind": "step",
                                             "payload": {"step": "drop", "column": "hours"}}},
    "/api/s/{session_id}/title": {"json": {"title": "renamed"}},
    "/api/s/{session_id}/pins": {"json": {"label": "x"}},
    "/api/s/{session_id}/recipe": {"files": {"file": (
        "r.json", b'[{"step": "drop", "column": "hours"}]', "application/json")}},
    "/api/upload": {"files": {"file": ("u.csv", b"a,b\n1,2\n3,5\n", "text/csv")}},
}


def test_view_token_changes_nothing_on_any_mutating_route(table) -> None:
    app = create_app()
    owner = TestClient(app)
    sid = upload(owner, table)
    step(owner, sid, {"step": "response", "column": "load"})
    step(owner, sid, {"step": "drop", "column": "temp_f"})
    assert owner.post(f"/api/s/{sid}/pins", json={"label": "kept"}).status_code == 201
    keys = tokens(owner, sid)
    routes = mutating_routes(app)
    # The app's own route table: every way to change something, found, not listed by hand.
    assert {p for _, p in routes} >= {
        "/api/upload", "/api/s/{session_id}/changes", "/api/s/{session_id}/undo",
        "/api/s/{session_id}/redo", "/api/s/{session_id}/pins",
        "/api/s/{session_id}/pins/{pin_id}", "/api/s/{session_id}/title",
        "/api/s/{session_id}", "/api/s/{session_id}/recipe"}
    before = saved_state(owner, sid, keys["edit"])
    viewer = TestClient(app)
    for method, path in routes:
        url = fill(path, sid)
        kw = BODIES.get(path, {})
        # The key as a header (API clients), as ?t= (a link), and as the cookie a link
        # leaves behind (the browser): none of them may change anything.
        r1 = viewer.request(method, url, headers={"X-Rankscope-Token": keys["view"]}, **kw)
        r2 = viewer.request(method, url, params={"t": keys["view"]}, **kw)
        answers = [r1, r2]
        if "{session_id}" in path:
            # A cookie is sent only as that session's key; without sharing, the server's
            # own pages (the upload) are open to this computer with or without it.
            viewer.cookies.set(f"rs_{sid}", keys["view"])
            answers.append(viewer.request(method, url, **kw))
            viewer.cookies.clear()
        for r in answers:
            # Reference: RFC 9110 §15.5.4, 403 Forbidden, with the reason in words.
            assert r.status_code == 403, (method, path, r.status_code, r.text)
            assert r.json()["error"], (method, path)
    # Reference: the store's saved state before the attempts.
    assert saved_state(owner, sid, keys["edit"]) == before
    # The same routes do act for the edit key (so the refusals above were the key's doing).
    r = owner.post(f"/api/s/{sid}/undo", headers={"X-Rankscope-Token": keys["edit"]},
                   json={})
    assert r.status_code == 200 and r.json()["version"] == before["history"]["version"] + 1


def test_view_page_shows_controls_switched_off(client, sid) -> None:
    keys = tokens(client, sid)
    viewer = TestClient(client.app)
    page = viewer.get(f"/s/{sid}/inspect", params={"t": keys["view"]})
    assert page.status_code == 200
    assert 'id="view-only-note"' in page.text
    assert re.search(r'<fieldset class="bare" disabled>', page.text)
    # The viewer may watch and download (RFC 9110 §9.2.1: GET is safe).
    for path in ("/workspace", "/compare"):
        assert viewer.get(f"/s/{sid}{path}").status_code == 200
    assert viewer.get(f"/api/s/{sid}/export/recipe").status_code == 200
    links = viewer.get(f"/api/s/{sid}/links").json()
    assert links["edit"] is None and keys["view"] in links["view"]


def test_link_leaves_its_key_in_a_cookie(client, sid) -> None:
    keys = tokens(client, sid)
    fresh = TestClient(client.app)
    r = fresh.get(f"/s/{sid}", params={"t": keys["edit"]})
    assert r.status_code == 200
    cookie = r.headers["set-cookie"]
    # Reference: RFC 6265 §4.1: the attributes that keep it from scripts and other sites.
    assert cookie.startswith(f"rs_{sid}={keys['edit']};")
    assert "HttpOnly" in cookie and "SameSite=Lax" in cookie and "Path=/" in cookie
    assert r.headers["referrer-policy"] == "no-referrer"
    assert fresh.get(f"/s/{sid}/inspect").status_code == 200  # the cookie now carries it


@pytest.fixture()
def shared(table):
    app = create_app(share=True, public_url="http://192.0.2.7:8000")
    owner = TestClient(app, headers={"X-Rankscope-Token": app.state.owner_key})
    sid = upload(owner, table)
    return app, owner, sid


def test_sharing_refuses_requests_without_a_valid_token(shared) -> None:
    app, owner, sid = shared
    stranger = TestClient(app)
    paths = ["/", "/static/rankscope.js", "/assets/plotly.min.js", "/api/sessions",
             f"/s/{sid}", f"/s/{sid}/inspect", f"/api/s/{sid}/diagnosis",
             f"/api/s/{sid}/events", f"/api/s/{sid}/export/report", "/s/unknown-id"]
    for path in paths:
        r = stranger.get(path)
        # Reference: RFC 9110 §15.5.4 (403); the page says what to do.
        assert r.status_code == 403, path
        assert "link" in r.text
    assert stranger.post("/api/upload", files={"file": ("u.csv", b"a\n1\n", "text/csv")}
                         ).status_code == 403
    assert stranger.get(f"/s/{sid}", params={"t": "not-a-key"}).status_code == 403
    keys = tokens(owner, sid)
    # Reference: the public address given to the app, used in the links.
    links = owner.get(f"/api/s/{sid}/links").json()
    assert links["edit"] == f"http://192.0.2.7:8000/s/{sid}?t={keys['edit']}"
    # A session's key opens that session and its page's scripts, never the server's own
    # pages or other sessions.
    guest = TestClient(app)
    assert guest.get(f"/s/{sid}", params={"t": keys["edit"]}).status_code == 200
    assert guest.get("/static/rankscope.js").status_code == 200
    assert guest.get("/").status_code == 403
    assert guest.get("/", params={"t": keys["edit"]}).status_code == 403
    other = upload(owner, {k: v[:30] for k, v in units_copy().items()})
    assert guest.get(f"/s/{other}").status_code == 403
    r = guest.post(f"/api/s/{sid}/changes", json={"kind": "step", "payload": {
        "step": "response", "column": "load"}})
    assert r.status_code == 200, r.text


def units_copy() -> dict:
    from tests.web.conftest import units_table

    return units_table(seed=11)


def test_tokens_are_stored_hashed(tmp_path: Path, table) -> None:
    from rankscope.store import Store

    store = Store(tmp_path / "data")
    app = create_app(store)
    owner = TestClient(app)
    sid = upload(owner, table)
    keys = tokens(owner, sid)
    store.close()
    raw = b"".join(p.read_bytes() for p in (tmp_path / "data").glob("sessions.sqlite3*"))
    for token in keys.values():
        # Neither the token nor its base64 body appears anywhere in the database files.
        assert token.encode() not in raw
    con = sqlite3.connect(tmp_path / "data" / "sessions.sqlite3")
    edit_hash, view_hash = con.execute(
        "SELECT edit_hash, view_hash FROM sessions WHERE id = ?", (sid,)).fetchone()
    con.close()
    # Reference: SHA-256 (FIPS 180-4) of each token, computed here by hashlib.
    assert edit_hash == hashlib.sha256(keys["edit"].encode()).hexdigest()
    assert view_hash == hashlib.sha256(keys["view"].encode()).hexdigest()
