"""Helpers of the client's tests: the live server's command and handle, and a scripted fake server.

The fake server (:class:`ScriptedServer`) answers each request with the next
step of a script (a status, a dropped connection, a delay) and records what it
received, for the retry tests.
"""

from __future__ import annotations

import contextlib
import http.server
import importlib.util
import json
import os
import socket
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import httpx
import pytest

CHECKOUT = Path(__file__).resolve().parents[3]
API_KEY = "plate-reader-test-key"
READY_TIMEOUT_SECONDS = 180.0  # the first start in a fresh checkout compiles the numba kernels


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def server_command(port: int) -> list[str]:
    serve = ["serve", "--host", "127.0.0.1", "--port", str(port), "--log-level", "warning"]
    if importlib.util.find_spec("familywise") is not None:
        return [sys.executable, "-m", "familywise.cli", *serve]
    script = CHECKOUT / ".venv" / "bin" / "familywise"
    if script.exists():
        return [str(script), *serve]
    pytest.fail("the familywise service is not installed here (run `make install` in the checkout)")


@contextlib.contextmanager
def running_server(settings: dict[str, str]) -> Iterator[str]:
    """A familywise server in a subprocess on a free loopback port, with these
    FAMILYWISE_* settings added to the environment (and no API key unless
    they give one); its base URL once GET /readyz answers 200. Stopped at the end."""
    port = free_port()
    env = {k: v for k, v in os.environ.items() if k != "FAMILYWISE_API_KEYS"} | settings
    with tempfile.TemporaryFile() as log:
        process = subprocess.Popen(server_command(port), stdout=log, stderr=subprocess.STDOUT, env=env)
        base_url = f"http://127.0.0.1:{port}"
        try:
            deadline = time.monotonic() + READY_TIMEOUT_SECONDS
            while True:
                if process.poll() is not None:
                    log.seek(0)
                    pytest.fail(f"the familywise server exited with {process.returncode}:\n"
                                f"{log.read().decode(errors='replace')[-3000:]}")
                with contextlib.suppress(httpx.TransportError):
                    if httpx.get(f"{base_url}/readyz", timeout=2.0).status_code == 200:
                        break
                if time.monotonic() > deadline:
                    pytest.fail(f"the familywise server was not ready within {READY_TIMEOUT_SECONDS:g} s")
                time.sleep(0.1)
            yield base_url
        finally:
            process.terminate()
            try:
                process.wait(timeout=15)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait(timeout=15)


@dataclass(frozen=True)
class LiveServer:
    base_url: str
    api_key: str

    def raw(self) -> httpx.Client:
        """A plain httpx client of the same server, to compare the client's answers with."""
        return httpx.Client(base_url=self.base_url, timeout=60.0,
                            headers={"Authorization": f"Bearer {self.api_key}"})


# --------------------------------------------------------------------------
# the scripted fake server
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Step:
    """What the fake server does with one request."""

    status: int = 200
    body: Any = None  # JSON-ready value, or bytes as they are
    headers: dict[str, str] = field(default_factory=dict)
    delay: float = 0.0  # seconds before answering
    drop: bool = False  # close the connection without an answer
    content_type: str | None = None  # default: JSON, or problem+json from 400 on


@dataclass
class Received:
    path: str
    headers: dict[str, str]
    body: bytes


class ScriptedServer:
    """An HTTP server in a thread answering the n-th request with ``script[n]`` (the last step repeats)."""

    def __init__(self, script: list[Step], port: int = 0) -> None:
        self.script = script
        self.received: list[Received] = []
        owner = self

        class Handler(http.server.BaseHTTPRequestHandler):
            protocol_version = "HTTP/1.1"

            def do_POST(self) -> None:
                length = int(self.headers.get("content-length", "0"))
                body = self.rfile.read(length)
                step = owner.script[min(len(owner.received), len(owner.script) - 1)]
                owner.received.append(Received(self.path, {k.lower(): v for k, v in self.headers.items()}, body))
                if step.delay:
                    time.sleep(step.delay)
                if step.drop:
                    self.close_connection = True
                    self.connection.shutdown(socket.SHUT_RDWR)
                    return
                payload = step.body if isinstance(step.body, bytes) else json.dumps(step.body).encode()
                self.send_response(step.status)
                kind = "application/json" if step.status < 400 else "application/problem+json"
                self.send_header("Content-Type", step.content_type or kind)
                self.send_header("Content-Length", str(len(payload)))
                self.send_header("X-Request-ID", self.headers.get("x-request-id", "none"))
                for name, value in step.headers.items():
                    self.send_header(name, value)
                self.end_headers()
                self.wfile.write(payload)

            def log_message(self, format: str, *args: Any) -> None:
                return

        self.httpd = http.server.ThreadingHTTPServer(("127.0.0.1", port), Handler)
        self.httpd.daemon_threads = True
        self.base_url = f"http://127.0.0.1:{self.httpd.server_address[1]}"
        self.thread = threading.Thread(target=self.httpd.serve_forever, kwargs={"poll_interval": 0.05}, daemon=True)

    def __enter__(self) -> ScriptedServer:
        self.thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self.httpd.shutdown()
        self.httpd.server_close()
        self.thread.join(timeout=5)
