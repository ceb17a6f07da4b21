"""Pure ASGI middleware: request id, API keys, body size limit, metrics, access log.

Written against the ASGI interface rather than Starlette's BaseHTTPMiddleware
so that it adds microseconds, not a task per request.
"""

from __future__ import annotations

import hmac
import json
import logging
import re
import time
import uuid
from typing import Any

from starlette.datastructures import Headers
from starlette.middleware.cors import CORSMiddleware
from starlette.responses import Response

from familywise.api import metrics
from familywise.api.problems import ProblemError

Scope = dict[str, Any]
ASGIApp = Any

REQUEST_ID_HEADER = b"x-request-id"
_SAFE_ID = re.compile(r"^[A-Za-z0-9._:-]{1,128}$")

access_log = logging.getLogger("familywise.access")

#: Paths open without an API key (probes must work before any key exists).
OPEN_PATHS = frozenset({"/healthz", "/readyz"})

#: HTTP methods named in the metrics' labels; any other is counted as "other".
_METHODS = frozenset({"GET", "HEAD", "POST", "PUT", "PATCH", "DELETE", "OPTIONS"})


class RequestContext:
    """One pure ASGI layer for every request: accept or create a request id
    and echo it; when API keys are configured, require ``Authorization:
    Bearer <key>`` (compared in constant time) on every path but the probes;
    answer 413 when the declared or streamed body exceeds ``max_bytes``;
    count and time the request for /metrics; write one JSON access-log line
    (method, path, status, duration; never the body, never a key)."""

    def __init__(self, app: ASGIApp, max_bytes: int, api_keys: frozenset[str] = frozenset(),
                 endpoints: frozenset[str] = frozenset()) -> None:
        self.app = app
        self.max_bytes = max_bytes
        self.keys = [k.encode() for k in sorted(api_keys)]
        self.endpoints = endpoints

    async def __call__(self, scope: Scope, receive: Any, send: Any) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        request_id = None
        declared = 0
        authorization = b""
        for name, value in scope["headers"]:
            if name == REQUEST_ID_HEADER:
                text = value.decode("latin-1")
                if _SAFE_ID.match(text):
                    request_id = text
            elif name == b"content-length":
                try:
                    declared = int(value)
                except ValueError:
                    declared = 0
            elif name == b"authorization":
                authorization = value
        if request_id is None:
            request_id = uuid.uuid4().hex
        scope.setdefault("state", {})["request_id"] = request_id
        started = time.perf_counter()
        status = 500
        id_header = (REQUEST_ID_HEADER, request_id.encode("latin-1"))

        async def send_with_id(message: dict[str, Any]) -> None:
            nonlocal status
            if message["type"] == "http.response.start":
                status = message["status"]
                message["headers"] = [*message.get("headers", []), id_header]
            await send(message)

        received = 0

        async def limited_receive() -> dict[str, Any]:
            nonlocal received
            message = await receive()
            if message["type"] == "http.request":
                received += len(message.get("body", b""))
                if received > self.max_bytes:
                    raise _TooLarge()
            return message

        path = scope.get("path", "")
        try:
            if self.keys and path not in OPEN_PATHS and not self._authorised(authorization):
                await _unauthorised(scope, send_with_id)
            elif declared > self.max_bytes:
                await self._refuse(scope, send_with_id, declared)
            else:
                try:
                    await self.app(scope, limited_receive, send_with_id)
                except _TooLarge:
                    await self._refuse(scope, send_with_id, received)
        finally:
            elapsed = time.perf_counter() - started
            # label values from fixed sets only: an unknown path or method is "other"
            endpoint = path if path in self.endpoints else "other"
            method = scope.get("method", "")
            method = method if method in _METHODS else "other"
            metrics.REQUESTS.labels(endpoint, method, str(status)).inc()
            metrics.LATENCY.labels(endpoint, method, str(status)).observe(elapsed)
            if access_log.isEnabledFor(logging.INFO):
                access_log.info(json.dumps({
                    "event": "request",
                    "request_id": request_id,
                    "method": scope.get("method"),
                    "path": scope.get("path"),
                    "status": status,
                    "duration_ms": round(elapsed * 1e3, 3),
                }))

    def _authorised(self, authorization: bytes) -> bool:
        scheme, _, token = authorization.partition(b" ")
        if scheme.lower() != b"bearer" or not token:
            return False
        # Compare with every key, always, so that the time taken says nothing
        # about which key (or how much of one) matched.
        matched = False
        for key in self.keys:
            matched |= hmac.compare_digest(token.strip(), key)
        return matched

    async def _refuse(self, scope: Scope, send: Any, size: int) -> None:
        problem = ProblemError(
            "body-too-large",
            f"the body ({size} bytes or more) exceeds the limit of {self.max_bytes} bytes "
            "(FAMILYWISE_MAX_BODY_BYTES)",
            rule="max_body_bytes",
        )
        await problem.response()(scope, _drain, send)


class _TooLarge(Exception):
    pass


async def _unauthorised(scope: Scope, send: Any) -> None:
    problem = ProblemError("unauthorized", "this service requires 'Authorization: Bearer <key>' with a "
                           "configured API key", rule="api-key", headers={"WWW-Authenticate": "Bearer"})
    await problem.response()(scope, _drain, send)


async def _drain() -> dict[str, Any]:
    return {"type": "http.disconnect"}


class ProblemCORSMiddleware(CORSMiddleware):
    """Starlette's CORS layer, refusing a preflight it does not allow with a
    problem document (400, rule cors) like every other refusal, instead of
    plain text. It is the outermost layer: a browser's preflight carries no
    API key, and the answers to requests it lets through, 401 included,
    carry its headers."""

    def preflight_response(self, request_headers: Headers) -> Response:
        response = super().preflight_response(request_headers)
        if response.status_code < 400:
            return response
        kept = {k: v for k, v in response.headers.items() if k.lower() not in ("content-type", "content-length")}
        reason = bytes(response.body).decode("utf-8", "replace")
        problem = ProblemError("cors-refused", f"{reason}: this origin, method or header is not among those "
                               "configured (FAMILYWISE_CORS_ORIGINS)", rule="cors", headers=kept)
        return problem.response()
