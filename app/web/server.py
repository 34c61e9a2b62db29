"""Runs the inspection app with uvicorn on a loopback address and opens the browser.

Serving only: the app is built in app.py; nothing here reads data beyond the given file.
"""

from __future__ import annotations

import threading
import time
import webbrowser

import uvicorn

from app.tables.read import read_table
from app.web.app import create_app


def _open_when_up(server: uvicorn.Server, url: str) -> None:
    # Open the page only once the socket listens, so the browser never sees a refusal.
    for _ in range(200):
        if server.started:
            webbrowser.open(url)
            return
        time.sleep(0.05)


def run(path: str | None, host: str = "127.0.0.1", port: int = 8765,
        open_browser: bool = True) -> None:
    """Serve the app; with a path, read it first (an InputError is raised before the
    server starts) and open its overview page, else the upload page."""
    app = create_app()
    start = "/"
    if path is not None:
        session = app.state.bench.start(read_table(path))
        start = f"/s/{session.session_id}"
    config = uvicorn.Config(app, host=host, port=port, log_level="warning")
    server = uvicorn.Server(config)
    shown = f"[{host}]" if ":" in host else host
    url = f"http://{shown}:{port}{start}"
    print(f"rankscope is serving at {url} (Ctrl+C stops it)", flush=True)
    if open_browser:
        threading.Thread(target=_open_when_up, args=(server, url), daemon=True).start()
    server.run()
