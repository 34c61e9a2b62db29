"""Two clients edit one session at once over HTTP, 200 changes each, on a real server: the
history holds exactly the changes that were acknowledged, every refusal was said (409), no
retry is saved twice, and both clients end on the same version and recipe.

References: the acknowledgements each client received (status, version saved as), the
store's history read back, RFC 9110 for status codes, and the recipe replayed by hand.
"""

from __future__ import annotations

import re
import threading
import time

import httpx
import numpy as np

from tests.live.conftest import upload

CHANGES = 200
#: Both clients toggle these columns, so their changes cross: a drop of a column the other
#: client has just dropped no longer fits and must come back as a 409.
SHARED = ["a", "b", "c"]
CLIENT_SECONDS = 120.0  # each client's loop is bounded in time as well as in count


def table_csv(n: int = 30, seed: int = 3) -> bytes:
    rng = np.random.default_rng(seed)
    cols = {c: rng.normal(size=n) for c in ["a", "b", "c", "d", "y"]}
    lines = [",".join(cols)] + [",".join(f"{cols[c][i]:.6f}" for c in cols) for i in range(n)]
    return ("\n".join(lines) + "\n").encode()


def dropped_in(recipe: list[dict]) -> set[str]:
    """Columns the recipe leaves dropped, replayed by hand."""
    out: set[str] = set()
    for s in recipe:
        if s["step"] == "drop":
            out.add(s["column"])
        elif s["step"] == "restore":
            out.discard(s["column"])
    return out


def run_client(url: str, sid: str, name: str, seed: int, records: list[dict]) -> None:
    rng = np.random.default_rng(seed)
    with httpx.Client(base_url=url, timeout=30) as client:
        def look() -> tuple[int, set[str]]:
            h = client.get(f"/api/s/{sid}/history").json()
            return h["version"], dropped_in(h["recipe"])

        version, dropped = look()
        last: tuple[dict, dict] | None = None
        deadline = time.monotonic() + CLIENT_SECONDS
        for i in range(CHANGES):
            assert time.monotonic() < deadline, "the clients took too long"
            if last is not None and rng.random() < 0.08:
                body, first = last  # the same change again, as after a lost answer
            else:
                col = str(rng.choice(SHARED))
                step = "restore" if col in dropped else "drop"
                body = {"kind": "step", "payload": {"step": step, "column": col},
                        "base_version": version, "change_id": f"{name}-{i}"}
                first = None
            r = client.post(f"/api/s/{sid}/changes?html=0", json=body)
            rec = {"id": body["change_id"], "status": r.status_code, "body": r.json(),
                   "retry_of": first}
            records.append(rec)
            if first is None:
                last = (body, rec)
            if r.status_code == 200 and not r.json()["rebased"] and not r.json()["repeated"]:
                version = r.json()["saved_as"]
                col = body["payload"]["column"]
                dropped ^= {col}
            else:
                version, dropped = look()  # refused or saved on top: look again


def test_two_clients_200_changes_each(serve) -> None:
    server = serve()
    with httpx.Client(base_url=server.url, timeout=30) as owner:
        sid = upload(owner, "t.csv", table_csv())
        assert owner.post(f"/api/s/{sid}/changes", json={
            "kind": "step", "payload": {"step": "response", "column": "y"}}).status_code == 200
    records: dict[str, list[dict]] = {"A": [], "B": []}
    threads = [threading.Thread(target=run_client, args=(server.url, sid, n, seed, records[n]))
               for n, seed in (("A", 1), ("B", 2))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=CLIENT_SECONDS + 30)
    assert not any(t.is_alive() for t in threads)
    every = records["A"] + records["B"]
    assert len(every) == 2 * CHANGES
    # Every answer is "saved" or "refused, the session moved on" (RFC 9110 §15.3.1, §15.5.10).
    assert {r["status"] for r in every} <= {200, 409}, {r["status"] for r in every}
    conflicts = [r for r in every if r["status"] == 409]
    assert conflicts and all(r["body"]["error"] for r in conflicts)

    with httpx.Client(base_url=server.url, timeout=30) as a, \
            httpx.Client(base_url=server.url, timeout=30) as b:
        ha, hb = a.get(f"/api/s/{sid}/history").json(), b.get(f"/api/s/{sid}/history").json()
    # Both clients converge on one view: the same version and the same recipe.
    assert (ha["version"], ha["recipe"]) == (hb["version"], hb["recipe"])
    # The clients' ids are "A-<i>" / "B-<i>"; the server's own ids are random and may also
    # start with A or B, so match the whole shape.
    entries = [e for e in ha["entries"] if re.fullmatch(r"[AB]-\d+", e["change_id"] or "")]
    saved = {e["change_id"]: e["version"] for e in entries}
    told = {r["id"]: r["body"]["saved_as"] for r in every
            if r["status"] == 200 and not r["body"]["repeated"]}
    # Reference: the acknowledgements. Exactly the acknowledged changes are saved, each at
    # the version its client was told, none twice; refused ones are not saved.
    assert saved == told
    assert len(entries) == len(saved)
    assert not {r["id"] for r in conflicts if r["retry_of"] is None} & set(saved)
    for r in every:
        if r["retry_of"] is not None:
            first = r["retry_of"]
            # Reference: the first answer to the same id.
            assert r["status"] == first["status"]
            if r["status"] == 200:
                assert r["body"]["repeated"] and r["body"]["saved_as"] == \
                    first["body"]["saved_as"]
    # Reference: the saved changes replayed by hand give the recipe the server reports.
    assert [e["version"] for e in ha["entries"]] == list(range(1, len(ha["entries"]) + 1))
    replay = [e["payload"] for e in ha["entries"] if e["kind"] == "step"]
    assert replay == ha["recipe"]
