"""How many requests do their work at once: a few worker threads served in turn, rather than
dozens sharing one interpreter lock.

Sets the thread limit of the server's event loop; handles no request itself.
"""

from __future__ import annotations

from anyio.to_thread import current_default_thread_limiter
from starlette.types import ASGIApp, Receive, Scope, Send

#: The routes are plain `def`s, run on anyio's worker threads (40 by default). Forty
#: CPU-bound requests share one interpreter lock: each takes forty times its own time, and
#: all finish late together. With 8 they wait their turn in arrival order and each answers
#: soon after it starts: measured with `python -m rankscope.benchmarks.load` (docs/speed.md), p95
#: 1.2 s with 40 threads, 0.8 s with 8, at the same request rate. The analysis workers
#: (Limits.workers, 2 on 2 cores) leave threads for light requests while they are busy,
#: and a request's body is received before it takes a thread.
REQUEST_THREADS = 8


class RequestThreads:
    """ASGI middleware: the event loop it runs on serves sync routes on `threads` threads."""

    def __init__(self, app: ASGIApp, threads: int = REQUEST_THREADS) -> None:
        self.app = app
        self.threads = threads

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        # The limiter belongs to the running loop, so it is set from inside it; setting an
        # unchanged value costs nothing.
        limiter = current_default_thread_limiter()
        if limiter.total_tokens != self.threads:
            limiter.total_tokens = self.threads
        await self.app(scope, receive, send)
