"""Load tooling, and the live-server helper the fuzz, shutdown, load and HTTP benchmark runs share.

``python -m tests.load`` (``make load``) runs the bounded load test of
:mod:`tests.load.__main__`. :class:`LiveServer` starts ``familywise serve``
as a subprocess on a free loopback port, waits for ``GET /readyz``, and
stops it again; it also reads the resident memory of the server and all its
descendants (the uvicorn workers and any batch pool processes) from /proc.
"""

from __future__ import annotations

import contextlib
import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator, Mapping
from pathlib import Path

import httpx

LOOPBACK = "127.0.0.1"


def free_port(host: str = LOOPBACK) -> int:
    """A TCP port nobody listens on right now (the kernel's choice)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind((host, 0))
        return int(sock.getsockname()[1])


def descendants(pid: int) -> list[int]:
    """Every process below ``pid`` (children of all its threads, recursively), from /proc."""
    found: list[int] = []
    queue = [pid]
    while queue:
        current = queue.pop()
        try:
            tasks = os.listdir(f"/proc/{current}/task")
        except OSError:
            continue
        for task in tasks:
            try:
                text = Path(f"/proc/{current}/task/{task}/children").read_text()
            except OSError:
                continue
            for child in text.split():
                if int(child) not in found:
                    found.append(int(child))
                    queue.append(int(child))
    return found


def _orphan(pid: int, family: list[int]) -> bool:
    """Whether ``pid`` is alive (not a zombie) and its parent is init or gone from ``family``."""
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    except OSError:
        return False
    state, parent = fields[0], int(fields[1])
    return state != "Z" and (parent == 1 or parent not in family)


def rss_kib(pid: int) -> int:
    """Resident set size of one process in KiB (0 if it has gone)."""
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                return int(line.split()[1])
    except OSError:
        return 0
    return 0


def pss_kib(pid: int) -> int:
    """Proportional set size of one process in KiB (pages shared with other processes, such as the
    copy-on-write pages of forked pool workers, divided among them); 0 if unavailable."""
    try:
        for line in Path(f"/proc/{pid}/smaps_rollup").read_text().splitlines():
            if line.startswith("Pss:"):
                return int(line.split()[1])
    except OSError:
        return 0
    return 0


class LiveServer:
    """``familywise serve`` in a subprocess on a free loopback port.

    Use as a context manager (or call :meth:`start` and :meth:`stop`). The
    server's output goes to a temporary log file (never a pipe, which could
    fill and block it); :attr:`log_path` names it and :meth:`log_text` reads it.
    """

    def __init__(self, *, workers: int = 1, graceful_seconds: int = 10, log_level: str = "info",
                 env: Mapping[str, str] | None = None, ready_timeout: float = 180.0) -> None:
        self.host = LOOPBACK
        self.port = free_port()
        self.workers = workers
        self.graceful_seconds = graceful_seconds
        self.log_level = log_level
        self.extra_env = dict(env or {})
        self.ready_timeout = ready_timeout
        self.process: subprocess.Popen[bytes] | None = None
        handle, name = tempfile.mkstemp(prefix="familywise-server-", suffix=".log")
        os.close(handle)
        self.log_path = Path(name)

    @property
    def url(self) -> str:
        return f"http://{self.host}:{self.port}"

    @property
    def pid(self) -> int:
        assert self.process is not None, "the server is not running"
        return self.process.pid

    def command(self) -> list[str]:
        return [sys.executable, "-m", "familywise.cli", "serve", "--host", self.host, "--port", str(self.port),
                "--workers", str(self.workers), "--graceful-seconds", str(self.graceful_seconds),
                "--log-level", self.log_level]

    def start(self) -> LiveServer:
        env = {k: v for k, v in os.environ.items() if not k.startswith("FAMILYWISE_")}
        env.update(self.extra_env)
        env.setdefault("PYTHONUNBUFFERED", "1")
        with open(self.log_path, "wb") as log:  # the child keeps its own copy of the descriptor
            self.process = subprocess.Popen(self.command(), stdout=log, stderr=subprocess.STDOUT, env=env,
                                            stdin=subprocess.DEVNULL)
        try:
            self.wait_ready()
        except BaseException:
            self.stop()
            raise
        return self

    def wait_ready(self) -> None:
        deadline = time.monotonic() + self.ready_timeout
        with httpx.Client(timeout=2.0) as client:
            while time.monotonic() < deadline:
                if self.process is not None and self.process.poll() is not None:
                    raise RuntimeError(f"the server exited with {self.process.returncode} before it was ready:\n"
                                       + self.log_text()[-4000:])
                with contextlib.suppress(httpx.HTTPError):
                    if client.get(f"{self.url}/readyz").status_code == 200:
                        return
                time.sleep(0.1)
        raise RuntimeError(f"the server was not ready within {self.ready_timeout:g} s:\n" + self.log_text()[-4000:])

    def terminate(self) -> None:
        """Send SIGTERM (a graceful shutdown) without waiting."""
        if self.process is not None and self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)

    def stop(self, timeout: float | None = None, reap: bool = True) -> int | None:
        """SIGTERM, wait for the exit (SIGKILL after ``timeout``); the exit status.

        With ``reap``, processes the server started and left behind (orphans whose parent has gone) are
        killed too, so that no run leaves processes running."""
        if self.process is None:
            return None
        family = descendants(self.process.pid) if self.process.poll() is None else []
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(timeout if timeout is not None else self.graceful_seconds + 10)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait()
        if reap:
            self.reap(family)
        return self.process.returncode

    @staticmethod
    def reap(family: list[int], wait: float = 3.0) -> list[int]:
        """SIGKILL those of ``family`` still alive after ``wait`` seconds whose parent is gone (orphans);
        the pids killed."""
        deadline = time.monotonic() + wait
        while time.monotonic() < deadline and any(_orphan(pid, family) for pid in family):
            time.sleep(0.1)
        killed = []
        for pid in family:
            if _orphan(pid, family):
                with contextlib.suppress(OSError):
                    os.kill(pid, signal.SIGKILL)
                    killed.append(pid)
        return killed

    def processes(self) -> list[int]:
        """The server's process and all its descendants."""
        return [self.pid, *descendants(self.pid)]

    def rss_kib(self) -> int:
        """Resident memory of the server and all its descendants, in KiB."""
        return sum(rss_kib(pid) for pid in self.processes())

    def pss_kib(self) -> int:
        """Proportional set size of the server and all its descendants, in KiB."""
        return sum(pss_kib(pid) for pid in self.processes())

    def log_text(self) -> str:
        return self.log_path.read_text(encoding="utf-8", errors="replace")

    def __enter__(self) -> LiveServer:
        return self.start()

    def discard_log(self) -> None:
        with contextlib.suppress(OSError):
            self.log_path.unlink()

    def __exit__(self, *exc: object) -> None:
        self.stop()
        self.discard_log()


@contextlib.contextmanager
def live_server(**kwargs: object) -> Iterator[LiveServer]:
    """``with live_server(workers=2) as server: ...`` (see :class:`LiveServer`)."""
    server = LiveServer(**kwargs)  # type: ignore[arg-type]
    with server:
        yield server
