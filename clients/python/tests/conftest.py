"""Fixtures of the client's tests: a live familywise server for the session, and clients of it.

The server is started once, as a subprocess on a free loopback port
(``python -m familywise.cli serve``, or the checkout's ``.venv/bin/familywise``)
with an API key configured; the fixture waits for GET /readyz to answer 200
and stops the process at the end.
"""

from __future__ import annotations

import contextlib
import os
import subprocess
import tempfile
import time
from collections.abc import Iterator

import httpx
import pytest
from client_test_support import API_KEY, READY_TIMEOUT_SECONDS, LiveServer, free_port, server_command

from familywise_client import Client


@pytest.fixture(scope="session")
def live_server() -> Iterator[LiveServer]:
    port = free_port()
    env = {**os.environ, "FAMILYWISE_API_KEYS": API_KEY}
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
            yield LiveServer(base_url, API_KEY)
        finally:
            process.terminate()
            try:
                process.wait(timeout=15)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait(timeout=15)


@pytest.fixture
def client(live_server: LiveServer) -> Iterator[Client]:
    with Client(live_server.base_url, api_key=live_server.api_key) as c:
        yield c


@pytest.fixture
def raw(live_server: LiveServer) -> Iterator[httpx.Client]:
    with live_server.raw() as c:
        yield c
