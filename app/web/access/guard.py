"""The outer guard: refuses requests for a host name this server is not (DNS rebinding) and
changes from other sites, and puts the browser security headers on every answer.

An ASGI middleware in front of the access gate; it reads headers only, never data or tokens.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Collection
from urllib.parse import urlsplit

from rankscope.web.rendering.render import render

#: Names that reach this computer only. Browsers send IPv6 literals in brackets (RFC 3986).
LOOPBACK_NAMES = ("127.0.0.1", "localhost", "[::1]")
#: The Host Starlette's TestClient sends; allowed by default so in-process tests need no setup.
TEST_HOST = "testserver"
#: create_app's default: these names on any port (a server that does not know its port yet).
DEFAULT_HOSTS = frozenset((*LOOPBACK_NAMES, TEST_HOST))
SAFE_METHODS = {"GET", "HEAD", "OPTIONS"}
DEFAULT_PORTS = {"http": 80, "https": 443, "ws": 80, "wss": 443}

#: CSP Level 3. No inline or evaluated script anywhere: every script is a file under 'self'
#: (the workspace's <script type="application/json"> block is data, never run). Plotly
#: writes style attributes and <style> rules as it draws, hence 'unsafe-inline' for styles
#: only; its modebar icons and image export use data: and blob: images.
CSP = "; ".join([
    "default-src 'self'",
    "script-src 'self'",
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data: blob:",
    "connect-src 'self'",
    "object-src 'none'",
    "base-uri 'none'",
    "frame-ancestors 'none'",
    "form-action 'self'",
])
HEADERS = [
    (b"content-security-policy", CSP.encode()),
    (b"x-content-type-options", b"nosniff"),
    # frame-ancestors says the same to current browsers; this is for older ones.
    (b"x-frame-options", b"DENY"),
    # Other sites may not load our answers as images, scripts or styles (Fetch standard).
    (b"cross-origin-resource-policy", b"same-origin"),
]

NO_HOST = ("The request has no Host header, so rankscope cannot tell which address it was "
           "sent to (HTTP/1.1 requires one, RFC 9112 §3.2). Send the request with the address "
           "rankscope printed when it started.")
WRONG_HOST = ("This rankscope server does not answer to the address {host}. A page on another "
              "site may be trying to reach it under a borrowed name (DNS rebinding), so it is "
              "refused. Open rankscope with the address it printed when it started (on this "
              "computer: http://127.0.0.1:<port>/ or http://localhost:<port>/); to reach it "
              "by this name on purpose, start it with rankscope serve --host-name NAME.")
CROSS_SITE = ("This change was sent by a page from {origin}, not by rankscope's own pages, so "
              "it is refused (a page on another site may not change your sessions). Make the "
              "change on the rankscope page itself.")


def netloc(host: str, port: int | None = None) -> str:
    """host[:port] as a browser writes it in the Host header: lower case, IPv6 in brackets."""
    host = host.lower()
    if ":" in host and not host.startswith("["):
        host = f"[{host}]"
    return host if port is None else f"{host}:{port}"


def hosts_for(bind: str, port: int, reachable: str, *names: str) -> frozenset[str]:
    """The Host values a server bound to `bind`:`port` answers to: the loopback names, the
    bind address, the address printed in its links (`reachable`) and any further names
    the person serving gave (`rankscope serve --host-name`), all on that port."""
    return frozenset(netloc(h, port) for h in (*LOOPBACK_NAMES, bind, reachable, *names)
                     if h)


def split_host(value: str, scheme: str) -> tuple[str, int] | None:
    """(name, port) of a Host header value, the scheme's default port when none is given;
    None when it is not a host (RFC 9110 §7.2: uri-host [ ":" port ])."""
    value = value.strip().lower()
    if not value or any(c in value for c in "/\\?#@ "):
        return None
    if value.startswith("["):
        end = value.find("]")
        if end < 0:
            return None
        name, rest = value[:end + 1], value[end + 1:]
    else:
        name, _, port_text = value.partition(":")
        rest = ":" + port_text if _ else ""
    if not rest:
        return name, DEFAULT_PORTS.get(scheme, 80)
    if not rest.startswith(":") or not rest[1:].isdigit():
        return None
    return name, int(rest[1:])


def host_allowed(value: str, scheme: str, allowed: Collection[str]) -> bool:
    """Whether a Host header names this server: an allowed entry "name:port" matches that
    port only, an entry "name" any port."""
    parts = split_host(value, scheme)
    if parts is None:
        return False
    name, port = parts
    return name in allowed or f"{name}:{port}" in allowed


def cross_origin(headers: dict[bytes, bytes], host: str) -> str | None:
    """The other origin a request comes from, or None when it is from this server's own pages
    or from a client that is not a browser (no Origin, no Sec-Fetch-Site: a CLI, a test).

    Origin (RFC 6454) is compared with the request's own Host; scheme is not compared, as a
    TLS proxy in front would make them differ. Without Origin, Fetch Metadata's
    Sec-Fetch-Site tells a browser's cross-site request apart.
    """
    origin = headers.get(b"origin")
    if origin is not None:
        text = origin.decode("latin-1").strip()
        parts = urlsplit(text) if text != "null" else None
        if parts is None or parts.scheme not in ("http", "https") \
                or parts.netloc.lower() != host.strip().lower():
            return text
        return None
    site = headers.get(b"sec-fetch-site", b"").decode("latin-1").strip().lower()
    return "another site" if site in ("cross-site", "same-site") else None


class Guard:
    """Refuses, before any route or token check runs: a missing Host (400), a Host that is
    not this server (421 Misdirected Request, RFC 9110 §15.5.20) and a change (POST, PUT,
    PATCH, DELETE) sent by another origin (403). Adds HEADERS to every answer.

    hosts() gives the allowed Host entries at request time, so a server can set them once
    it knows its address (server.run).
    """

    def __init__(self, app: Callable, *, hosts: Callable[[], Collection[str]]) -> None:
        self.app = app
        self.hosts = hosts

    async def __call__(self, scope: dict, receive: Callable, send: Callable) -> None:
        if scope["type"] not in ("http", "websocket"):
            await self.app(scope, receive, send)
            return
        headers = dict(scope.get("headers", []))
        host = headers.get(b"host", b"").decode("latin-1")
        refusal = None
        if not host:
            refusal = 400, NO_HOST
        elif not host_allowed(host, scope.get("scheme", "http"), self.hosts()):
            refusal = 421, WRONG_HOST.format(host=host[:200])
        elif scope["type"] == "websocket" or scope.get("method") not in SAFE_METHODS:
            other = cross_origin(headers, host)
            if other is not None:
                refusal = 403, CROSS_SITE.format(origin=other[:200])
        if refusal is not None:
            if scope["type"] == "websocket":
                await send({"type": "websocket.close", "code": 1008})
                return
            await _refuse(scope, headers, send, *refusal)
            return
        await self.app(scope, receive, _with_headers(send))


def _with_headers(send: Callable) -> Callable:
    async def wrapped(message: dict) -> None:
        if message["type"] == "http.response.start":
            have = {k.lower() for k, _ in message.get("headers", [])}
            extra = [(k, v) for k, v in HEADERS if k not in have]
            message = {**message, "headers": [*message.get("headers", []), *extra]}
        await send(message)
    return wrapped


async def _refuse(scope: dict, headers: dict[bytes, bytes], send: Callable, status: int,
                  text: str) -> None:
    if scope.get("path", "").startswith("/api/") \
            or b"application/json" in headers.get(b"accept", b""):
        body, kind = json.dumps({"error": text}).encode(), b"application/json"
    else:
        body = render("message.html", message=text, status=status).encode()
        kind = b"text/html; charset=utf-8"
    await send({"type": "http.response.start", "status": status,
                "headers": [(b"content-type", kind), (b"content-length", str(len(body)).encode()),
                            *HEADERS]})
    await send({"type": "http.response.body", "body": body})
