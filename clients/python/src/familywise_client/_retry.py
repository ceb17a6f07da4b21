"""Retries, written once for both clients.

Every familywise endpoint is a pure function of its request body: the same
body gives the same answer and changes nothing on the service. Retrying a
POST is therefore safe, and the client retries, with exponential backoff and
jitter:

* a connection that cannot be made or is dropped, and a request that times out;
* HTTP 502, 503 and 504 (a 503 names its wait in Retry-After, which is
  honoured up to ``max_retry_after`` seconds).

Any other answer, every 4xx included, is final at once; so is a 503 whose
problem document says the computation took longer than the service's time
limit (type ``/problems/computation-timeout``): the same body takes as long
again, so a retry only adds load. Split the request, or raise the limit.

:class:`Exchange` is the retry loop without any input or output: iterating
over it yields the request to send or the seconds to wait; the client
(sync or async) does that and hands back what came of it with
:meth:`Exchange.receive`. So the two clients differ only in how they send
and how they sleep.
"""

from __future__ import annotations

import email.utils
import json
import random
import time
import urllib.parse
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Generic, TypeVar

import httpx

from familywise_client.errors import FamilywiseConnectionError

T = TypeVar("T")

RETRY_STATUSES = frozenset({502, 503, 504})

#: Problem types (the last segment of a problem document's ``type``) that
#: are final whatever their status: the same request would fail the same way.
FINAL_PROBLEMS = frozenset({"computation-timeout"})

#: Transport errors after which the same request may succeed.
TRANSIENT_ERRORS = (httpx.TimeoutException, httpx.NetworkError, httpx.RemoteProtocolError)

Outcome = httpx.Response | httpx.TransportError


@dataclass(frozen=True)
class RetryPolicy:
    """How often and how long to retry.

    ``retries`` further attempts after the first; before attempt ``i`` (from
    1) the client waits between half and all of ``min(max_backoff, backoff *
    2 ** (i - 1))`` seconds, or the Retry-After of a 503, capped at
    ``max_retry_after``.
    """

    retries: int = 3
    backoff: float = 0.5
    max_backoff: float = 8.0
    max_retry_after: float = 30.0

    def __post_init__(self) -> None:
        if self.retries < 0 or self.backoff < 0 or self.max_backoff < 0 or self.max_retry_after < 0:
            raise ValueError("retries and the backoff times must not be negative")

    def wait(self, attempt: int, outcome: Outcome) -> float | None:
        """Seconds to wait before another attempt after ``attempt`` (from 1) ended in ``outcome``;
        None when that outcome is final."""
        if attempt > self.retries:
            return None
        if isinstance(outcome, httpx.TransportError):
            return self._backoff(attempt) if isinstance(outcome, TRANSIENT_ERRORS) else None
        if outcome.status_code not in RETRY_STATUSES or (outcome.status_code == 503 and _final_problem(outcome)):
            return None
        after = retry_after(outcome.headers.get("retry-after"))
        return min(after, self.max_retry_after) if after is not None else self._backoff(attempt)

    def _backoff(self, attempt: int) -> float:
        ceiling = min(self.max_backoff, self.backoff * 2.0 ** (attempt - 1))
        return ceiling / 2 + random.uniform(0, ceiling / 2)


def _final_problem(response: httpx.Response) -> bool:
    """Whether the answer is a problem document of a type in FINAL_PROBLEMS
    (``/problems/computation-timeout``, or that path under any base URI)."""
    media_type = response.headers.get("content-type", "").split(";")[0].strip().lower()
    if media_type not in ("application/problem+json", "application/json"):
        return False
    try:
        document = json.loads(response.content)
    except ValueError:
        return False
    kind = document.get("type") if isinstance(document, dict) else None
    if not isinstance(kind, str):
        return False
    path = urllib.parse.urlsplit(kind).path
    head, _, slug = path.rstrip("/").rpartition("/")
    return (head == "problems" or head.endswith("/problems")) and slug in FINAL_PROBLEMS


def retry_after(value: str | None) -> float | None:
    """Seconds from a Retry-After header (delay-seconds or an HTTP date); None if absent or unreadable."""
    if value is None:
        return None
    value = value.strip()
    if value.isdigit():
        return float(value)
    try:
        when = email.utils.parsedate_to_datetime(value)
    except (TypeError, ValueError):
        return None
    return max(0.0, when.timestamp() - time.time())


class Exchange(Generic[T]):
    """One call: its request, sent until an outcome is final, then read by ``finish``.

    Iterate to drive it: each item is the :class:`httpx.Request` to send (then
    call :meth:`receive` with the response or the transport error) or a float,
    the seconds to sleep. When the iteration ends, :attr:`result` holds
    ``finish(response)``; ``finish`` raises for an unsuccessful answer, and the
    iteration raises :class:`FamilywiseConnectionError` when no answer came.
    """

    result: T

    def __init__(self, request: httpx.Request, policy: RetryPolicy,
                 finish: Callable[[httpx.Response], T]) -> None:
        self.request = request
        self.policy = policy
        self.finish = finish
        self._outcome: Outcome | None = None
        self.attempts = 0

    def receive(self, outcome: Outcome) -> None:
        self._outcome = outcome

    def __iter__(self) -> Iterator[httpx.Request | float]:
        while True:
            self.attempts += 1
            self._outcome = None
            yield self.request
            outcome = self._outcome
            if outcome is None:
                raise RuntimeError("Exchange: receive() was not called after a request was yielded")
            delay = self.policy.wait(self.attempts, outcome)
            if delay is None:
                break
            yield float(delay)
        if isinstance(outcome, httpx.TransportError):
            error = FamilywiseConnectionError(outcome, self.attempts, self.request.headers.get("x-request-id"))
            raise error from outcome
        self.result = self.finish(outcome)


def send_once(send: Callable[[httpx.Request], httpx.Response], request: httpx.Request) -> Outcome:
    """The response, or the transport error instead of raising it."""
    try:
        return send(request)
    except httpx.TransportError as error:
        return error
