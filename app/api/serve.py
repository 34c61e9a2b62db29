"""serve(): open the web app on a table, formula or fitted model from a notebook, as a new
session on a server in a background thread (started on 127.0.0.1 on first use).

The same app, store and limits as `rankscope serve`; nothing computed here.
"""

from __future__ import annotations

import atexit
import os
import socket
import threading
import time
import webbrowser
from dataclasses import dataclass
from typing import Any

import pandas as pd

from rankscope.api.inputs import as_table, is_table_like
from rankscope.api.models import fitted_design, model_of
from rankscope.api.result import Inspection
from rankscope.design.design import INTERCEPT, Design
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

HOST = "127.0.0.1"


@dataclass
class Running:
    """The notebook's server: uvicorn in a daemon thread, its app and address."""

    server: Any
    thread: threading.Thread
    app: Any
    base: str
    store: Any


_running: Running | None = None
_lock = threading.Lock()


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((HOST, 0))
        return int(s.getsockname()[1])


def _start(port: int | None, data_dir: str | os.PathLike | None, limits: Any) -> Running:
    from rankscope.store import Store, default_root
    from rankscope.web.access.connections import raise_open_files, serving
    from rankscope.web.access.guard import hosts_for
    from rankscope.web.app import create_app
    from rankscope.web.server import SHUTDOWN_SECONDS, base_url

    port = port or _free_port()
    store = Store(data_dir if data_dir is not None else default_root())
    app = create_app(store, limits=limits)
    app.state.allowed_hosts = hosts_for(HOST, port, HOST)  # as `rankscope serve` does
    # The same connection deadlines and caps, and feed bounds, as `rankscope serve`.
    server = serving(app, host=HOST, port=port, open_files=raise_open_files(),
                     log_level="warning", timeout_graceful_shutdown=SHUTDOWN_SECONDS)
    app.state.live.bound_by(server.registry.caps.total)
    # uvicorn installs signal handlers only in the main thread; here the notebook keeps them.
    thread = threading.Thread(target=server.run, name="rankscope-serve", daemon=True)
    thread.start()
    deadline = time.monotonic() + 20
    while not server.started:
        if time.monotonic() > deadline or not thread.is_alive():
            store.close()
            raise InputError(f"the server could not start on {HOST}:{port}", "serve",
                             "Choose another port (port=...)")
        time.sleep(0.05)
    return Running(server, thread, app, base_url(HOST, port), store)


def stop() -> None:
    """Stop the notebook's server (it also stops when Python exits)."""
    global _running
    with _lock:
        if _running is None:
            return
        _running.server.should_exit = True
        _running.thread.join(timeout=10)
        _running.store.close()
        _running = None


atexit.register(stop)


def _design_table(design: Design) -> tuple[Table, list[dict[str, Any]]]:
    """A fitted model's design as a table of its columns (the intercept as the recipe's
    intercept step) and the steps that make it that design again."""
    cols = {c: design.X[:, j] for j, c in enumerate(design.columns) if c != INTERCEPT}
    steps: list[dict[str, Any]] = []
    if design.y is not None:
        name = design.response or "y"
        if name in cols:
            raise InputError(f"the response {name!r} is also a column of the design", "serve")
        cols[name] = design.y
        steps.append({"step": "response", "column": name})
    if not design.intercept:
        steps.append({"step": "intercept", "include": False})
    index = pd.RangeIndex(1, design.X.shape[0] + 1, name="record")
    frame = pd.DataFrame(cols, index=index)
    return Table(frame, dict.fromkeys(cols, "numeric"), source="model"), steps


def _starting_point(data: Any, response: str | None, formula: str | None, recipe: Any
                    ) -> tuple[Table, list[dict[str, Any]], str]:
    from rankscope.api.entry import _recipe

    if isinstance(data, Inspection):
        table, steps = _design_table(data.design)
        return table, steps, data.source
    if not is_table_like(data) and model_of(data) is not None:
        fitted = fitted_design(data)
        table, steps = _design_table(fitted.design)
        return table, steps, fitted.source
    table = as_table(data)
    extra = _recipe(recipe).steps
    if formula is not None:
        from rankscope.design.formula import start

        begun = start(table, formula)
        return begun.table, [*begun.steps, *extra], table.source
    first = [{"step": "response", "column": response}] if response else []
    return table, [*first, *extra], table.source


def serve(data: Any, response: str | None = None, *, formula: str | None = None,
          recipe: Any = None, name: str | None = None, port: int | None = None,
          data_dir: str | os.PathLike | None = None, limits: Any = None,
          open_browser: bool = False) -> str:
    """Open the web app on a design, as a new session; returns its address.

    Parameters
    ----------
    data : DataFrame, pyarrow.Table, polars.DataFrame, path, fitted model or Inspection
        What `inspect` accepts. A fitted model or an Inspection opens as a table of its
        design's columns (the formula's terms are not groups in the web app).
    response, formula, recipe
        As for `inspect`; the steps become the session's first changes, so the usual
        controls and undo work on top of them.
    name : str, optional
        The session's title (default: where the data came from).
    port : int, optional
        The port of the server when it is started here (default: a free one).
    data_dir : path, optional
        Where sessions are kept (default ~/.rankscope, as `rankscope serve`).
    limits : rankscope.web.access.limits.Limits, optional
        Upload, table and time limits (default: those of `rankscope serve`).
    open_browser : bool
        Open the address in the browser as well.

    Returns
    -------
    str
        The session's address on http://127.0.0.1, with its edit key.
    """
    global _running
    from rankscope.web.access.limits import Limits
    from rankscope.web.access.links import link
    from rankscope.web.routes.formulas import start_session

    table, steps, source = _starting_point(data, response, formula, recipe)
    limits = limits or Limits()
    with _lock:
        if _running is None or not _running.thread.is_alive():
            _running = _start(port, data_dir, limits)
        running = _running
    _, made = start_session(running.app.state.analyst, table, steps, name or source, limits)
    url = link(running.base, made.session_id, made.edit_token)
    if open_browser:
        webbrowser.open(url)
    return url


__all__ = ["serve", "stop"]
