"""A real server killed with SIGKILL in the middle of writes, ten times at different moments:
every change a client was told was saved (200) is in the history after a restart on the same
data folder, nothing else but the one change in flight, and the database passes SQLite's own
integrity check.

References: the acknowledgements the clients received; SQLite's `PRAGMA integrity_check` and
the `changes` table read directly with the sqlite3 module after the kill; RFC 9110 status
codes.
"""

from __future__ import annotations

import random
import signal
import sqlite3
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest

from rankscope.store.store import DB_NAME
from tests.live.conftest import HELD, LiveServer, Writer, upload
from tests.web.conftest import to_csv, units_table

ROUNDS = 10
WRITERS = 2  # two sessions written at once, so a kill can fall between two writers' commits
WRITER_SECONDS = 30.0  # a bound on each writer, whatever happens


class Relay:
    """The servers of this module on one data folder: each round kills the running one and
    restarts on the folder, and the restart runs on into the next round. Restarts are held
    servers started a round ahead, so their imports overlap the rounds before. The folder
    keeps every earlier round's sessions."""

    def __init__(self, data_dir: Path) -> None:
        self.data_dir = data_dir
        self.started: list[LiveServer] = []
        self.running: LiveServer | None = None
        self.spares: list[LiveServer] = []

    def current(self) -> LiveServer:
        if self.running is None:
            self.running = self.start()
        return self.running

    def restart(self) -> LiveServer:
        """A held server for this data folder (released after the kill); the next round's
        is started now."""
        while len(self.spares) < 2:
            self.spares.append(self.start(held=True))
        return self.spares.pop(0)

    def start(self, held: bool = False) -> LiveServer:
        server = LiveServer(self.data_dir, held=held, launcher=HELD if held else
                            ("-m", "rankscope.cli"))
        self.started.append(server)
        return server


@pytest.fixture(scope="module")
def relay(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Relay]:
    r = Relay(tmp_path_factory.mktemp("faults") / "data")
    yield r
    for server in r.started:
        server.stop()


def change(i: int) -> dict:
    """The i-th change a writer sends: steps and settings in a cycle that always applies."""
    return [{"kind": "step", "payload": {"step": "drop", "column": "temp_f"}},
            {"kind": "ridge", "payload": {"penalty": round(0.1 * (i % 7), 1)}},
            {"kind": "step", "payload": {"step": "restore", "column": "temp_f"}},
            {"kind": "ridge", "payload": {"penalty": None}}][i % 4]


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")
@pytest.mark.parametrize("round", range(ROUNDS))
def test_acknowledged_changes_survive_sigkill_mid_write(relay: Relay, round: int) -> None:
    rng = random.Random(round)
    # Kill after a different number of acknowledgements and a sub-request delay each
    # round, so the kill lands at varied points of a request (analysis, commit, answer).
    acks_before_kill = rng.randint(1, 30)
    delay = rng.uniform(0.0, 0.05)
    first = relay.current()
    # The restart is imported ahead; it opens the data folder only when released.
    second = relay.restart()
    with httpx.Client(base_url=first.url, timeout=10) as client:
        sids = [upload(client, f"units-{k}.csv", to_csv(units_table(seed=round * WRITERS + k)))
                for k in range(WRITERS)]
    writers = [Writer(first.url, sid, 0, change, prefix=f"r{round}w{k}",
                      seconds=WRITER_SECONDS) for k, sid in enumerate(sids)]
    assert writers[0].wait_for(acks_before_kill, WRITER_SECONDS), writers[0].failures
    time.sleep(delay)
    first.kill()
    relay.running = None
    for w in writers:
        w.join()
        assert not w.failures  # every answer before the kill was a 200
    assert first.proc.returncode == -signal.SIGKILL

    # Straight after the kill, before anything opens it again: the file is sound and holds
    # every acknowledged change. (Opening it lets SQLite read the write-ahead log back.)
    con = sqlite3.connect(relay.data_dir / DB_NAME)
    try:
        assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        rows = set(con.execute("SELECT session_id, version, change_id FROM changes"))
    finally:
        con.close()
    for sid, w in zip(sids, writers, strict=True):
        assert {(sid, v, cid) for v, cid in w.acked} <= rows

    second.release()
    relay.running = second
    with httpx.Client(base_url=second.url, timeout=10) as again:
        for sid, w in zip(sids, writers, strict=True):
            h = again.get(f"/api/s/{sid}/history")
            assert h.status_code == 200, h.text
            entries = h.json()["entries"]
            saved = [(e["version"], e["change_id"]) for e in entries]
            # Reference: the acknowledgements. They are the start of what is saved; the one
            # change in flight at the kill may be saved too, though its sender never heard.
            assert saved[:len(w.acked)] == w.acked
            assert len(saved) <= len(w.acked) + 1
            assert [v for v, _ in saved] == list(range(1, len(saved) + 1))
            # Each saved change is the one its sender sent under that id, unaltered.
            for e in entries:
                assert {"kind": e["kind"], "payload": e["payload"]} == \
                    change(int(e["change_id"].rsplit("-", 1)[1]))
            # The session takes the next change on top of its last saved version.
            r = again.post(f"/api/s/{sid}/changes?html=0", json={
                **change(len(saved)), "base_version": len(saved), "change_id": "after"})
            assert r.status_code == 200 and r.json()["saved_as"] == len(saved) + 1, r.text
