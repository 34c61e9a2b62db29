"""A file too big for memory streamed into its factor in a background thread (progress, cancel),
then handed to whoever starts its session. Used by `serve --engine stream`; no web, no store.
"""

from __future__ import annotations

import logging
import os
import threading
from collections.abc import Callable
from pathlib import Path
from typing import Any

from rankscope.design.names import quoted, suggestion
from rankscope.design.recipe import Recipe
from rankscope.scale.reduced import Reduced
from rankscope.scale.stream import BLOCK_ROWS, Cancelled, stream_source
from rankscope.scale.stream_source import open_source
from rankscope.tables.errors import InputError

log = logging.getLogger(__name__)

#: Called from the reduction's thread with the finished reduction; returns the session id of
#: the session it started on it.
Begin = Callable[[Reduced], str]


class Reduction:
    """One file streamed block by block in a daemon thread, then started as a session by the
    callback given to start(). The progress routes read status(); cancel() stops it between
    blocks."""

    def __init__(self, path: str | os.PathLike, response: str | None, *,
                 block_rows: int = BLOCK_ROWS) -> None:
        if not response:
            raise InputError("serving a streamed file needs a response column", "",
                             "Name it with --response COL")
        self.path = str(path)
        # Opened here, so a missing file or column is refused before anything listens.
        self._source = open_source(path, name=Path(path).name)
        if response not in self._source.columns:
            raise InputError(f"the file has no column named {quoted(response)}", "--response",
                             suggestion(response, self._source.columns))
        self._recipe = Recipe([{"step": "response", "column": response}])
        self._begin: Begin | None = None
        self._block_rows = block_rows
        self._cancel = threading.Event()
        self._lock = threading.Lock()
        self._status: dict[str, Any] = {
            "state": "running", "file": Path(path).name, "rows": 0, "bytes_done": 0,
            "bytes_total": self._source.bytes_total, "message": None, "session": None}
        self._thread = threading.Thread(target=self._run, name="rankscope-stream",
                                        daemon=True)

    def start(self, begin: Begin) -> None:
        """Start streaming; begin(reduced) starts the session it ends with."""
        self._begin = begin
        self._thread.start()

    def cancel(self) -> None:
        """Ask the stream to stop before its next block (nothing happens once it ended)."""
        self._cancel.set()

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for the thread to end; True when it has."""
        self._thread.join(timeout)
        return not self._thread.is_alive()

    def status(self) -> dict[str, Any]:
        """state (running, done, cancelled, failed), rows, bytes, fraction, stopping (cancel
        pressed, not yet stopped), message, session and its url once done."""
        with self._lock:
            out = dict(self._status)
        total = out["bytes_total"]
        out["fraction"] = min(out["bytes_done"] / total, 1.0) if total else 0.0
        if out["state"] == "done":
            out["fraction"] = 1.0
        out["url"] = f"/s/{out['session']}/inspect" if out["session"] else None
        out["stopping"] = out["state"] == "running" and self._cancel.is_set()
        return out

    def _update(self, **changes: Any) -> None:
        with self._lock:
            self._status.update(changes)

    def _progress(self, rows: int, done: int, total: int) -> None:
        self._update(rows=rows, bytes_done=done, bytes_total=total)

    def _run(self) -> None:
        try:
            F, info = stream_source(self._source, self._recipe, block_rows=self._block_rows,
                                    progress=self._progress, cancel=self._cancel)
            assert self._begin is not None  # start() sets it before the thread runs
            session_id = self._begin(Reduced(F, info, self.path, 1, engine="stream"))
        except Cancelled as e:
            self._update(state="cancelled", message=f"The reduction was cancelled ({e}).")
            return
        except InputError as e:
            self._update(state="failed", message=e.message)
            return
        except Exception as e:  # noqa: BLE001 - the page says it; the server stays up
            log.exception("streaming %s failed", self.path)
            self._update(state="failed", message=f"The reduction stopped: {e}")
            return
        self._update(state="done", rows=info.layout.rows_total, session=session_id,
                     message=f"Reduced {info.layout.rows_total:,} rows in {info.blocks} "
                             f"block(s).")
