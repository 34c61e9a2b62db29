"""The table files of the session store: one Parquet file per uploaded content, named by hash.

Reads and writes files under tables/ only; the database says which sessions use which file.
"""

from __future__ import annotations

import hashlib
import json
import os
import secrets
from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

SUFFIX = ".parquet"
#: Names of files on their way in (written, not yet renamed) or out (deleted, not yet gone).
TEMP_MARK = ".incoming-"
TRASH_MARK = ".outgoing-"


#: Mode of every file in the data folder, whatever the folder's own mode or the umask.
OWNER_ONLY = 0o600


def table_key(data: bytes, sheet: str | int | None, kinds: dict[str, str] | None
              ) -> tuple[str, str]:
    """(SHA-256 of the bytes, file key). The key is the hash itself for a plain read; a
    chosen sheet or declared kinds read the same bytes into another table, so they add a
    short hash of those options to the key."""
    sha = hashlib.sha256(data).hexdigest()
    options: dict[str, Any] = {}
    if sheet is not None:
        options["sheet"] = sheet
    if kinds:
        options["kinds"] = dict(sorted(kinds.items()))
    if not options:
        return sha, sha
    extra = hashlib.sha256(json.dumps(options, sort_keys=True).encode()).hexdigest()[:16]
    return sha, f"{sha}-{extra}"


def path_of(folder: Path, key: str) -> Path:
    return folder / f"{key}{SUFFIX}"


def _fsync_dir(folder: Path) -> None:
    # A rename is durable only once the directory entry itself is on disk (POSIX).
    if os.name != "posix":
        return
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def write_table(path: Path, table: Table) -> None:
    """Write the table's frame (with its row numbers) to path, atomically and durably:
    readers see either no file or the whole file, also after a crash."""
    tmp = path.with_name(f"{TEMP_MARK}{secrets.token_hex(6)}{SUFFIX}")
    try:
        pq.write_table(pa.Table.from_pandas(table.frame, preserve_index=True), tmp)
        os.chmod(tmp, OWNER_ONLY)  # people's tables: readable by their owner only
        with open(tmp, "rb") as f:
            os.fsync(f.fileno())
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    _fsync_dir(path.parent)


#: The dtype each kind has in a Table (see app/tables/table.py); a file written by another
#: pandas or pyarrow version is brought back to these.
_DTYPES = {"numeric": "float64", "boolean": "boolean", "date": "datetime64[ns]"}


def read_table_file(path: Path, kinds: dict[str, str], source: str, notes: list[str]) -> Table:
    """The Table saved at path. Raises InputError when the file is gone or damaged."""
    try:
        frame = pq.read_table(path).to_pandas()
    except FileNotFoundError:
        raise InputError("the saved table of this session is missing", str(path),
                         "Upload the file again to start a new session") from None
    except (OSError, pa.ArrowException) as e:
        raise InputError(f"the saved table of this session cannot be read ({e})", str(path),
                         "Upload the file again to start a new session") from e
    for name, kind in kinds.items():
        s = frame[name]
        if kind == "categorical":
            if not isinstance(s.dtype, pd.CategoricalDtype):
                frame[name] = s.astype("category")
        elif str(s.dtype) != _DTYPES[kind]:
            frame[name] = s.astype(_DTYPES[kind])
    return Table(frame, dict(kinds), source, list(notes))


def move_out(path: Path) -> Path | None:
    """Rename a table file that is about to be deleted, so the deletion can be undone if
    the database transaction fails. None when there was no file."""
    out = path.with_name(f"{TRASH_MARK}{secrets.token_hex(6)}{path.name}")
    try:
        os.replace(path, out)
    except FileNotFoundError:
        return None
    return out


def sweep(folder: Path, used: set[str], older_than: float) -> list[Path]:
    """Remove table files no session uses and leftovers of interrupted writes or deletes,
    last changed before the time older_than (a file being written now is left alone);
    returns what was removed."""
    removed = []
    for p in folder.iterdir():
        leftover = p.name.startswith((TEMP_MARK, TRASH_MARK))
        unused = p.suffix == SUFFIX and p.name[: -len(SUFFIX)] not in used
        if (leftover or unused) and p.stat().st_mtime < older_than:
            p.unlink(missing_ok=True)
            removed.append(p)
    return removed
