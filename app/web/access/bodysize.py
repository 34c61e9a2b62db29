"""Refuses request bodies over the upload limit before they are read: by Content-Length when
the client sends one, else by counting while the body streams in. ASGI plumbing only.
"""

from __future__ import annotations

import json
from collections.abc import Awaitable, Callable
from typing import Any

Message = dict[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[dict[str, Any], Receive, Send], Awaitable[None]]

#: Room for the multipart framing and form fields around the file itself; the upload route
#: then checks the file's own size exactly.
FRAMING_BYTES = 1 << 20


class _TooLarge(Exception):
    """The body went past the limit while it was being read."""


class BodyLimit:
    """ASGI middleware: a body over `limit` bytes gets 413 with {"error": ...} and is not
    read further (RFC 9110 §15.5.14). limit_text words the limit for the message."""

    def __init__(self, app: ASGIApp, limit: int, limit_text: str) -> None:
        self.app = app
        self.limit = limit + FRAMING_BYTES
        self.limit_text = limit_text

    async def __call__(self, scope: dict[str, Any], receive: Receive, send: Send) -> None:
        if scope["type"] != "http" or scope["method"] in ("GET", "HEAD", "OPTIONS"):
            await self.app(scope, receive, send)
            return
        declared = dict(scope.get("headers") or []).get(b"content-length")
        if declared is not None and (not declared.isdigit() or int(declared) > self.limit):
            await self._refuse(send)
            return
        seen = 0
        over = started = False

        async def counted() -> Message:
            nonlocal seen, over
            message = await receive()
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > self.limit:
                    over = True
                    raise _TooLarge()
            return message

        async def relay(message: Message) -> None:
            nonlocal started
            if over and not started:
                return  # whatever the app made of the cut-off body: ours is sent instead
            started = True
            await send(message)

        try:
            await self.app(scope, counted, relay)
        except _TooLarge:
            pass
        except Exception:
            if not over:
                raise
        if over and not started:
            await self._refuse(send)

    async def _refuse(self, send: Send) -> None:
        text = (f"The upload is larger than this server's limit of {self.limit_text}, so it "
                "was not read. Nothing was saved. Use a smaller file (only the rows and "
                "columns the model needs), start the server with a higher --max-upload-mb, "
                "or diagnose the file with `rankscope check FILE --stream`.")
        body = json.dumps({"error": text}).encode()
        await send({"type": "http.response.start", "status": 413,
                    "headers": [(b"content-type", b"application/json"),
                                (b"content-length", str(len(body)).encode()),
                                (b"connection", b"close")]})
        await send({"type": "http.response.body", "body": body})
