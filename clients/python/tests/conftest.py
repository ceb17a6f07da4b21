"""Fixtures of the client's tests: a live familywise server for the session, and clients of it.

The server is started once, as a subprocess on a free loopback port
(``python -m familywise.cli serve``, or the checkout's ``.venv/bin/familywise``)
with an API key configured; the fixture waits for GET /readyz to answer 200
and stops the process at the end.
"""

from __future__ import annotations

from collections.abc import Iterator

import httpx
import pytest
from client_test_support import API_KEY, LiveServer, running_server

from familywise_client import Client


@pytest.fixture(scope="session")
def live_server() -> Iterator[LiveServer]:
    with running_server({"FAMILYWISE_API_KEYS": API_KEY}) as base_url:
        yield LiveServer(base_url, API_KEY)


@pytest.fixture
def client(live_server: LiveServer) -> Iterator[Client]:
    with Client(live_server.base_url, api_key=live_server.api_key) as c:
        yield c


@pytest.fixture
def raw(live_server: LiveServer) -> Iterator[httpx.Client]:
    with live_server.raw() as c:
        yield c
