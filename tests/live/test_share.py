"""`rankscope serve FILE --share` for real (kept on 127.0.0.1 for the test): it prints the
links, refuses every request without a valid key, and a view-only link changes nothing.

References: RFC 9110 (status codes), RFC 6265 (cookies), the links the server printed, and
the session's history before and after.
"""

from __future__ import annotations

from urllib.parse import parse_qs, urlsplit

import httpx

from tests.web.conftest import to_csv, units_table


def key(link: str) -> str:
    return parse_qs(urlsplit(link).query)["t"][0]


def test_share_prints_links_and_refuses_requests_without_a_key(serve, tmp_path) -> None:
    path = tmp_path / "units.csv"
    path.write_bytes(to_csv(units_table()))
    server = serve(str(path), "--share")
    start = server.printed("your start page:")
    edit = server.printed("edit link:")
    view = server.printed("view-only link:")
    # The links point at the address the server listens on (the test keeps it local).
    for link in (start, edit, view):
        assert link.startswith(server.url + "/")
    sid = urlsplit(edit).path.split("/")[2]
    assert urlsplit(view).path == f"/s/{sid}" and key(edit) != key(view)

    with httpx.Client(base_url=server.url, timeout=10) as stranger:
        for path_ in ("/", f"/s/{sid}", f"/s/{sid}/inspect", f"/api/s/{sid}/history",
                      f"/api/s/{sid}/events", "/static/rankscope.js", "/api/sessions"):
            r = stranger.get(path_)
            assert r.status_code == 403, path_  # RFC 9110 §15.5.4
        r = stranger.post(f"/api/s/{sid}/undo", json={})
        assert r.status_code == 403 and "link" in r.json()["error"]
        assert stranger.get(f"/s/{sid}", params={"t": key(edit) + "x"}).status_code == 403

    with httpx.Client(base_url=server.url, timeout=10) as watcher:
        r = watcher.get(f"/s/{sid}", params={"t": key(view)})
        assert r.status_code == 200
        # Reference: RFC 6265 §5.2, the cookie now sent back by the client's jar.
        assert watcher.cookies.get(f"rs_{sid}") == key(view)
        before = watcher.get(f"/api/s/{sid}/history").json()
        for method, p, body in [
                ("POST", f"/api/s/{sid}/changes", {"kind": "step", "payload": {
                    "step": "response", "column": "load"}}),
                ("POST", f"/api/s/{sid}/undo", {}), ("POST", f"/api/s/{sid}/title",
                                                     {"title": "mine"}),
                ("DELETE", f"/api/s/{sid}", None)]:
            r = watcher.request(method, p, json=body)
            assert r.status_code == 403 and "view-only" in r.json()["error"], p
        assert watcher.get(f"/api/s/{sid}/history").json() == before

    with httpx.Client(base_url=server.url, timeout=10) as editor:
        assert editor.get(edit).status_code == 200
        r = editor.post(f"/api/s/{sid}/changes", json={
            "kind": "step", "payload": {"step": "response", "column": "load"},
            "base_version": before["version"], "change_id": "ed-1"})
        assert r.status_code == 200 and r.json()["saved_as"] == before["version"] + 1
        assert editor.get("/").status_code == 403  # a session's key is not the start page's

    with httpx.Client(base_url=server.url, timeout=10) as owner:
        page = owner.get(start)
        assert page.status_code == 200 and "units.csv" in page.text
        assert owner.get("/").status_code == 200  # the owner cookie stays for the visit
