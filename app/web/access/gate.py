"""Who may do what: reads a request's token (link, header or cookie), decides its role, refuses.

An ASGI gate in front of every route; it checks tokens through the store and never reads data.
"""

from __future__ import annotations

import hmac
import json
import re
from collections.abc import Callable
from http.cookies import SimpleCookie
from typing import Any
from urllib.parse import parse_qs

import anyio

from rankscope.web.rendering.render import render

#: Where a client may put its token: ?t= on a link, this header on API calls, or the
#: cookie a link leaves behind (one per session, so several sessions can be open).
QUERY = "t"
HEADER = b"x-rankscope-token"
OWNER_COOKIE = "rs_owner"
#: Browsers keep a cookie at most 400 days (RFC 6265bis); a link opened once keeps working.
COOKIE_SECONDS = 400 * 24 * 3600
SAFE_METHODS = {"GET", "HEAD", "OPTIONS"}
#: A session's pages and API routes; group 1 is the session id.
SESSION_PATH = re.compile(r"^(?:/api)?/s/([A-Za-z0-9_-]+)(?:/|$)")
#: Paths that hold the program's own scripts and styles: no data, but still behind a token
#: when sharing, so a visitor without a link learns nothing.
ASSET_PREFIXES = ("/static/", "/assets/")

NO_TOKEN = ("This rankscope server shares sessions only through their links. Open the link "
            "you were given (it ends in ?t=…), or ask the person running rankscope for one.")
WRONG_TOKEN = ("The key in this link does not open this session. Ask for a new link; it may "
               "have been mistyped, or the session may have been deleted.")
VIEW_ONLY = ("This is a view-only link: it shows the session as it changes, but cannot change "
             "anything. Ask for the edit link to make changes.")
OWNER_ONLY = ("Only the person running rankscope can do this here: open the start-page link "
              "rankscope printed when it started.")


def cookie_name(session_id: str) -> str:
    return f"rs_{session_id}"


def session_of(path: str) -> str | None:
    m = SESSION_PATH.match(path)
    return m.group(1) if m else None


def role_of(request: Any) -> str:
    """The role the gate gave this request: "owner", "edit" or "view"."""
    return getattr(request.state, "role", "view")  # no gate ran: assume the least


def can_edit(request: Any) -> bool:
    return role_of(request) in ("owner", "edit")


def token_of(request: Any) -> str | None:
    """The session token this request came with, when it had one (for the Share links)."""
    return getattr(request.state, "token", None)


def _same(a: str | None, b: str | None) -> bool:
    return bool(a) and bool(b) and hmac.compare_digest(str(a), str(b))


def _cookies(headers: list[tuple[bytes, bytes]]) -> dict[str, str]:
    jar: SimpleCookie = SimpleCookie()
    for name, value in headers:
        if name == b"cookie":
            try:
                jar.load(value.decode("latin-1"))
            except Exception:  # noqa: BLE001 - a malformed cookie header is just ignored
                continue
    return {k: m.value for k, m in jar.items()}


class AccessGate:
    """Gives every request a role or refuses it with 403 (RFC 9110 §15.5.4).

    share False (on this computer only): a request without a token is the owner's; a
    token, when given, is what counts, so a view link stays view-only even here.
    share True: every request needs the owner key or a session token.
    A "view" role never gets past a method that could change something.
    """

    def __init__(self, app: Callable, *, access: Callable[[str, str], str | None],
                 share: bool, owner_key: str) -> None:
        self.app = app
        self.access = access
        self.share = share
        self.owner_key = owner_key

    async def __call__(self, scope: dict, receive: Callable, send: Callable) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        path = scope.get("path", "")
        query = parse_qs(scope.get("query_string", b"").decode("latin-1"))
        headers = scope.get("headers", [])
        explicit = next((v.decode("latin-1") for k, v in headers if k == HEADER), None) \
            or (query.get(QUERY) or [None])[0]
        cookies = _cookies(headers)
        sid = session_of(path)
        if sid is not None:
            role, token, refusal = await self._session_role(sid, explicit, cookies)
        else:
            role, token, refusal = await self._server_role(path, explicit, cookies)
        if role == "view" and scope["method"] not in SAFE_METHODS:
            role, refusal = None, VIEW_ONLY
        if role is None:
            await self._refuse(scope, send, refusal or NO_TOKEN)
            return
        state = scope.setdefault("state", {})
        state["role"], state["token"] = role, token
        remember = None
        if explicit is not None and (query.get(QUERY) or [None])[0] == explicit:
            # A link was opened: keep its key in a cookie, so the page's own requests (and
            # a reload without ?t=) carry it.
            if role == "owner" and _same(explicit, self.owner_key):
                remember = f"{OWNER_COOKIE}={explicit}; Path=/; HttpOnly; SameSite=Lax"
            elif sid is not None and token is not None:
                remember = (f"{cookie_name(sid)}={token}; Path=/; Max-Age={COOKIE_SECONDS}; "
                            "HttpOnly; SameSite=Lax")
        await self.app(scope, receive, _with_headers(send, remember))

    async def _check(self, sid: str, token: str) -> str | None:
        # A one-row indexed read, but SQLite may wait on a lock: off the event loop.
        return await anyio.to_thread.run_sync(self.access, sid, token)

    async def _session_role(self, sid: str, explicit: str | None, cookies: dict[str, str]
                            ) -> tuple[str | None, str | None, str | None]:
        if explicit is not None:
            if _same(explicit, self.owner_key):
                return "owner", None, None
            role = await self._check(sid, explicit)
            return (role, explicit, None) if role else (None, None, WRONG_TOKEN)
        kept = cookies.get(cookie_name(sid))
        if kept:
            role = await self._check(sid, kept)
            if role:
                return role, kept, None
        if _same(cookies.get(OWNER_COOKIE), self.owner_key) or not self.share:
            return "owner", None, None
        return None, None, NO_TOKEN

    async def _server_role(self, path: str, explicit: str | None, cookies: dict[str, str]
                           ) -> tuple[str | None, str | None, str | None]:
        if explicit is not None:
            # A session's key opens that session only, never the server's own pages.
            return ("owner", None, None) if _same(explicit, self.owner_key) \
                else (None, None, OWNER_ONLY)
        if _same(cookies.get(OWNER_COOKIE), self.owner_key) or not self.share:
            return "owner", None, None
        if path.startswith(ASSET_PREFIXES):
            for name, value in cookies.items():
                if name.startswith("rs_") and name != OWNER_COOKIE \
                        and await self._check(name[3:], value):
                    return "view", None, None
        return None, None, NO_TOKEN

    @staticmethod
    async def _refuse(scope: dict, send: Callable, text: str) -> None:
        headers = dict(scope.get("headers", []))
        wants_json = scope.get("path", "").startswith("/api/") \
            or b"application/json" in headers.get(b"accept", b"")
        if wants_json:
            body = json.dumps({"error": text}).encode()
            kind = b"application/json"
        else:
            body = render("message.html", message=text, status=403).encode()
            kind = b"text/html; charset=utf-8"
        await send({"type": "http.response.start", "status": 403,
                    "headers": [(b"content-type", kind), (b"content-length",
                                                          str(len(body)).encode()),
                                (b"referrer-policy", b"no-referrer")]})
        await send({"type": "http.response.body", "body": body})


def _with_headers(send: Callable, cookie: str | None) -> Callable:
    """send, adding a Set-Cookie (when a link was opened) and a referrer policy that keeps a
    link's key out of the Referer header of anything the page loads or links to."""
    async def wrapped(message: dict) -> None:
        if message["type"] == "http.response.start":
            extra = [(b"referrer-policy", b"no-referrer")]
            if cookie:
                extra.append((b"set-cookie", cookie.encode("latin-1")))
            message = {**message, "headers": [*message.get("headers", []), *extra]}
        await send(message)
    return wrapped
