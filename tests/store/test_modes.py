"""Files in the data folder are the owner's only (0600, folders 0700), whatever the folder's
own mode and the process umask: people's tables, titles and changes are private.

Reference: the POSIX permission bits as os.stat reports them."""

from __future__ import annotations

import os
import stat
from pathlib import Path

from rankscope.store import Store
from tests.store.data import csv_bytes


def _mode(path: Path) -> int:
    return stat.S_IMODE(os.stat(path).st_mode)


def test_files_are_owner_only_in_an_open_folder(tmp_path: Path) -> None:
    folder = tmp_path / "shared"
    folder.mkdir(mode=0o755)
    os.chmod(folder, 0o755)  # an existing, world-readable folder
    old = os.umask(0o022)
    try:
        with Store(folder) as s:
            made = s.create_session(csv_bytes(), "units.csv")
            s.rename(made.session_id, "private title")
            files = [p for p in folder.rglob("*") if p.is_file()]
            dirs = [p for p in folder.rglob("*") if p.is_dir()]
            assert any(p.name.endswith(".sqlite3") for p in files)
            assert any(p.suffix == ".parquet" for p in files)
            for p in files:
                assert _mode(p) == 0o600, (p.name, oct(_mode(p)))
            for d in dirs:
                assert _mode(d) == 0o700, (d.name, oct(_mode(d)))
    finally:
        os.umask(old)
