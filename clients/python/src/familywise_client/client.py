"""Client and AsyncClient: the same endpoints, blocking or as coroutines.

Everything but the transport is shared: the endpoint methods come from
:class:`~familywise_client._operations.Operations`, the retry loop is
:class:`~familywise_client._retry.Exchange`, and the headers, request ids and
answer handling are :class:`_Session`'s. The two classes add only how a
request is sent and how the client waits between attempts.
"""

from __future__ import annotations

import asyncio
import re
import time
import uuid
from collections.abc import Mapping
from types import TracebackType
from typing import Any, Self

import httpx

from familywise_client import __version__
from familywise_client._operations import Operations, Prepared
from familywise_client._retry import Exchange, Outcome, RetryPolicy, send_once
from familywise_client.errors import FamilywiseError

__all__ = ["AsyncClient", "Client"]

#: What the service accepts as a request id (it replaces anything else with its own).
REQUEST_ID = re.compile(r"^[A-Za-z0-9._:-]{1,128}$")


class _Session:
    """Configuration and answer handling shared by both clients."""

    def __init__(
        self,
        base_url: str,
        api_key: str | None = None,
        *,
        timeout: float | httpx.Timeout = 30.0,
        retries: int = 3,
        backoff: float = 0.5,
        max_backoff: float = 8.0,
        max_retry_after: float = 30.0,
        headers: Mapping[str, str] | None = None,
        **httpx_options: Any,
    ) -> None:
        self.base_url = base_url
        self.policy = RetryPolicy(retries=retries, backoff=backoff, max_backoff=max_backoff,
                                  max_retry_after=max_retry_after)
        self.timeout = timeout
        #: The X-Request-ID of the latest answer this client received (success or problem).
        self.last_request_id: str | None = None
        self._headers = {"User-Agent": f"familywise-client/{__version__}", **(headers or {})}
        if api_key is not None:
            self._headers["Authorization"] = f"Bearer {api_key}"
        self._http = self._open(
            {"base_url": base_url, "timeout": timeout, "headers": self._headers, **httpx_options})

    def _open(self, options: dict[str, Any]) -> httpx.Client | httpx.AsyncClient:
        raise NotImplementedError

    def _exchange(self, prepared: Prepared, request_id: str | None) -> Exchange[Any]:
        if request_id is None:
            request_id = uuid.uuid4().hex
        elif not REQUEST_ID.match(request_id):
            raise ValueError("request_id must be 1 to 128 characters from A-Z a-z 0-9 . _ : -")
        request = self._http.build_request(
            "POST", prepared.path, content=prepared.body,
            headers={"Content-Type": "application/json", "Accept": prepared.accept, "X-Request-ID": request_id})
        return Exchange(request, self.policy, lambda response: self._finish(prepared, response))

    def _finish(self, prepared: Prepared, response: httpx.Response) -> Any:
        self.last_request_id = response.headers.get("x-request-id", self.last_request_id)
        if not response.is_success:
            raise FamilywiseError.from_response(response)
        return prepared.read(response)

    def __repr__(self) -> str:
        return f"{type(self).__name__}({self.base_url!r})"


class Client(Operations, _Session):
    """Blocking client of a familywise service.

    ``Client(base_url, api_key=None, *, timeout=30.0, retries=3, backoff=0.5, max_backoff=8.0,
    max_retry_after=30.0, headers=None, **httpx_options)``; ``httpx_options`` go to
    :class:`httpx.Client` (``verify``, ``proxy``, ``transport``, ``event_hooks``, ...).
    Each endpoint is a method (``omnibus``, ``pairwise``, ...) that takes its
    request model, a mapping or keyword fields, and an optional ``request_id``.
    Use as a context manager, or call :meth:`close`.
    """

    _http: httpx.Client

    def _open(self, options: dict[str, Any]) -> httpx.Client:
        return httpx.Client(**options)

    def _send_prepared(self, prepared: Prepared, request_id: str | None) -> Any:
        exchange = self._exchange(prepared, request_id)
        for step in exchange:
            if isinstance(step, float):
                time.sleep(step)
            else:
                exchange.receive(send_once(self._http.send, step))
        return exchange.result

    def close(self) -> None:
        self._http.close()

    def __enter__(self) -> Self:
        return self

    def __exit__(self, kind: type[BaseException] | None, error: BaseException | None,
                 trace: TracebackType | None) -> None:
        self.close()


class AsyncClient(Operations, _Session):
    """Asynchronous client of a familywise service: as :class:`Client`, each method a coroutine.

    ``httpx_options`` go to :class:`httpx.AsyncClient`. Use as an async
    context manager, or await :meth:`close` (also spelled :meth:`aclose`).
    """

    _http: httpx.AsyncClient

    def _open(self, options: dict[str, Any]) -> httpx.AsyncClient:
        return httpx.AsyncClient(**options)

    async def _send_prepared(self, prepared: Prepared, request_id: str | None) -> Any:
        exchange = self._exchange(prepared, request_id)
        for step in exchange:
            if isinstance(step, float):
                await asyncio.sleep(step)
            else:
                exchange.receive(await self._send_once(step))
        return exchange.result

    async def _send_once(self, request: httpx.Request) -> Outcome:
        try:
            return await self._http.send(request)
        except httpx.TransportError as error:
            return error

    async def close(self) -> None:
        await self._http.aclose()

    aclose = close

    async def __aenter__(self) -> Self:
        return self

    async def __aexit__(self, kind: type[BaseException] | None, error: BaseException | None,
                        trace: TracebackType | None) -> None:
        await self.close()
