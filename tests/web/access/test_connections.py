"""The connection registry on its own, with stand-in connections and a hand-moved clock: who is
closed to make room, what a deadline closes, how often the log is told.

References: the caps and deadlines as documented in rankscope.web.access.connections (the body
rule is the one of Apache httpd's mod_reqtimeout: a base time plus a second per MinRate bytes),
and counts made by hand.
"""

from __future__ import annotations

import pytest

from rankscope.web.access import connections as c
from rankscope.web.access.connections import BODY, BUSY, WAITING, Caps, Registry, Tally


class Clock:
    def __init__(self) -> None:
        self.now = 1000.0

    def __call__(self) -> float:
        return self.now


class Conn:
    """A stand-in connection: a phase set by the test, closed or not."""

    def __init__(self, address: str, clock: Clock, phase: str = WAITING) -> None:
        self.address, self.state = address, phase
        self.since, self.received = clock(), 0
        self.shut = False

    def phase(self) -> str:
        return self.state

    def close(self) -> None:
        self.shut = True


def make(caps: Caps) -> tuple[Registry, Clock, list[str]]:
    clock, said = Clock(), []
    return Registry(caps, Tally(said.append, clock=clock), clock=clock), clock, said


def test_room_is_made_by_closing_the_oldest_idle_connection_of_that_address() -> None:
    reg, clock, said = make(Caps(total=100, per_address=3))
    conns = [Conn("10.0.0.9", clock) for _ in range(3)]
    conns[0].state = BUSY  # a request under way: never closed for room
    for x in conns:
        reg.opened(x)
    new = Conn("10.0.0.9", clock)
    reg.opened(new)
    assert [x.shut for x in conns] == [False, True, False] and not new.shut
    assert reg.count == 3
    # All of that address busy: the newcomer is the one refused, the others stay.
    for x in conns[2:] + [new]:
        x.state = BUSY
    newer = Conn("10.0.0.9", clock)
    reg.opened(newer)
    assert newer.shut and reg.count == 3
    assert len(said) == 1 and "closed to make room" in said[0]  # the first, said at once
    # Another address is not touched by this one's cap.
    other = Conn("10.0.0.7", clock)
    reg.opened(other)
    assert not other.shut and reg.count == 4


def test_over_the_total_the_address_holding_most_gives_way() -> None:
    reg, clock, _ = make(Caps(total=5, per_address=5))
    flood = [Conn("10.0.0.66", clock) for _ in range(4)]
    for x in flood:
        reg.opened(x)
    mine = Conn("10.0.0.2", clock, BUSY)
    reg.opened(mine)
    keyed = Conn("10.0.0.2", clock)
    reg.opened(keyed)  # one over the total: the flooding address loses its oldest
    assert flood[0].shut and not keyed.shut and not mine.shut
    assert reg.count == 5
    for x in flood[1:]:
        x.state = BUSY
    keyed.state = BUSY
    late = Conn("10.0.0.3", clock)
    reg.opened(late)  # nothing idle anywhere: the newcomer is refused
    assert late.shut and reg.count == 5


def test_deadlines_close_stalled_headers_and_trickling_bodies_only() -> None:
    reg, clock, said = make(Caps())
    stalled = Conn("a", clock)
    body_slow = Conn("a", clock, BODY)
    body_fast = Conn("a", clock, BODY)
    busy = Conn("a", clock, BUSY)  # an answer being written (an analysis, a live feed)
    for x in (stalled, body_slow, body_fast, busy):
        reg.opened(x)
    clock.now += c.HEADER_SECONDS - 0.1
    reg.sweep()
    assert not stalled.shut
    clock.now += 0.2
    reg.sweep()
    assert stalled.shut and not body_slow.shut
    # The body's allowance: BODY_SECONDS, plus a second per BODY_BYTES_PER_SECOND received.
    clock.now = body_slow.since + c.BODY_SECONDS + 10.5
    body_slow.received = 5 * c.BODY_BYTES_PER_SECOND  # five seconds' worth: out of time
    body_fast.received = 20 * c.BODY_BYTES_PER_SECOND  # twenty: still inside
    reg.sweep()
    assert body_slow.shut and not body_fast.shut and not busy.shut
    clock.now += 3600
    reg.sweep()
    assert not busy.shut and body_fast.shut  # its twenty seconds' worth ran out in the hour
    assert reg.count == 1


def test_the_log_hears_at_most_one_line_a_minute() -> None:
    reg, clock, said = make(Caps(total=10, per_address=10))
    for _ in range(500):
        reg.opened(Conn("10.0.0.66", clock))
        clock.now += 0.01
    assert len(said) == 1 and "490 idle ones closed to make room" not in said[0]
    clock.now += c.LOG_SECONDS
    reg.sweep()
    assert len(said) == 2
    # Counted by hand: 500 opened, 10 held, so 490 closed, the first of them said at once.
    assert "489 idle ones closed to make room" in said[1]
    reg.sweep()
    assert len(said) == 2  # nothing new, nothing said


@pytest.mark.parametrize("files", [256, 1024, 4096, 1 << 20])
def test_caps_leave_room_within_the_open_file_limit(files: int) -> None:
    caps = Caps.for_files(files)
    spare = files - caps.total - c.ROUNDS * caps.backlog
    assert spare >= max(c.RESERVE_MIN, files // c.RESERVE_SHARE) or caps.total == c.TOTAL
    assert 0 < caps.per_address <= caps.total <= c.TOTAL


def test_no_limit_known_gives_the_defaults() -> None:
    assert Caps.for_files(None) == Caps()
