"""Versioned edits over HTTP: a change made on an old version is saved on top when it still
fits, refused with 409 and the fresh view when it does not, and a retry is never saved twice.

References: RFC 9110 (status codes), the store's own history (versions and change ids), and
the recipe rule that a column cannot be dropped twice.
"""

from __future__ import annotations

from tests.web.conftest import step


def change(client, sid, payload, base=None, cid=None, kind="step"):
    body = {"kind": kind, "payload": payload}
    if base is not None:
        body["base_version"] = base
    if cid is not None:
        body["change_id"] = cid
    return client.post(f"/api/s/{sid}/changes", json=body)


def history(client, sid) -> dict:
    return client.get(f"/api/s/{sid}/history").json()


def test_change_on_an_old_version_is_saved_on_top(client, sid) -> None:
    v = history(client, sid)["version"]
    assert change(client, sid, {"step": "drop", "column": "temp_f"}, v, "a").status_code == 200
    # Made by someone still looking at version v: it fits on top, so it is saved there.
    r = change(client, sid, {"step": "drop", "column": "mass_kg"}, v, "b")
    assert r.status_code == 200, r.text  # RFC 9110 §15.3.1
    assert r.json()["rebased"] is True and r.json()["saved_as"] == v + 2
    h = history(client, sid)
    # Reference: the store's history, one version per accepted change, in order.
    assert [(e["version"], e["change_id"], e["base_version"]) for e in h["entries"][-2:]] == \
        [(v + 1, "a", v), (v + 2, "b", v)]
    assert {"step": "drop", "column": "mass_kg"} in h["recipe"]


def test_change_that_no_longer_fits_is_refused_with_the_fresh_view(client, sid) -> None:
    v = history(client, sid)["version"]
    assert change(client, sid, {"step": "drop", "column": "hours"}, v, "first").status_code \
        == 200
    before = history(client, sid)
    r = change(client, sid, {"step": "drop", "column": "hours"}, v, "second")
    # Reference: RFC 9110 §15.5.10, 409 Conflict; dropping a dropped column cannot apply.
    assert r.status_code == 409
    body = r.json()
    assert body["conflict"] is True and body["version"] == v + 1
    assert "changed since version" in body["error"] and "Nothing was saved" in body["error"]
    assert f'data-version="{v + 1}"' in body["html"]
    assert history(client, sid) == before
    # Asked again with the same id, the answer is the same refusal (store's final answer).
    again = change(client, sid, {"step": "drop", "column": "hours"}, v, "second")
    assert again.status_code == 409 and again.json()["error"] == body["error"]


def test_retry_of_a_saved_change_is_not_saved_twice(client, sid) -> None:
    v = history(client, sid)["version"]
    first = change(client, sid, {"step": "drop", "column": "temp_f"}, v, "same-id")
    retry = change(client, sid, {"step": "drop", "column": "temp_f"}, v, "same-id")
    assert first.status_code == retry.status_code == 200
    assert retry.json()["repeated"] is True
    assert retry.json()["saved_as"] == first.json()["saved_as"] == v + 1
    h = history(client, sid)
    # Reference: the store's history holds the id once.
    assert [e["change_id"] for e in h["entries"]].count("same-id") == 1
    assert h["version"] == v + 1
    # The same id for another change is a client mistake (RFC 9110 §15.5.1).
    other = change(client, sid, {"step": "drop", "column": "hours"}, v + 1, "same-id")
    assert other.status_code == 400 and "already used" in other.json()["error"]


def test_undo_on_an_old_version_is_refused(client, sid) -> None:
    step(client, sid, {"step": "drop", "column": "temp_f"})
    v = history(client, sid)["version"]
    step(client, sid, {"step": "drop", "column": "mass_kg"})
    r = client.post(f"/api/s/{sid}/undo", json={"base_version": v, "change_id": "u1"})
    # An undo means "take back what I see last"; after another change that is not the
    # same edit, so it is refused (RFC 9110 §15.5.10) rather than guessed.
    assert r.status_code == 409 and "undo" in r.json()["error"]
    r = client.post(f"/api/s/{sid}/undo", json={"base_version": v + 1, "change_id": "u2"})
    assert r.status_code == 200 and r.json()["position"] == history(client, sid)["position"]


def test_bad_versions_are_client_errors(client, sid) -> None:
    v = history(client, sid)["version"]
    for base in (v + 5, -1, "3", 1.5, True):
        r = change(client, sid, {"step": "drop", "column": "hours"}, base, f"b{base}")
        assert r.status_code == 400, (base, r.text)  # RFC 9110 §15.5.1
        assert r.json()["error"]
    assert history(client, sid)["version"] == v


def test_a_saved_state_that_no_longer_analyses_can_still_be_walked_back(tmp_path, table) -> None:
    """A store that accepts every change stands in for a recipe saved by an older rankscope
    that this one refuses: the page says why and offers undo; nothing saved is lost."""
    from fastapi.testclient import TestClient
    from markupsafe import escape

    from rankscope.design.recipe import Recipe, build_design
    from rankscope.store import Store
    from rankscope.tables.errors import InputError
    from rankscope.tables.read import read_bytes
    from rankscope.web.app import create_app
    from tests.web.conftest import to_csv

    store = Store(tmp_path / "data", check=lambda table, before, change: None)
    client = TestClient(create_app(store))
    sid = client.post("/api/upload", files={"file": ("units.csv", to_csv(table), "text/csv")}
                      ).json()["session"]
    step(client, sid, {"step": "drop", "column": "hours"})
    bad = {"step": "drop", "column": "hours"}
    # Made on version 0, after version 1 exists: the permissive store saves it on top.
    r = change(client, sid, bad, base=0, cid="late")
    assert r.status_code == 200 and r.json()["saved_as"] == 2
    try:
        build_design(read_bytes(to_csv(table), "units.csv"), Recipe([bad, bad]))
    except InputError as e:
        expected = e.message  # reference: the recipe replay's own refusal
    page = client.get(f"/s/{sid}/inspect")
    assert page.status_code == 200  # RFC 9110 §15.3.1: a page, not a server error
    assert 'id="stuck-message"' in page.text
    assert str(escape(expected)) in page.text  # the page's text, escaped as Jinja does
    assert len(history(client, sid)["entries"]) == 2  # everything saved is still there
    r = client.post(f"/api/s/{sid}/undo", json={"base_version": 2, "change_id": "back"})
    assert r.status_code == 200 and 'id="stuck-message"' not in r.json()["html"]
    store.close()


def test_a_refused_change_stays_refused_after_the_session_moves_on(client, sid) -> None:
    v = history(client, sid)["version"]
    drop = {"step": "drop", "column": "mass_sum"}
    first = change(client, sid, drop, v, "early-drop")
    # No such column yet: wrong on the very state its sender saw (RFC 9110 §15.5.1).
    assert first.status_code == 400, first.text
    made = {"step": "combine", "columns": ["mass_lb", "mass_kg"], "method": "sum",
            "name": "mass_sum"}
    assert change(client, sid, made, v, "makes-it").status_code == 200
    # The retry (same id, same base) would fit now, but its answer was given: the same 400.
    retry = change(client, sid, drop, v, "early-drop")
    assert retry.status_code == 400 and retry.json() == first.json()
    h = history(client, sid)
    assert drop not in h["recipe"] and h["version"] == v + 1
    assert "early-drop" not in [e["change_id"] for e in h["entries"]]


def test_a_refused_redo_is_refused_again_in_the_same_words(client, sid) -> None:
    v = history(client, sid)["version"]
    first = client.post(f"/api/s/{sid}/redo", json={"base_version": v, "change_id": "r1"})
    assert first.status_code == 400 and "nothing to redo" in first.json()["error"]
    step(client, sid, {"step": "drop", "column": "temp_f"})
    assert client.post(f"/api/s/{sid}/undo", json={"base_version": v + 1}).status_code == 200
    # Now there is something to redo, and the retry's base is old: still the first answer,
    # not a 409 and not a redo.
    retry = client.post(f"/api/s/{sid}/redo", json={"base_version": v, "change_id": "r1"})
    assert retry.status_code == 400 and retry.json() == first.json()
    assert history(client, sid)["version"] == v + 2
