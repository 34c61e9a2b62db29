"""`python -m tests.live.held ARGS`: the rankscope command line with the web stack imported
first, run only once a line arrives on stdin (a restart without its import time).

A launcher for rankscope.web.spawn.LiveServer(held=True); no checks here.
"""

from __future__ import annotations

import sys

import rankscope.web.server  # noqa: F401 - imported now, so that serving starts at once
from rankscope.cli import main

if __name__ == "__main__":
    sys.stdin.readline()
    sys.exit(main(sys.argv[1:]))
