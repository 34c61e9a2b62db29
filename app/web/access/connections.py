"""Open connections while serving: deadlines for a request's headers and body, caps per client
address and in total that close idle connections first, and one log line now and then.

Bookkeeping and uvicorn's protocol and server hooks only; never reads a request's content.
"""

from __future__ import annotations

import asyncio
import logging
import os
import socket
import time
from collections import Counter, OrderedDict
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Protocol

import uvicorn
from uvicorn.protocols.http.auto import AutoHTTPProtocol

try:  # not on Windows: there the open-file limit is left as it is
    import resource
except ImportError:  # pragma: no cover
    resource = None  # type: ignore[assignment]

#: Seconds a connection may wait before its request's headers are complete, counted from
#: when it opened or its last answer ended. A browser sends its headers at once; uvicorn
#: closes an idle kept-alive connection after the same 5 s (its timeout_keep_alive default),
#: so a connection that says nothing for this long is treated alike whether new or not.
HEADER_SECONDS = 5.0
#: A request body gets this long, plus one second per BODY_BYTES_PER_SECOND received: the
#: shape and the figures of Apache httpd's mod_reqtimeout default (body=20,MinRate=500), so a
#: big upload over a slow link goes on while a body that trickles is cut off.
BODY_SECONDS = 20.0
BODY_BYTES_PER_SECOND = 500
#: Most connections held at once (an idle one costs a file descriptor and some memory),
#: and most from one client address (all local clients share 127.0.0.1, so this is high).
TOTAL = 4096
PER_ADDRESS = 1024
#: Part of the open-file limit kept for what is not a connection (the database, table files,
#: static files, threads' pipes).
RESERVE_SHARE = 8
RESERVE_MIN = 32
#: asyncio takes up to `backlog` sockets in one accept round, and a round or two more may
#: come before the first round's connections are counted (each is counted a loop turn or
#: two after its accept): room for this many rounds is kept free. The round is kept small
#: next to the limit (a 32nd of it, at most uvicorn's default 2048); an accept that finds
#: no descriptor left makes asyncio stop accepting for a whole second.
ROUNDS = 4
ROUND_SHARE = 32
BACKLOG = 2048
#: Connections the kernel may hold for us before they are accepted (they cost no file
#: descriptor until then). Set after start, apart from the accept round above: a short
#: queue drops a client's first packet during a burst, and its retry comes a second later.
LISTEN_QUEUE = 2048
#: At most one log line per this many seconds about connections closed or refused.
LOG_SECONDS = 60.0

WAITING, BODY, BUSY = "waiting", "body", "busy"

log = logging.getLogger("uvicorn.error")


def raise_open_files() -> int | None:
    """Raise this process's soft open-file limit (RLIMIT_NOFILE) to its hard limit and return
    the limit now in force (None where there is no such limit). Each connection holds a file
    descriptor, and the common soft limit of 1024 is far below what a server needs."""
    if resource is None:
        return None
    soft, hard = resource.getrlimit(resource.RLIMIT_NOFILE)
    # macOS refuses RLIM_INFINITY and anything above OPEN_MAX (10240) for this limit.
    for want in (hard, 1 << 20, 10240):
        if want == resource.RLIM_INFINITY or (hard != resource.RLIM_INFINITY and want > hard) \
                or want <= soft:
            continue
        try:
            resource.setrlimit(resource.RLIMIT_NOFILE, (want, hard))
            break
        except (ValueError, OSError):
            continue
    return resource.getrlimit(resource.RLIMIT_NOFILE)[0]


@dataclass(frozen=True)
class Caps:
    """How many connections are held: in total, per client address; the accept round."""

    total: int = TOTAL
    per_address: int = PER_ADDRESS
    backlog: int = BACKLOG

    @classmethod
    def for_files(cls, open_files: int | None) -> Caps:
        """Caps that keep connections, the accept rounds and the reserve within open_files
        (None or RLIM_INFINITY: the defaults)."""
        if open_files is None or open_files <= 0 or open_files >= 1 << 40:
            return cls()
        backlog = max(4, min(BACKLOG, open_files // ROUND_SHARE))
        reserve = max(RESERVE_MIN, open_files // RESERVE_SHARE) + ROUNDS * backlog
        total = max(16, min(TOTAL, open_files - reserve))
        return cls(total, min(PER_ADDRESS, total), backlog)


class Tracked(Protocol):
    """What the registry needs of a connection."""

    address: str
    since: float  # when its present phase began
    received: int  # bytes received in its present phase

    def phase(self) -> str: ...
    def close(self) -> None: ...


class Tally:
    """Counts of connections closed or refused, by reason, said in one line at most every
    LOG_SECONDS (the first one at once), so a flood cannot fill the log."""

    def __init__(self, say: Callable[[str], None], every: float = LOG_SECONDS,
                 clock: Callable[[], float] = time.monotonic) -> None:
        self.say, self.every, self.clock = say, every, clock
        self.counts: Counter[str] = Counter()
        self.last: float | None = None

    def add(self, reason: str, n: int = 1) -> None:
        self.counts[reason] += n
        self.flush()

    def flush(self) -> None:
        now = self.clock()
        if not self.counts or (self.last is not None and now - self.last < self.every):
            return
        parts = ", ".join(f"{n} {reason}" for reason, n in self.counts.most_common())
        span = "" if self.last is None else f" in the last {now - self.last:.0f} s"
        self.say(f"rankscope: connections closed or refused{span}: {parts} (said at most "
                 f"once a minute)")
        self.counts.clear()
        self.last = now


class Registry:
    """Every open connection, oldest first per client address. A new connection is always
    taken in while room can be made: over a cap, the oldest connection still waiting for
    its request (of that address, else of the address holding most) is closed instead. A
    request under way (a keyed request, a live feed) is never closed for room, so a flood
    of idle connections cannot shut out a client that sends its request."""

    def __init__(self, caps: Caps, tally: Tally,
                 clock: Callable[[], float] = time.monotonic) -> None:
        self.caps, self.tally, self.clock = caps, tally, clock
        self.by_address: dict[str, OrderedDict[Tracked, None]] = {}
        self.count = 0

    def opened(self, conn: Tracked) -> None:
        """Count a new connection; close others (or this one) to keep within the caps."""
        group = self.by_address.setdefault(conn.address, OrderedDict())
        group[conn] = None
        self.count += 1
        if len(group) > self.caps.per_address and not self._evict(group, conn):
            self._refuse(conn, f"over the limit of {self.caps.per_address} from one address")
            return
        if self.count > self.caps.total:
            for other in sorted(self.by_address.values(), key=len, reverse=True):
                if self._evict(other, conn):
                    return
            self._refuse(conn, f"over the limit of {self.caps.total} open connections")

    def closed(self, conn: Tracked) -> None:
        group = self.by_address.get(conn.address)
        if group is not None and conn in group:
            del group[conn]
            self.count -= 1
            if not group:
                del self.by_address[conn.address]

    def _evict(self, group: OrderedDict[Tracked, None], new: Tracked) -> bool:
        for old in group:
            if old is not new and old.phase() == WAITING:
                self._drop(old)
                self.tally.add("idle ones closed to make room")
                return True
        return False

    def _refuse(self, conn: Tracked, why: str) -> None:
        self._drop(conn)
        self.tally.add(f"new ones refused ({why}, all busy)")

    def _drop(self, conn: Tracked) -> None:
        self.closed(conn)
        conn.close()

    def sweep(self) -> None:
        """Close connections past their deadline; say what was closed, now and then."""
        now = self.clock()
        late = []
        for group in self.by_address.values():
            for conn in group:
                phase = conn.phase()
                if phase == WAITING and now - conn.since > HEADER_SECONDS:
                    late.append((conn, f"sent no complete headers within {HEADER_SECONDS:g} s"))
                elif phase == BODY and now - conn.since > \
                        BODY_SECONDS + conn.received / BODY_BYTES_PER_SECOND:
                    late.append((conn, f"sent a body slower than {BODY_BYTES_PER_SECOND} "
                                       "bytes/s"))
        for conn, why in late:
            self._drop(conn)
            self.tally.add(why)
        self.tally.flush()


def guarded_protocol(registry: Registry, base: type[asyncio.Protocol] = AutoHTTPProtocol
                     ) -> type[asyncio.Protocol]:
    """uvicorn's HTTP protocol class (h11 or httptools) that reports to the registry: a
    subclass for uvicorn.Config(http=...); it reads only the request cycle's flags."""

    class Guarded(base):  # type: ignore[valid-type, misc]
        address = ""
        since = 0.0
        received = 0

        def phase(self) -> str:
            cycle = getattr(self, "cycle", None)
            if cycle is None or cycle.response_complete:
                return WAITING
            flow = getattr(self, "flow", None)
            if cycle.more_body and not (flow is not None and flow.read_paused):
                return BODY
            return BUSY

        def close(self) -> None:
            transport = getattr(self, "transport", None)
            if transport is not None and not transport.is_closing():
                transport.close()

        def _mark(self) -> None:
            self.since, self.received = registry.clock(), 0

        def connection_made(self, transport: Any) -> None:
            super().connection_made(transport)
            peer = transport.get_extra_info("peername")
            self.address = str(peer[0]) if isinstance(peer, tuple) and peer else "local"
            self._mark()
            registry.opened(self)

        def connection_lost(self, exc: Exception | None) -> None:
            registry.closed(self)
            super().connection_lost(exc)

        def data_received(self, data: bytes) -> None:
            before = self.phase()
            super().data_received(data)
            if self.phase() != before:
                self._mark()  # headers complete: the body's (or the answer's) time begins
            else:
                self.received += len(data)

        def on_response_complete(self) -> None:
            self._mark()  # waiting again: the next request's headers have their deadline
            super().on_response_complete()

    return Guarded


class GuardedServer(uvicorn.Server):
    """uvicorn's server with the registry's sweep once a second and accept errors (out of
    file descriptors) counted in the registry's tally instead of a traceback each."""

    def __init__(self, config: uvicorn.Config, registry: Registry) -> None:
        super().__init__(config)
        self.registry = registry

    async def startup(self, sockets: Any = None) -> None:
        loop = asyncio.get_running_loop()
        default = loop.get_exception_handler()

        def handler(loop: asyncio.AbstractEventLoop, context: dict[str, Any]) -> None:
            if "out of system resource" in str(context.get("message", "")):
                self.registry.tally.add("new ones refused (out of file descriptors)")
                return
            if default is not None:
                default(loop, context)
            else:
                loop.default_exception_handler(context)

        loop.set_exception_handler(handler)
        await super().startup(sockets)
        for server in getattr(self, "servers", ()):
            for listening in server.sockets:
                # listen() again on a duplicate of the descriptor changes the queue of the
                # one socket (asyncio's wrapper does not offer listen).
                with socket.socket(fileno=os.dup(listening.fileno())) as same:
                    same.listen(max(LISTEN_QUEUE, self.config.backlog))

    async def on_tick(self, counter: int) -> bool:
        if counter % 10 == 0:  # ticks come every 0.1 s
            self.registry.sweep()
        return await super().on_tick(counter)


def serving(app: Any, *, host: str, port: int, open_files: int | None,
            **options: Any) -> GuardedServer:
    """A uvicorn server for app whose connections are kept within the caps that open_files
    allows, with the deadlines above."""
    caps = Caps.for_files(open_files)
    registry = Registry(caps, Tally(log.warning))
    config = uvicorn.Config(app, host=host, port=port, backlog=caps.backlog,
                            http=guarded_protocol(registry), **options)
    return GuardedServer(config, registry)
