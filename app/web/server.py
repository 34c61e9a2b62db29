"""Runs the web app with uvicorn: on this computer only by default, on the local network when
sharing; prints the links and opens the browser. Serving only: the app is built in app.py.
"""

from __future__ import annotations

import ipaddress
import os
import socket
import threading
import time
import webbrowser
from collections.abc import Callable
from pathlib import Path

import uvicorn

from rankscope.store import Store
from rankscope.store.records import Created
from rankscope.tables.read import read_table
from rankscope.web.access.connections import raise_open_files, serving
from rankscope.web.access.guard import hosts_for
from rankscope.web.access.limits import Limits
from rankscope.web.access.links import link
from rankscope.web.app import create_app
from rankscope.web.engines import open_store
from rankscope.web.state import Session

#: Seconds a stopping server waits for open requests; live feeds never end on their own
#: quickly, so without a bound Ctrl+C would wait for every open page.
SHUTDOWN_SECONDS = 2


def _open_when_up(server: uvicorn.Server, url: str) -> None:
    # Open the page only once the socket listens, so the browser never sees a refusal.
    for _ in range(200):
        if server.started:
            webbrowser.open(url)
            return
        time.sleep(0.05)


def is_loopback(host: str) -> bool:
    """True for addresses only this computer can reach (127.0.0.0/8, ::1, localhost)."""
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def reachable_host(host: str) -> str:
    """The address others should use: for a wildcard bind, this computer's address on the
    local network (a UDP socket is 'connected' only to ask the routing table; nothing is
    sent), else the host as given."""
    if host not in ("0.0.0.0", "::", ""):
        return host
    with socket.socket(socket.AF_INET, socket.SOCK_DGRAM) as s:
        try:
            s.connect(("10.255.255.255", 1))
            return str(s.getsockname()[0])
        except OSError:
            return socket.gethostname()


def base_url(host: str, port: int) -> str:
    return f"http://[{host}]:{port}" if ":" in host else f"http://{host}:{port}"


def _announce(base: str, share: bool) -> Callable[[Session, Created], None]:
    """What a streamed file's reduction prints when its session is ready."""
    def done(session: Session, made: Created) -> None:
        sid = made.session_id
        print(f"rankscope: the file is reduced; its session is at {base}/s/{sid}/inspect",
              flush=True)
        if share:
            print(f"  edit link:        {link(base, sid, made.edit_token)}", flush=True)
            print(f"  view-only link:   {link(base, sid, made.view_token)}", flush=True)
    return done


def run(path: str | os.PathLike | None, host: str = "127.0.0.1", port: int = 8765,
        open_browser: bool = True, *, data_dir: str | os.PathLike | None = None,
        share: bool = False, engine: str = "memory", scheduler: str | None = None,
        response: str | None = None, limits: Limits | None = None,
        host_names: list[str] | None = None, table_memory: int | None = None) -> None:
    """Serve the app with sessions kept in data_dir (default ~/.rankscope). With a path,
    read it first (an InputError is raised before anything is saved or listens) and open
    it as a new session. share, or any address beyond this computer, makes every request
    need a link's token; the links are printed. engine "dask": path is a Parquet dataset
    folder, reduced once on Dask (scheduler: a cluster's address, None: a local cluster)
    with `response` as y; its session analyses that factor. engine "stream": path is one
    file, streamed into its factor in the background while the browser shows its progress
    (/reducing, with a Cancel button); the session opens when it is done. limits: upload
    size, table shape and analysis time (default: Limits()), also applied to path.
    host_names: further names (without port) the server answers to, beyond loopback, the
    bind address and the printed address; any other Host header is refused. table_memory:
    bytes of uploaded tables held in memory between requests (default: an eighth of the
    computer's memory; see rankscope.store.held)."""
    limits = limits or Limits()
    table = data = None
    if path is not None and engine not in ("dask", "stream"):
        name = Path(path).name
        table = read_table(path, name=name, **limits.reading())
        data = Path(path).read_bytes()
    share = share or not is_loopback(host)
    base = base_url(reachable_host(host), port)
    public_url = base if share else None
    made = None
    if engine == "dask":
        from rankscope.web.engines import create_dask_app  # dask loads only for this engine

        app, _, made = create_dask_app(path or "", response, scheduler, data_dir,
                                       share=share, public_url=public_url)
        store: Store = app.state.sessions.db
    elif engine == "stream":
        from rankscope.web.engines import create_stream_app

        app = create_stream_app(path or "", response, data_dir, share=share,
                                public_url=public_url, on_done=_announce(base, share))
        store = app.state.sessions.db
    else:
        store = open_store(data_dir, table_memory)
        app = create_app(store, share=share, public_url=public_url, limits=limits)
    app.state.allowed_hosts = hosts_for(host, port, reachable_host(host),
                                        *(host_names or ()))  # DNS rebinding
    lines = []
    start = f"{base}/"
    if share:
        start = f"{base}/?t={app.state.owner_key}"
        lines.append(f"  your start page:  {start} (keep it to yourself: it opens every "
                     "session)")
    if data is not None and table is not None:
        session, made = app.state.analyst.start(data, table.source, table)
    if engine == "stream":
        start = f"{base}/reducing" + (f"?t={app.state.owner_key}" if share else "")
    if made is not None:
        sid = made.session_id
        # Your own browser opens the session with the key it already has: the owner key
        # when sharing (so the start page opens too), else the session's edit key.
        start = link(base, sid, app.state.owner_key if share else made.edit_token)
        if share:
            lines.append(f"  edit link:        {link(base, sid, made.edit_token)}")
            lines.append(f"  view-only link:   {link(base, sid, made.view_token)}")
    where = "on your network" if share else "on this computer only"
    print(f"rankscope is serving {where} at {start} (Ctrl+C stops it)", flush=True)
    for line in lines:
        print(line, flush=True)
    print(f"  sessions are kept in {store.root}", flush=True)
    if share:
        print("  every request needs one of these links; anyone who has a link can use it "
              "until its session is deleted", flush=True)
    # Connections are capped by what the open-file limit allows, raised first to the hard
    # limit; live feeds get their share of it (see access/connections.py).
    server = serving(app, host=host, port=port, open_files=raise_open_files(),
                     log_level="warning", timeout_graceful_shutdown=SHUTDOWN_SECONDS)
    app.state.live.bound_by(server.registry.caps.total)
    if open_browser:
        threading.Thread(target=_open_when_up, args=(server, start), daemon=True).start()
    try:
        server.run()
    finally:
        reduction = getattr(app.state, "reduction", None)
        if reduction is not None:  # stop streaming before its session store closes
            reduction.cancel()
            reduction.wait()
        store.close()
