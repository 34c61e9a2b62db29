"""Crash safety and concurrent writers: acknowledged changes survive SIGKILL; racing writers
never share a version, never lose an accepted change, never apply one twice.

References: the acknowledgements the writers printed, SQLite's integrity check, the recipe rule
that a column cannot be dropped twice, and a plain count of versions.
"""

from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import threading
from pathlib import Path

import pytest

from rankscope.design.recipe import build_design
from rankscope.store import Applied, Change, Conflict, Store
from tests.store.data import TOGGLED, csv_bytes
from tests.store.worker import race

ROOT = Path(__file__).resolve().parents[2]
ACKS_BEFORE_KILL = 25


def _worker(*args: str) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "tests.store.worker", *args], cwd=ROOT,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")
def test_acknowledged_changes_survive_sigkill(tmp_path: Path) -> None:
    with Store(tmp_path) as store:
        sid = store.create_session(csv_bytes(20), "t.csv").session_id
    proc = _worker("crash", str(tmp_path), sid)
    acked: list[tuple[int, str]] = []
    assert proc.stdout is not None
    for line in proc.stdout:
        _, version, cid = line.split()
        acked.append((int(version), cid))
        if len(acked) == ACKS_BEFORE_KILL:
            os.kill(proc.pid, signal.SIGKILL)  # mid-stream: it is already writing the next
            break
    proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL, proc.stderr.read() if proc.stderr else ""
    with Store(tmp_path) as store:
        history = store.load(sid).history
    # Reference: the sequence the writer printed before it died is a prefix of what is
    # saved (it may have saved one or two more that it could not print).
    assert [(e.version, e.change_id) for e in history[:len(acked)]] == acked
    assert [e.version for e in history] == list(range(1, len(history) + 1))
    # Reference: SQLite's own consistency check of the file after recovery.
    con = sqlite3.connect(tmp_path / "sessions.sqlite3")
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    con.close()


def _check_race(store: Store, sid: str, records: list[dict], attempts: int) -> None:
    state = store.load(sid)
    history = state.history
    # Reference: a version counter; each version exactly once, none skipped.
    assert [e.version for e in history] == list(range(1, len(history) + 1))
    # Every attempt got an answer.
    assert len(records) == attempts
    accepted = {r["id"]: r["version"] for r in records if r["outcome"] == "applied"}
    saved = {e.change_id: e.version for e in history}
    # Reference: the writers' own acknowledgements. Accepted ones are all saved, at the
    # version they were told; nothing else is saved; nothing is saved twice.
    assert saved == accepted
    assert len(history) == len(saved)
    for r in records:
        if r["outcome"] in ("conflict", "refused"):
            assert r["id"] not in saved and r["message"], r
        if r["retry"]:
            # Reference: the first answer to the same id. A retry is answered the same way:
            # "repeated" at the same version if it was applied, the same words if refused.
            first = r["first"]
            if first["outcome"] in ("applied", "repeated"):
                assert (r["outcome"], r["version"]) == ("repeated", first["version"]), r
            else:
                assert (r["outcome"], r["message"]) == (first["outcome"], first["message"]), r
    # Reference: the recipe rule that a column cannot be dropped while dropped, nor restored
    # while present; a stale change applied blindly would break it somewhere in the history.
    dropped: set[str] = set()
    for s in state.recipe:
        col = s["column"]
        assert (col in dropped) == (s["step"] == "restore"), s
        dropped ^= {col}
    build_design(state.table, state.recipe)  # Reference: the final recipe replays.
    outcomes = [r["outcome"] for r in records]
    # The race really happened: some changes were applied on top of others, some refused.
    assert any(r.get("rebased") for r in records)
    assert "conflict" in outcomes and "repeated" in outcomes


def test_two_processes_200_changes_each(tmp_path: Path) -> None:
    with Store(tmp_path) as store:
        sid = store.create_session(csv_bytes(21), "t.csv").session_id
        procs = [_worker("race", str(tmp_path), sid, name, str(seed), "200")
                 for name, seed in (("left", 1), ("right", 2))]
        records = []
        for p in procs:
            out, err = p.communicate(timeout=300)
            assert p.returncode == 0, err
            records += [json.loads(line) for line in out.splitlines()]
        _check_race(store, sid, records, 400)


def test_two_threads_200_changes_each(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    with Store(tmp_path) as store:
        sid = store.create_session(csv_bytes(22), "t.csv").session_id
    errors: list[BaseException] = []

    def run(name: str, seed: int) -> None:
        try:
            race(str(tmp_path), sid, name, seed, 200)
        except BaseException as e:  # noqa: BLE001 - reported by the test below
            errors.append(e)

    threads = [threading.Thread(target=run, args=(n, s)) for n, s in (("up", 3), ("down", 4))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=300)
    assert not errors, errors
    records = [json.loads(line) for line in capsys.readouterr().out.splitlines()]
    with Store(tmp_path) as store:
        _check_race(store, sid, records, 400)


def test_same_change_from_two_threads_is_saved_once(tmp_path: Path) -> None:
    with Store(tmp_path) as store:
        sid = store.create_session(csv_bytes(23), "t.csv").session_id
        outcomes: list[Applied | Conflict] = []
        barrier = threading.Barrier(2)

        def send() -> None:
            with Store(tmp_path) as own:  # its own connection: SQLite does the locking
                barrier.wait()
                outcomes.append(own.apply_change(
                    sid, 0, Change("step", {"step": "drop", "column": TOGGLED[0]}, "twice")))

        threads = [threading.Thread(target=send) for _ in range(2)]
        for t in threads:
            t.start()
        for t in threads:
            t.join(timeout=60)
        # Reference: "at most once" — one of the two is the retry of the other.
        assert sorted(o.repeated for o in outcomes) == [False, True]  # type: ignore[union-attr]
        assert [e.change_id for e in store.load(sid).history] == ["twice"]
