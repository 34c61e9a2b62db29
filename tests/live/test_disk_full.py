"""A real server whose data folder is a small tmpfs the test mounts and then fills: upload,
rename, a change and a pin answer 507 with a message saying what happened and what to do,
nothing saved before is lost, the same keep-alive connection keeps working, and once space
is freed the same change id is saved.

References: RFC 4918 §11.5 (507 Insufficient Storage), RFC 9110 (status codes, persistent
connections §9.3); the history as the server gave it before the disk filled; the kernel's
own ENOSPC from the filled tmpfs. Needs root and mount namespaces (`unshare -m`): skipped,
with the reason, where mounting is not allowed.
"""

from __future__ import annotations

import errno
import shutil
import subprocess
import sys
from pathlib import Path

import httpx
import pytest

from tests.live.conftest import LiveServer, upload
from tests.web.conftest import to_csv, units_table

SIZE = "3m"  # the tmpfs: room for the database, one small table and a little more


def mounting_allowed() -> str | None:
    """None when this process may mount a tmpfs in a namespace of its own, else why not."""
    if shutil.which("unshare") is None or shutil.which("mount") is None:
        return "the unshare and mount commands are not installed"
    probe = subprocess.run(["unshare", "-m", "--propagation", "private", "sh", "-c",
                            "mount -t tmpfs -o size=1m tmpfs /mnt"], capture_output=True,
                           text=True)
    if probe.returncode != 0:
        return f"mounting a tmpfs is not allowed here ({probe.stderr.strip()[:120]})"
    return None


def on_tmpfs(folder: Path) -> tuple[str, ...]:
    """A launcher (python arguments) that mounts a tmpfs of SIZE on folder in a mount
    namespace of its own, then runs the command line there: the same process id throughout
    (exec), so the test reaches the folder through /proc/<pid>/root."""
    mount = f'mount -t tmpfs -o size={SIZE} tmpfs "$0" && exec "$@"'
    script = ("import os, sys; os.execvp('unshare', ['unshare', '-m', '--propagation', "
              f"'private', 'sh', '-c', {mount!r}, {str(folder)!r}, sys.executable, '-m', "
              "'rankscope.cli', *sys.argv[1:]])")
    return ("-c", script)


def fill(folder: Path) -> Path:
    """Write a file in folder until the disk refuses (ENOSPC); returns the file."""
    filler = folder / "filler"
    with open(filler, "wb", buffering=0) as f:  # unbuffered: nothing left to flush
        for chunk in (1 << 16, 1 << 12, 1 << 9, 1):
            try:
                while True:
                    f.write(b"\0" * chunk)
            except OSError as e:
                assert e.errno == errno.ENOSPC, e
    return filler


@pytest.mark.skipif(sys.platform != "linux", reason="tmpfs and mount namespaces are Linux's")
def test_a_full_disk_is_a_worded_507_and_nothing_is_lost(tmp_path: Path) -> None:
    why = mounting_allowed()
    if why is not None:
        pytest.skip(why)
    folder = tmp_path / "data"
    folder.mkdir()
    server = LiveServer(folder, launcher=on_tmpfs(folder))
    try:
        inside = Path(f"/proc/{server.proc.pid}/root") / str(folder).lstrip("/")
        with httpx.Client(base_url=server.url, timeout=30) as client:
            sid = upload(client, "units.csv", to_csv(units_table()))
            r = client.post(f"/api/s/{sid}/changes?html=0", json={
                "kind": "step", "payload": {"step": "response", "column": "load"},
                "change_id": "first"})
            assert r.status_code == 200, r.text
            before = client.get(f"/api/s/{sid}/history").json()
            filler = fill(inside)

            drop = {"kind": "step", "payload": {"step": "drop", "column": "temp_f"},
                    "base_version": 1, "change_id": "on-a-full-disk"}
            answers = {
                "upload": client.post("/api/upload", files={
                    "file": ("other.csv", to_csv(units_table(seed=3)), "text/csv")}),
                "rename": client.post(f"/api/s/{sid}/title", json={"title": "renamed"}),
                "change": client.post(f"/api/s/{sid}/changes?html=0", json=drop),
                "pin": client.post(f"/api/s/{sid}/pins?html=0", json={"label": "kept"}),
            }
            for what, r in answers.items():
                # RFC 4918 §11.5: the server cannot store what the request needs.
                assert r.status_code == 507, (what, r.status_code, r.text)
                text = r.json()["error"]
                assert "disk is full" in text and "Free some space" in text, (what, text)
                assert "Error" not in text and "please report" not in text, (what, text)
            # Everything saved before is there, over the same connection (keep-alive).
            assert client.get(f"/api/s/{sid}/history").json() == before
            assert client.get("/api/sessions").json()[0]["title"] == "units.csv"

            filler.unlink()
            # A 507 is no answer to the change id: with room again, its retry is saved.
            r = client.post(f"/api/s/{sid}/changes?html=0", json=drop)
            assert r.status_code == 200 and r.json()["saved_as"] == 2, r.text
    finally:
        server.stop()
