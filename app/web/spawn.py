"""A real `rankscope serve` (python -m rankscope.cli) in a child process on a free loopback port,
read until it listens: for the load driver and the live-server tests.

Starts, kills and stops the process only; what is sent to it is up to the caller.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Callable, Sequence
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[2]
START_SECONDS = 30.0


def free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _limit_files(limit: tuple[int, int]) -> Callable[[], None]:
    def apply() -> None:  # runs in the child, before the server's program starts
        import resource

        resource.setrlimit(resource.RLIMIT_NOFILE, limit)
    return apply


class LiveServer:
    """One `rankscope serve` process on data_dir; its printed lines are collected as they
    come. A child process, so that a client in this process never shares its GIL.

    launcher: the python arguments that run the command line (default: -m rankscope.cli).
    held: the launcher waits for a line on its stdin before it serves (see release), so a
    restart can be made ready, imports and all, before the server it replaces is killed.
    open_files: the process's open-file limit (RLIMIT_NOFILE) as (soft, hard), set before
    it starts (POSIX only), e.g. to make a flood of connections reach it cheaply.
    """

    def __init__(self, data_dir: Path, *args: str,
                 launcher: Sequence[str] = ("-m", "rankscope.cli"), held: bool = False,
                 open_files: tuple[int, int] | None = None) -> None:
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        cmd = [sys.executable, *launcher, "serve", "--no-browser", "--host", "127.0.0.1",
               "--port", str(self.port), "--data-dir", str(data_dir), *args]
        self.proc = subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.PIPE,
                                     stderr=subprocess.STDOUT, text=True,
                                     stdin=subprocess.PIPE if held else subprocess.DEVNULL,
                                     preexec_fn=_limit_files(open_files) if open_files
                                     else None)
        self.lines: list[str] = []
        threading.Thread(target=self._read, daemon=True).start()
        if not held:
            self._wait_until_up()

    def release(self) -> None:
        """Let a held server start serving, and wait until it listens."""
        assert self.proc.stdin is not None, "not held"
        self.proc.stdin.write("go\n")
        self.proc.stdin.close()
        self._wait_until_up()

    def _read(self) -> None:
        assert self.proc.stdout is not None
        for line in self.proc.stdout:
            self.lines.append(line.rstrip("\n"))

    def _wait_until_up(self) -> None:
        deadline = time.monotonic() + START_SECONDS
        while True:
            try:
                httpx.get(self.url + "/static/rankscope.css", timeout=2)
                return  # any answer (200, or 403 when sharing) means it listens
            except httpx.TransportError:
                if self.proc.poll() is not None or time.monotonic() > deadline:
                    self.stop()
                    raise RuntimeError("rankscope serve did not start:\n" +
                                       "\n".join(self.lines)) from None
                time.sleep(0.1)

    def printed(self, label: str) -> str:
        """The address printed after `label` (e.g. "edit link:")."""
        for line in self.lines:
            if label in line:
                return line.split(label, 1)[1].split()[0]
        raise KeyError(f"{label!r} not printed; got:\n" + "\n".join(self.lines))

    def kill(self) -> None:
        """SIGKILL: no shutdown code runs, as in a crash or a power cut of the process."""
        os.kill(self.proc.pid, signal.SIGKILL)
        self.proc.wait(timeout=30)

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=15)

    def __enter__(self) -> LiveServer:
        return self

    def __exit__(self, *exc: object) -> None:
        self.stop()
