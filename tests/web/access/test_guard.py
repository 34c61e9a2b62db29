"""Access at the door: a Host that is not this server is refused (DNS rebinding; RFC 9110 §7.2
and §15.5.20, 421), a change sent from another origin is refused (RFC 6454 Origin, Fetch
Metadata Sec-Fetch-Site; 403), every answer carries CSP Level 3 and nosniff/framing headers,
and every cookie is HttpOnly and SameSite (RFC 6265bis §5.4.7, §4.1.2.6).
"""

from __future__ import annotations

from http.cookies import SimpleCookie
from urllib.parse import parse_qs, urlsplit

import pytest
from fastapi.testclient import TestClient

from rankscope.web.access.guard import CSP, hosts_for, split_host
from rankscope.web.app import create_app
from tests.web.conftest import to_csv, units_table

# ---- Host (DNS rebinding) -------------------------------------------------------------


@pytest.mark.parametrize("host", ["127.0.0.1:8765", "localhost:8765", "[::1]:8765",
                                  "LOCALHOST:8765", "testserver"])
def test_loopback_names_are_served(host: str) -> None:
    client = TestClient(create_app())
    assert client.get("/", headers={"Host": host}).status_code == 200


@pytest.mark.parametrize("host", ["evil.example:8765", "127.0.0.1.evil.example",
                                  "localhost.evil.example:8765", "10.0.0.5:8765",
                                  "127.0.0.1:8765@evil.example", "[::1", "localhost:http"])
def test_other_hosts_are_refused_with_what_to_do(host: str) -> None:
    client = TestClient(create_app())
    r = client.get("/", headers={"Host": host})
    assert r.status_code == 421  # RFC 9110 §15.5.20 Misdirected Request
    assert "does not answer to the address" in r.text and "127.0.0.1:&lt;port&gt;" in r.text
    api = client.get("/api/sessions", headers={"Host": host})
    assert api.status_code == 421 and "DNS rebinding" in api.json()["error"]


def test_refused_host_never_reaches_a_route(client: TestClient, sid: str) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    r = client.post(f"/api/s/{sid}/changes", headers={"Host": "rebound.example"},
                    json={"kind": "step", "payload": {"step": "drop", "column": "temp_f"}})
    assert r.status_code == 421
    assert client.get(f"/api/s/{sid}/history").json() == before


def test_served_hosts_follow_the_bound_address() -> None:
    # What server.run sets: the loopback names, the bind host and the printed address,
    # on the port served only.
    hosts = hosts_for("127.0.0.1", 8765, "127.0.0.1")
    client = TestClient(create_app(allowed_hosts=hosts))
    assert client.get("/", headers={"Host": "localhost:8765"}).status_code == 200
    assert client.get("/", headers={"Host": "[::1]:8765"}).status_code == 200
    assert client.get("/", headers={"Host": "127.0.0.1:9999"}).status_code == 421
    assert client.get("/", headers={"Host": "testserver"}).status_code == 421
    shared = hosts_for("0.0.0.0", 8000, "192.0.2.7")
    assert {"192.0.2.7:8000", "127.0.0.1:8000", "0.0.0.0:8000"} <= shared
    assert "[2001:db8::1]:80" in hosts_for("2001:db8::1", 80, "2001:db8::1")
    # rankscope serve --host-name NAME adds a name, on the same port only.
    named = hosts_for("0.0.0.0", 8000, "192.0.2.7", "lab-pc.local")
    assert "lab-pc.local:8000" in named and "lab-pc.local:8001" not in named
    # RFC 9110 §4.2.1: no port in Host means the scheme's default one.
    assert split_host("[2001:db8::1]", "http") == ("[2001:db8::1]", 80)


def test_public_url_is_served_by_default() -> None:
    app = create_app(share=True, public_url="http://192.0.2.7:8000")
    client = TestClient(app, headers={"X-Rankscope-Token": app.state.owner_key})
    assert client.get("/", headers={"Host": "192.0.2.7:8000"}).status_code == 200
    assert client.get("/", headers={"Host": "192.0.2.8:8000"}).status_code == 421


# ---- Origin (cross-site requests) ------------------------------------------------------


def test_change_from_another_site_is_refused(client: TestClient, sid: str) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    body = {"kind": "step", "payload": {"step": "drop", "column": "temp_f"}}
    for headers in ({"Origin": "http://evil.example"},
                    {"Origin": "null"},  # a sandboxed frame or a file: page (RFC 6454 §7.3)
                    {"Origin": "http://127.0.0.1:9999"},  # another local server
                    {"Sec-Fetch-Site": "cross-site"},
                    {"Sec-Fetch-Site": "same-site"}):
        r = client.post(f"/api/s/{sid}/changes", headers=headers, json=body)
        assert r.status_code == 403, headers
        assert "not by rankscope's own pages" in r.json()["error"]
    for method in ("put", "patch", "delete"):
        r = client.request(method, f"/api/s/{sid}", headers={"Origin": "http://evil.example"})
        assert r.status_code == 403, method
    r = client.post("/api/upload", headers={"Origin": "http://evil.example"},
                    files={"file": ("u.csv", b"a,b\n1,2\n", "text/csv")})
    assert r.status_code == 403
    assert client.get(f"/api/s/{sid}/history").json() == before


def test_change_from_own_pages_or_a_plain_client_passes(client: TestClient, sid: str) -> None:
    body = {"kind": "step", "payload": {"step": "drop", "column": "temp_f"}}
    own = {"Origin": "http://testserver", "Sec-Fetch-Site": "same-origin"}
    assert client.post(f"/api/s/{sid}/changes", headers=own, json=body).status_code == 200
    # No Origin and no Fetch Metadata: a script or the CLI, not a browser page.
    body["payload"] = {"step": "drop", "column": "mass_kg"}
    assert client.post(f"/api/s/{sid}/changes", json=body).status_code == 200
    # Reading from another origin is the browser's same-origin policy's job, not refused.
    assert client.get(f"/s/{sid}", headers={"Origin": "http://evil.example"}).status_code == 200


def test_view_link_still_needs_edit_rights_with_a_good_origin(client: TestClient,
                                                              sid: str) -> None:
    view = parse_qs(urlsplit(client.get(f"/api/s/{sid}/links").json()["view"]).query)["t"][0]
    r = client.post(f"/api/s/{sid}/changes", headers={"Origin": "http://testserver",
                                                      "X-Rankscope-Token": view},
                    json={"kind": "step", "payload": {"step": "drop", "column": "temp_f"}})
    assert r.status_code == 403 and "view-only" in r.json()["error"]


def test_sharing_still_needs_a_token_from_a_good_origin() -> None:
    stranger = TestClient(create_app(share=True))
    r = stranger.post("/api/upload", headers={"Origin": "http://testserver"},
                      files={"file": ("u.csv", b"a,b\n1,2\n", "text/csv")})
    assert r.status_code == 403 and "links" in r.json()["error"]


# ---- Headers on every answer -----------------------------------------------------------


def test_every_answer_has_the_security_headers(client: TestClient, sid: str) -> None:
    answers = [client.get(p) for p in ("/", f"/s/{sid}", f"/s/{sid}/inspect",
                                       "/static/rankscope.css", "/assets/plotly.min.js",
                                       f"/api/s/{sid}/history", f"/api/s/{sid}/export/report",
                                       "/s/no-such-session", "/api/no-such-route")]
    answers.append(client.get("/", headers={"Host": "evil.example"}))
    answers.append(client.post(f"/api/s/{sid}/changes", headers={"Origin": "http://x.example"}))
    answers.append(client.post(f"/api/s/{sid}/changes", content=b"{not json"))
    for r in answers:
        assert r.headers["content-security-policy"] == CSP, r.url
        assert r.headers["x-content-type-options"] == "nosniff"
        assert r.headers["x-frame-options"] == "DENY"


def test_policy_has_no_inline_or_evaluated_script() -> None:
    # CSP Level 3 §6.1: script-src without 'unsafe-inline'/'unsafe-eval' runs only files.
    rules = dict(part.strip().split(" ", 1) for part in CSP.split(";"))
    assert rules["script-src"] == "'self'"
    assert "unsafe" not in rules["default-src"]
    assert rules["object-src"] == "'none'" and rules["base-uri"] == "'none'"
    assert rules["frame-ancestors"] == "'none'" and rules["form-action"] == "'self'"


# ---- Cookies -----------------------------------------------------------------------------


def set_cookies(response) -> list[str]:
    return response.headers.get_list("set-cookie")


def test_every_cookie_is_httponly_and_samesite() -> None:
    """Every path that sets a cookie: an upload, an edit or view link opened, the owner's
    start link when sharing, and the delete that clears one."""
    seen: list[str] = []
    local = TestClient(create_app())
    r = local.post("/api/upload", files={"file": ("u.csv", to_csv(units_table()), "text/csv")})
    seen += set_cookies(r)
    sid = r.json()["session"]
    links = local.get(f"/api/s/{sid}/links").json()
    for role in ("edit", "view"):
        opened = TestClient(local.app).get(urlsplit(links[role]).path + "?"
                                           + urlsplit(links[role]).query)
        seen += set_cookies(opened)
    seen += set_cookies(local.delete(f"/api/s/{sid}"))
    app = create_app(share=True)
    seen += set_cookies(TestClient(app).get(f"/?t={app.state.owner_key}"))
    assert len(seen) == 5, seen
    for header in seen:
        jar: SimpleCookie = SimpleCookie()
        jar.load(header)
        (morsel,) = jar.values()
        assert morsel["httponly"] is True, header
        assert morsel["samesite"].lower() in ("lax", "strict"), header
