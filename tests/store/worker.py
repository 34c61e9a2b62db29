"""A writer process for the crash and concurrency tests: applies changes and reports each one.

Run as `python -m tests.store.worker MODE ...`; prints one line per outcome, flushed.
"""

from __future__ import annotations

import json
import sys

import numpy as np

from rankscope.store import Applied, Change, Conflict, Store
from rankscope.tables.errors import InputError
from tests.store.data import TOGGLED


def dropped_of(store: Store, session_id: str) -> tuple[int, set[str]]:
    """The session's version and the columns its recipe has dropped now."""
    state = store.load(session_id)
    dropped: set[str] = set()
    for step in state.recipe:
        if step["step"] == "drop":
            dropped.add(step["column"])
        elif step["step"] == "restore":
            dropped.discard(step["column"])
    return state.version, dropped


def crash(root: str, session_id: str) -> None:
    """Drop and restore column a forever; print "ack VERSION ID" once a change is saved."""
    store = Store(root)
    version, dropped = dropped_of(store, session_id)
    i = 0
    while True:
        kind = "restore" if "a" in dropped else "drop"
        cid = f"crash-{i}"
        out = store.apply_change(session_id, version,
                                 Change("step", {"step": kind, "column": "a"}, cid, "crash"))
        assert isinstance(out, Applied), out
        version = out.version
        dropped ^= {"a"}
        print(f"ack {version} {cid}", flush=True)
        i += 1


def race(root: str, session_id: str, name: str, seed: int, count: int) -> None:
    """Apply `count` changes from a view of the session that is often out of date (it is
    refreshed only every few changes and after a refusal), so changes cross others'."""
    store = Store(root)
    rng = np.random.default_rng(seed)
    version, dropped = dropped_of(store, session_id)
    last: tuple[Change, int, dict] | None = None
    for i in range(count):
        if i % 4 == 0:
            version, dropped = dropped_of(store, session_id)
        first: dict | None = None
        if last is not None and rng.random() < 0.1:
            change, base, first = last  # a retry of the previous change, same id
            retry = True
        else:
            retry = False
            base = version
            if rng.random() < 0.06:
                change = Change("undo", {}, f"{name}-{i}", name)
            else:
                col = str(rng.choice(TOGGLED))
                kind = "restore" if col in dropped else "drop"
                change = Change("step", {"step": kind, "column": col}, f"{name}-{i}", name)
        record: dict = {"id": change.change_id, "kind": change.kind, "payload": change.payload,
                        "base": base, "retry": retry, "first": first}
        try:
            out = store.apply_change(session_id, base, change)
        except InputError as e:
            record.update(outcome="refused", message=e.message)
        else:
            if isinstance(out, Conflict):
                record.update(outcome="conflict", message=out.message, version=out.version)
            else:
                record.update(outcome="repeated" if out.repeated else "applied",
                              version=out.version, rebased=out.rebased)
        print(json.dumps(record), flush=True)
        if not retry:
            last = (change, base, record)
        if record["outcome"] == "applied" and not record["rebased"] and change.kind == "step":
            version = record["version"]
            dropped ^= {change.payload["column"]}
        else:
            version, dropped = dropped_of(store, session_id)
    store.close()


if __name__ == "__main__":
    mode, *args = sys.argv[1:]
    if mode == "crash":
        crash(*args)
    else:
        race(args[0], args[1], args[2], int(args[3]), int(args[4]))
