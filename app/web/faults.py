"""Server-side faults (a full disk, a data folder that cannot be written, short memory) worded
as answers that say what happened and what to do; the ASGI middleware that gives them.

Classifies and words exceptions only; never decides about a user's input, never retries.
"""

from __future__ import annotations

import errno
import json
import logging
import secrets
import sqlite3
from collections.abc import Awaitable, Callable
from dataclasses import dataclass
from typing import Any

log = logging.getLogger("rankscope.web")

#: RFC 4918 §11.5: the server cannot store what the request needs.
INSUFFICIENT_STORAGE = 507
#: RFC 9110 §15.6.4: a passing condition on the server's side; try again later.
UNAVAILABLE = 503
#: Seconds a client is asked to wait before retrying a 503 (common practice: a few).
RETRY_SECONDS = 5

NOTHING_LOST = ("Nothing was saved by this request, and everything saved before it is "
                "intact.")
DISK_FULL = ("The server's disk is full, so this could not be saved. " + NOTHING_LOST +
             " Free some space on the disk that holds the server's data folder (or ask "
             "whoever runs the server to), then try again.")
SHORT_OF_MEMORY = ("The server ran short of memory for this request. " + NOTHING_LOST +
                   " Try again in a moment, or with a smaller table.")
#: What an operating-system error number means, for the message (errno(3)).
OS_REASONS = {
    errno.EIO: "the disk reported a read or write error",
    errno.EROFS: "the disk is mounted read-only",
    errno.EACCES: "the server may not write there (permission denied)",
    errno.EPERM: "the server may not write there (operation not permitted)",
    errno.EMFILE: "the server has too many files open",
    errno.ENFILE: "the computer has too many files open",
    errno.ENOMEM: "the computer is short of memory",
}
FULL_ERRNOS = {errno.ENOSPC, errno.EDQUOT}
FULL_WORDS = ("database or disk is full", "no space left on device", "disk quota exceeded")


@dataclass(frozen=True)
class Fault:
    """A server-side condition as an answer: its status and the message to show."""

    status: int
    message: str

    @property
    def headers(self) -> dict[str, str]:
        return {"Retry-After": str(RETRY_SECONDS)} if self.status == UNAVAILABLE else {}


def _chain(exc: BaseException) -> list[BaseException]:
    """The exception and those it was raised from or during (a rollback after a full disk)."""
    out: list[BaseException] = []
    while exc is not None and exc not in out and len(out) < 8:
        out.append(exc)
        exc = exc.__cause__ or exc.__context__
    return out


def _unwritable(reason: str) -> Fault:
    return Fault(UNAVAILABLE, f"The server could not use its data folder: {reason}. "
                 f"{NOTHING_LOST} Check that the data folder's disk is present, healthy and "
                 "writable (or ask whoever runs the server to), then try again.")


def fault_of(exc: BaseException) -> Fault | None:
    """The server-side fault behind exc, or None when it is not one (a bug, or input)."""
    chain = _chain(exc)
    for e in chain:
        text = str(e).lower()
        if (isinstance(e, OSError) and e.errno in FULL_ERRNOS) or (
                isinstance(e, OSError | sqlite3.Error) and any(w in text for w in FULL_WORDS)):
            return Fault(INSUFFICIENT_STORAGE, DISK_FULL)
    for e in chain:
        if isinstance(e, MemoryError):
            return Fault(UNAVAILABLE, SHORT_OF_MEMORY)
        if isinstance(e, OSError) and e.errno in OS_REASONS:
            return _unwritable(OS_REASONS[e.errno])
        if isinstance(e, sqlite3.OperationalError | sqlite3.DatabaseError):
            text = str(e).lower()
            if "locked" in text or "busy" in text:
                return _unwritable("another program kept the session database busy")
            if "i/o" in text:
                return _unwritable("the disk reported a read or write error")
            if "readonly" in text or "read-only" in text:
                return _unwritable("the session database is read-only")
            return _unwritable("the session database could not be read or written")
    return None


def internal_error() -> tuple[str, str]:
    """(reference, message) for a failure nobody worded: the reference ties the message to
    the traceback in the server's log, without showing the program's internals."""
    ref = secrets.token_hex(4)
    return ref, (f"The server failed on this request (reference {ref} in its log). "
                 f"{NOTHING_LOST} Try again; if it fails again, please report it with the "
                 "reference.")


Receive = Callable[[], Awaitable[dict[str, Any]]]
Send = Callable[[dict[str, Any]], Awaitable[None]]


class Faults:
    """Outermost ASGI middleware: an exception that no route handled becomes a complete
    answer (JSON under /api/ or for a JSON client, else a page) with 507 for a full disk,
    503 for another server-side fault and 500 for a bug, so the client reads what happened
    and the connection stays usable (no half-sent answer, no reset).

    page: (text, status) -> the bytes of an HTML page saying text."""

    def __init__(self, app: Callable[..., Awaitable[None]],
                 page: Callable[[str, int], bytes]) -> None:
        self.app = app
        self.page = page

    async def __call__(self, scope: dict[str, Any], receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        started = False

        async def sending(message: dict[str, Any]) -> None:
            nonlocal started
            if message["type"] == "http.response.start":
                started = True
            await send(message)

        try:
            await self.app(scope, receive, sending)
        except Exception as exc:  # noqa: BLE001 - every fault gets a worded answer
            if started:
                raise  # part of an answer is out; only closing the connection is honest
            fault = fault_of(exc)
            if fault is None:
                ref, text = internal_error()
                log.exception("request failed (reference %s)", ref)
                fault = Fault(500, text)
            else:
                log.warning("%s %s: %s (%s)", scope.get("method"), scope.get("path"),
                            fault.message.split(".")[0], exc)
            await self._answer(scope, send, fault)

    async def _answer(self, scope: dict[str, Any], send: Send, fault: Fault) -> None:
        headers = dict(scope.get("headers") or [])
        wants_json = str(scope.get("path", "")).startswith("/api/") or \
            b"application/json" in headers.get(b"accept", b"")
        if wants_json:
            body, kind = json.dumps({"error": fault.message}).encode(), b"application/json"
        else:
            body, kind = self.page(fault.message, fault.status), b"text/html; charset=utf-8"
        out = [(b"content-type", kind), (b"content-length", str(len(body)).encode()),
               (b"cache-control", b"no-store")]
        out += [(k.lower().encode(), v.encode()) for k, v in fault.headers.items()]
        await send({"type": "http.response.start", "status": fault.status, "headers": out})
        await send({"type": "http.response.body", "body": body})
