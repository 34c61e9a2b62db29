"""One virtual user of the load driver: uploads the demo table, opens its analysis, then edits
and reads it in a loop until a deadline, recording every request.

Network and clock only; the summing up is in load_stats.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import httpx

from rankscope.benchmarks.load_stats import Sample, is_error

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "cold_storage.csv"
RESPONSE = "energy_kwh"
#: The edits a user walks round, each valid on the state the one before leaves: linear
#: changes (on the factor), undo and redo, settings, and one change rebuilt from the rows.
EDIT_CYCLE: tuple[tuple[str, dict[str, Any]], ...] = (
    ("changes", {"kind": "step", "payload": {"step": "drop", "column": "outdoor_temp_f"}}),
    ("undo", {}),
    ("redo", {}),
    ("changes", {"kind": "step", "payload": {"step": "restore", "column": "outdoor_temp_f"}}),
    ("changes", {"kind": "ridge", "payload": {"penalty": 0.5}}),
    ("changes", {"kind": "step", "payload": {"step": "drop", "column": "pallets_moved"}}),
    ("changes", {"kind": "keep", "payload": {"column": "goods_in_kg"}}),
    ("changes", {"kind": "ridge", "payload": {"penalty": None}}),
    ("changes", {"kind": "step", "payload": {"step": "restore", "column": "pallets_moved"}}),
    ("changes", {"kind": "step", "payload": {"step": "log", "column": "humidity_pct"}}),
    ("undo", {}),
)
#: How many failed requests are kept with their answer, to print beside the table.
KEEP_FAILURES = 10


def distinct_table(table: bytes, k: int) -> tuple[str, bytes]:
    """User k's own file: the table without its data row k (modulo the row count), under
    its own name, so every user's content and name differ (as in a team, each with their
    own file); every change of EDIT_CYCLE stays valid on it."""
    header, *rows = table.splitlines(keepends=True)
    del rows[k % len(rows)]
    return f"{DEMO.stem}_user{k}{DEMO.suffix}", b"".join([header, *rows])


@dataclass
class Recorder:
    """Every request's sample, and the first few failures in words. Shared by the user
    threads: list.append is atomic, so no lock."""

    samples: list[Sample] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)

    def timed(self, kind: str, send: Callable[[], httpx.Response]) -> httpx.Response | None:
        start = time.perf_counter()
        try:
            r: httpx.Response | None = send()
            status: int | None = r.status_code
            what = ""
        except httpx.HTTPError as exc:
            r, status, what = None, None, f"{type(exc).__name__}: {exc}"
        sample = Sample(kind, time.perf_counter() - start, status)
        self.samples.append(sample)
        if is_error(sample):  # only then is the body decoded: the client's time counts too
            self.note(f"{kind}: {what}" if r is None else f"{kind}: {status} {r.text[:200]}")
        return r

    def note(self, failure: str) -> None:
        if len(self.failures) < KEEP_FAILURES:
            self.failures.append(failure)


def guarded_user(url: str, name: str, table: bytes, deadline: float, rec: Recorder,
                 think: float = 0.0, filename: str = DEMO.name) -> None:
    """virtual_user, with anything unexpected (an answer that is not the JSON it should
    be) counted as an error of kind "client" instead of silently ending the thread."""
    try:
        virtual_user(url, name, table, deadline, rec, think, filename)
    except Exception as exc:  # noqa: BLE001 - every failure must reach the table
        rec.samples.append(Sample("client", 0.0, None))
        rec.note(f"client {name}: {type(exc).__name__}: {exc}")


def virtual_user(url: str, name: str, table: bytes, deadline: float, rec: Recorder,
                 think: float = 0.0, filename: str = DEMO.name) -> None:
    """Upload table as filename, open, then edit and read until the deadline (think:
    seconds of pause between requests, as a person reads the page; 0 drives the server
    flat out)."""
    with httpx.Client(base_url=url, timeout=60) as client:
        r = rec.timed("upload", lambda: client.post(
            "/api/upload", files={"file": (filename, table, "text/csv")}))
        if r is None or r.status_code != 201:
            return  # recorded as an error; there is no session to go on with
        sid = r.json()["session"]
        rec.timed("read", lambda: client.get(f"/s/{sid}/inspect"))
        version = _edit(client, rec, sid, "changes", {
            "kind": "step", "payload": {"step": "response", "column": RESPONSE}}, 0, name)
        i = 0
        while time.monotonic() < deadline:
            what, body = EDIT_CYCLE[i % len(EDIT_CYCLE)]
            time.sleep(think)
            version = _edit(client, rec, sid, what, body, version, f"{name}-{i}")
            time.sleep(think)
            rec.timed("read", lambda: client.get(f"/api/s/{sid}/diagnosis"))
            if i % len(EDIT_CYCLE) == len(EDIT_CYCLE) - 1:
                rec.timed("read", lambda: client.get(f"/s/{sid}/inspect"))
            i += 1


def _edit(client: httpx.Client, rec: Recorder, sid: str, what: str, body: dict[str, Any],
          version: int, change_id: str) -> int:
    """Send one versioned change (with the page fragment, as the browser asks); the
    session's version after it."""
    full = {**body, "base_version": version, "change_id": change_id}
    r = rec.timed("edit", lambda: client.post(f"/api/s/{sid}/{what}", json=full))
    if r is not None and r.status_code in (200, 409):
        return int(r.json()["version"])
    h = rec.timed("read", lambda: client.get(f"/api/s/{sid}/history"))
    return int(h.json()["version"]) if h is not None and h.status_code == 200 else version
